"""The caution notice carried by the README, every page and every computed output."""

CAUTION = (
    "Reference values for orientation only. Verify every value against its primary source "
    "before use. Design decisions (heat release, runaway reactions, relief sizing and the "
    "rest) follow the applicable local codes and review by qualified, licensed engineers."
)
