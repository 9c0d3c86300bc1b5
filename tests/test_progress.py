"""The progress display: a tqdm bar on a terminal, plain lines in a log, nothing when quiet."""
from __future__ import annotations

import io

from bedflux.outputs.progress import ProgressBar


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def run(bar: ProgressBar, n: int = 40) -> None:
    for i in range(n + 1):
        bar.update(i / n)
    bar.close()


def test_plain_lines_when_not_a_terminal():
    log = io.StringIO()
    run(ProgressBar(label="time steps", stream=log))
    lines = log.getvalue().splitlines()
    assert lines == [f"time steps: {p} %" for p in range(10, 101, 10)]
    assert "\r" not in log.getvalue()


def test_bar_on_a_terminal():
    term = Terminal()
    run(ProgressBar(label="time steps", stream=term))
    text = term.getvalue()
    assert "\r" in text and "time steps" in text
    assert "100.0%" in text and text.endswith("\n")


def test_quiet_writes_nothing():
    for stream in (io.StringIO(), Terminal()):
        run(ProgressBar(enabled=False, label="time steps", stream=stream))
        assert stream.getvalue() == ""
