"""A plain progress bar on standard error, shown only on a terminal."""
from __future__ import annotations

import sys
import time


class ProgressBar:
    """Call ``update(fraction)``; draws at most ten times a second, nothing when not a terminal."""

    def __init__(self, enabled: bool = True, label: str = "", width: int = 30, stream=None):
        self.stream = stream or sys.stderr
        self.enabled = enabled and hasattr(self.stream, "isatty") and self.stream.isatty()
        self.label = label
        self.width = width
        self._last = 0.0
        self._drawn = False

    def update(self, fraction: float) -> None:
        if not self.enabled:
            return
        now = time.monotonic()
        if now - self._last < 0.1 and fraction < 1.0:
            return
        self._last = now
        n = int(round(self.width * min(max(fraction, 0.0), 1.0)))
        self.stream.write(f"\r{self.label} [{'#' * n}{'.' * (self.width - n)}] {100 * fraction:5.1f}%")
        self.stream.flush()
        self._drawn = True

    def close(self) -> None:
        if self._drawn:
            self.stream.write("\n")
            self.stream.flush()
