"""A progress bar on stderr for work longer than a second (silent when not a terminal)."""

from __future__ import annotations

import sys
import time
from typing import TextIO

__all__ = ["TerminalProgress"]


class TerminalProgress:
    """Callable ``(stage, done, total)`` drawing one self-overwriting line.

    Draws nothing for the first ``delay`` seconds, nor ever when ``stream`` is not a TTY,
    so piped and ``--format json`` output stay clean.
    """

    def __init__(self, stream: TextIO | None = None, *, delay: float = 1.0, width: int = 30):
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.delay = delay
        self.width = width
        self.start = time.monotonic()
        self._drawn = False

    def __call__(self, stage: str, done: int, total: int) -> None:
        """Redraw the bar for ``done`` of ``total`` units of ``stage``."""
        if not self.enabled:
            return
        elapsed = time.monotonic() - self.start
        if elapsed < self.delay:
            return
        frac = done / total if total else 1.0
        fill = int(round(frac * self.width))
        bar = "#" * fill + "-" * (self.width - fill)
        self.stream.write(f"\r{stage:<16} [{bar}] {frac:6.1%}  {elapsed:6.1f} s")
        self.stream.flush()
        self._drawn = True

    def close(self) -> None:
        """End the line if anything was drawn."""
        if self._drawn:
            self.stream.write("\n")
            self.stream.flush()
            self._drawn = False
