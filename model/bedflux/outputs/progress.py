"""The progress of a run on standard error: a tqdm bar on a terminal, plain lines elsewhere."""
from __future__ import annotations

import shutil
import sys

#: Fractions at which plain lines are written when the stream is not a terminal.
PLAIN_STEP = 0.1


class ProgressBar:
    """Call ``update(fraction)`` as the run goes on and ``close()`` at its end.

    On a terminal the bar is drawn by tqdm (at most ten times a second, with the elapsed and
    the remaining time). When the stream is not a terminal (a log file, a pipe) a plain line
    ``label: 30 %`` is written each time another tenth of the run is done, so a log holds no
    carriage returns. ``enabled=False`` writes nothing at all.
    """

    def __init__(self, enabled: bool = True, label: str = "", stream=None):
        self.stream = stream or sys.stderr
        self.enabled = enabled
        self.label = label
        self._bar = None
        self._next_line = PLAIN_STEP
        if enabled and getattr(self.stream, "isatty", lambda: False)():
            from tqdm import tqdm

            # a terminal that reports no size (some pseudo-terminals) gets 80 columns
            width = shutil.get_terminal_size((80, 24)).columns
            self._bar = tqdm(total=1.0, desc=label, file=self.stream, mininterval=0.1, leave=True,
                             ncols=width, bar_format="{desc} |{bar}| {percentage:5.1f}% [{elapsed}<{remaining}]")

    def update(self, fraction: float) -> None:
        """Show that ``fraction`` (0 to 1) of the run is done."""
        if not self.enabled:
            return
        fraction = min(max(float(fraction), 0.0), 1.0)
        if self._bar is not None:
            self._bar.update(fraction - self._bar.n)
            return
        if fraction + 1e-12 >= self._next_line:
            done = int((fraction + 1e-12) / PLAIN_STEP)
            self.stream.write(f"{self.label}: {done * 100 * PLAIN_STEP:.0f} %\n")
            self.stream.flush()
            self._next_line = (done + 1) * PLAIN_STEP

    def close(self) -> None:
        """End the bar (a terminal's line is closed; plain lines need nothing)."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None
