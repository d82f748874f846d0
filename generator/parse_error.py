"""The error both text parsers (formulas, equations) raise: a message at a column."""

from __future__ import annotations


class LocatedParseError(ValueError):
    """Malformed text; ``col`` is the 1-based column of the problem in the parsed string."""

    def __init__(self, message: str, col: int, hint: str | None = None) -> None:
        super().__init__(f"column {col}: {message}" + (f" ({hint})" if hint else ""))
        self.message = message
        self.col = col
        self.hint = hint
