"""An interrupted run says so in its summary, in the report's findings and on every end-of-run figure.

The run is an invented stage wave; it is stopped after about a third of its 4 hours, as Ctrl-C or a
scheduler's SIGTERM would stop it.
"""
from __future__ import annotations

import json
import re

import numpy as np
import pytest

import bedflux.outputs.figures as plots
import bedflux.outputs.run as run_module
from bedflux.outputs.animation import render_frames
from bedflux.outputs.files import read_result
from bedflux.report import build_report
from bedflux.report.collect import collect
from bedflux.report import findings

SCENARIO = ('title = "Stage wave over a column (invented)"\n'
            '[grid]\nx = [0, 4]\nbottom = -2\ndx = 0.5\ndz = 0.1\n[ground]\nelevation = 0\n'
            '[[zone]]\nname = "a"\nkh = 1e-5\nspecific_storage = 1e-4\nspecific_yield = 0.2\n'
            '[stream.wave]\nmean = 0.5\namplitude = 0.2\nperiod = "1 h"\n'
            '[time]\nend = "4 h"\nstep = "5 min"\noutput_every = "30 min"\n')


class Stopping:
    """A progress bar that interrupts the run a third of the way through."""

    def __init__(self, *a, **k):
        pass

    def update(self, fraction):
        if fraction > 0.3:
            raise KeyboardInterrupt

    def close(self):
        pass


@pytest.fixture(scope="module")
def partial(tmp_path_factory):
    root = tmp_path_factory.mktemp("partial")
    scen = root / "wave.toml"
    scen.write_text(SCENARIO)
    titles: dict[str, list[str]] = {}
    real_save = plots.save

    def spying_save(fig, path):
        texts = [t.get_text() for t in fig.texts]
        texts += [ax.get_title() for ax in fig.axes]
        titles[str(path).rsplit("/", 1)[-1]] = texts
        return real_save(fig, path)

    mp = pytest.MonkeyPatch()
    mp.setattr(run_module, "ProgressBar", Stopping)
    mp.setattr(plots, "save", spying_save)
    try:
        summary = run_module.run_scenario(scen, root / "out", quiet=True)
    finally:
        mp.undo()
    return root, summary, titles


def _stop_time(out) -> float:
    reason = read_result(out / "result.nc").attrs["partial"]
    return float(re.search(r"t = ([0-9.eE+-]+) s", reason).group(1))


def test_summary_says_where_it_stopped(partial):
    root, summary, _ = partial
    stop = _stop_time(root / "out")
    assert 0 < stop < 4 * 3600
    text = (root / "out" / "summary.txt").read_text()
    assert text.startswith(f"PARTIAL RESULT: interrupted at t = {stop / 3600:.4g} h, of 4 h")
    saved = json.loads((root / "out" / "summary.json").read_text())
    assert saved["partial_run"]["planned_end_s"] == 4 * 3600


def test_report_findings_say_interrupted(partial):
    root, _, _ = partial
    stop = _stop_time(root / "out")
    found = findings.findings(collect(root / "out"))
    text = " ".join(f.text for f in found)
    assert f"interrupted at t = {stop / 3600:.1f} h, of 4.0 h" in text
    assert "At the last output of the interrupted run" in text
    page = build_report(root / "out").read_text()
    assert f"interrupted at t = {stop / 3600:.1f} h, of 4.0 h" in page


def test_every_end_of_run_figure_is_labelled(partial):
    root, _, titles = partial
    stop = _stop_time(root / "out")
    label = f"INTERRUPTED at t = {stop / 3600:.4g} h of 4 h"
    for name in ("section.png", "bed_flux_map.png", "exchange.png"):
        assert name in titles, f"{name} not drawn"
        assert any(label in t for t in titles[name]), (name, titles[name])


def test_animation_frames_are_labelled(partial):
    root, _, _ = partial
    ds = read_result(root / "out" / "result.nc")
    whole = ds.copy()
    whole.attrs = {k: v for k, v in ds.attrs.items() if k != "partial"}
    marked = np.asarray(render_frames(ds, max_frames=2)[-1], dtype=int)
    plain = np.asarray(render_frames(whole, max_frames=2)[-1], dtype=int)
    changed = np.any(marked != plain, axis=-1)
    assert changed.any()
    # the label is drawn in the losing orange (#e66101)
    orange = np.all(np.abs(marked - np.array([0xE6, 0x61, 0x01])) < 40, axis=-1)
    assert (orange & changed).sum() > 20
