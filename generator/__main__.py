"""`python -m generator` is the `thermofolio` command."""

from generator.cli import run

run()
