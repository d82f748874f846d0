"""Build progress on stderr: a bar on a terminal once a step has run about two seconds, one
plain line in CI or when stderr is not a terminal, nothing when quiet."""

from __future__ import annotations

import os
import sys
import time
from typing import TextIO

DELAY = 2.0  # seconds before a bar appears; shorter builds stay silent
WIDTH = 30


def mode_for(stream: TextIO, quiet: bool) -> str:
    """'bar' on an interactive terminal, 'line' in CI or on a pipe, 'none' when quiet."""
    if quiet:
        return "none"
    if os.environ.get("CI") or os.environ.get("TERM") == "dumb":
        return "line"
    isatty = getattr(stream, "isatty", None)
    return "bar" if isatty is not None and isatty() else "line"


class Progress:
    """Counts ``done`` of ``total`` for one labelled step; call ``update`` then ``close``."""

    def __init__(self, label: str, total: int, quiet: bool = False,
                 stream: TextIO | None = None, start: float | None = None) -> None:
        self.label = label
        self.total = max(0, int(total))
        self.stream = stream if stream is not None else sys.stderr
        self.mode = mode_for(self.stream, quiet) if self.total else "none"
        self.start = time.perf_counter() if start is None else start
        self._shown = False
        self._last = 0.0
        if self.mode == "line":
            print(f"thermofolio build: {label} {self.total} …", file=self.stream, flush=True)

    def update(self, done: int) -> None:
        if self.mode != "bar":
            return
        now = time.perf_counter()
        if now - self.start < DELAY or (now - self._last < 0.1 and done < self.total):
            return
        self._last = now
        self._shown = True
        frac = min(1.0, done / self.total)
        filled = int(round(frac * WIDTH))
        bar = "█" * filled + "·" * (WIDTH - filled)
        self.stream.write(f"\r{self.label} {bar} {done}/{self.total} "
                          f"{now - self.start:5.1f} s")
        self.stream.flush()

    def close(self) -> None:
        if self._shown:
            self.stream.write("\r\x1b[K")
            self.stream.flush()
            self._shown = False
