"""A progress bar on stderr for work longer than a second (silent when not a terminal).

The bar shows the current stage, the overall fraction (each stage counts as one of the
registry's stage bound, :func:`haarline.progress_stages`), the elapsed time and the time
left. It is redrawn twice a second by a small thread, so it appears after one second even
while the first chunk of a large circuit is still running, and the time left then comes
from the work estimate until the fraction can speak for itself.
"""

from __future__ import annotations

import sys
import threading
import time
from typing import TextIO

from haarline.report.registry import StageFraction

__all__ = ["TerminalProgress"]


def _clock(seconds: float) -> str:
    seconds = max(0, int(round(seconds)))
    minutes, s = divmod(seconds, 60)
    hours, m = divmod(minutes, 60)
    return f"{hours}:{m:02d}:{s:02d}" if hours else f"{m}:{s:02d}"


class TerminalProgress:
    """Callable ``(stage, done, total)`` drawing one self-overwriting line.

    Draws nothing for the first ``delay`` seconds, nor ever when ``stream`` is not a TTY,
    so piped and ``--format json`` output stay clean. ``stages`` is the analysis's stage
    bound and ``estimate`` its estimated seconds (both optional).
    """

    def __init__(
        self,
        stream: TextIO | None = None,
        *,
        delay: float = 1.0,
        width: int = 24,
        stages: int = 1,
        estimate: float | None = None,
        tick: float = 0.5,
    ):
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.delay = delay
        self.width = width
        self.estimate = estimate
        self.start = time.monotonic()
        self.fraction = StageFraction(stages)
        self._stage = "starting"
        self._overall = 0.0
        self._drawn = False
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        if self.enabled:
            self._thread = threading.Thread(
                target=self._ticker, args=(tick,), name="haarline-progress", daemon=True
            )
            self._thread.start()

    def __call__(self, stage: str, done: int, total: int) -> None:
        """Record ``done`` of ``total`` units of ``stage`` (the ticker redraws)."""
        with self._lock:
            self._stage = stage
            self._overall = self.fraction(stage, done, total)
        self._draw()

    def left(self, elapsed: float, overall: float) -> float | None:
        """Seconds left: from the fraction done once it is meaningful, else the estimate."""
        if overall >= 0.05:
            return elapsed * (1 - overall) / overall
        if self.estimate is not None:
            return max(0.0, self.estimate - elapsed)
        return None

    def line(self, elapsed: float) -> str:
        """The text of the bar at ``elapsed`` seconds."""
        with self._lock:
            stage, overall = self._stage, self._overall
        fill = int(round(overall * self.width))
        bar = "#" * fill + "-" * (self.width - fill)
        left = self.left(elapsed, overall)
        tail = f"{_clock(left)} left" if left is not None else "time left unknown"
        return f"\r{stage[:22]:<22} [{bar}] {overall:6.1%}  {_clock(elapsed)} elapsed, {tail} "

    def _draw(self) -> None:
        if not self.enabled:
            return
        elapsed = time.monotonic() - self.start
        if elapsed < self.delay:
            return
        self.stream.write(self.line(elapsed))
        self.stream.flush()
        self._drawn = True

    def _ticker(self, tick: float) -> None:
        while not self._stop.wait(tick):
            self._draw()

    def close(self) -> None:
        """Stop redrawing; end the line if anything was drawn."""
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=2)
        if self._drawn:
            self.stream.write("\n")
            self.stream.flush()
            self._drawn = False
