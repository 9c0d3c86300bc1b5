"""The report file: bad folders, self-containment, print stylesheet, content and provenance."""
from __future__ import annotations

import hashlib
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from bedflux import __version__
from bedflux.outputs import manifest
from bedflux.cli import main
from bedflux.errors import InputError
from bedflux.report import build_report
from bedflux.report.collect import collect

from .conftest import SCENARIO_TEXT, png, steady_summary, write_run


class _Refs(HTMLParser):
    """Collects every attribute that can load a resource, and the tags used."""

    LOADING = {"src", "href", "srcset", "poster", "data", "action", "background", "xlink:href"}

    def __init__(self):
        super().__init__()
        self.refs: list[tuple[str, str, str]] = []
        self.tags: list[str] = []
        self.style = ""
        self._in_style = False

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self._in_style = tag == "style"
        for k, v in attrs:
            if k in self.LOADING:
                self.refs.append((tag, k, v or ""))

    def handle_endtag(self, tag):
        if tag == "style":
            self._in_style = False

    def handle_data(self, data):
        if self._in_style:
            self.style += data


def parse(path: Path) -> _Refs:
    p = _Refs()
    p.feed(path.read_text(encoding="utf-8"))
    return p


# ---------------------------------------------------------------- bad input

def test_missing_folder_is_an_input_error(tmp_path):
    with pytest.raises(InputError, match="does not exist") as err:
        collect(tmp_path / "nowhere")
    assert str(tmp_path / "nowhere") in str(err.value)


def test_cli_missing_folder_exits_2_without_traceback(tmp_path, capsys):
    assert main(["report", str(tmp_path / "nowhere")]) == 2
    err = capsys.readouterr().err
    assert "bedflux report: error:" in err and str(tmp_path / "nowhere") in err
    assert "Traceback" not in err


def test_cli_folder_without_outputs_exits_2(tmp_path, capsys):
    (tmp_path / "notes.txt").write_text("nothing here\n")
    (tmp_path / "summary.json").write_text(json.dumps({"something": "else"}))  # not a run summary
    assert main(["report", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert "no bedflux outputs found" in err and str(tmp_path) in err
    assert not (tmp_path / "report.html").exists()


def test_a_file_is_not_a_folder(tmp_path):
    f = tmp_path / "summary.json"
    f.write_text("{}")
    with pytest.raises(InputError, match="not a folder"):
        collect(f)


def test_corrupt_output_file_is_named(tmp_path, capsys):
    run = write_run(tmp_path / "run", steady_summary())
    (run / "summary.json").write_text('{"exchange_m2_per_s": 1e-5,')
    assert main(["report", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert str(run / "summary.json") in err and "not valid JSON" in err


def test_output_that_is_a_folder_exits_2(project, capsys):
    (project / "out.html").mkdir()
    assert main(["report", str(project), "-o", str(project / "out.html")]) == 2
    assert "is a folder" in capsys.readouterr().err


def test_hidden_staging_folders_are_skipped(tmp_path):
    write_run(tmp_path / ".reach.stage.x", steady_summary())
    with pytest.raises(InputError, match="no bedflux outputs"):
        collect(tmp_path)


# ---------------------------------------------------------------- the page

def test_report_written_to_default_path_atomically(project, capsys):
    before = {p.relative_to(project) for p in project.rglob("*")}
    assert main(["report", str(project)]) == 0
    assert f"report written to {project / 'report.html'}" in capsys.readouterr().out
    after = {p.relative_to(project) for p in project.rglob("*")}
    assert after - before == {Path("report.html")}          # no temporary files left behind


def test_report_to_other_path(project, tmp_path):
    out = build_report(project, tmp_path / "elsewhere" / "r.html")
    assert out.is_file() and not (project / "report.html").exists()


def test_report_is_self_contained(project):
    page = parse(build_report(project))
    assert page.refs, "the report should embed figures"
    for tag, attr, value in page.refs:
        assert value.startswith("data:") or value.startswith("#"), f"<{tag} {attr}={value[:60]!r}> is external"
    assert "script" not in page.tags and "iframe" not in page.tags
    assert not re.search(r"url\((?!\s*['\"]?data:)", page.style), "CSS loads an external file"
    assert "@import" not in page.style


def test_every_figure_is_embedded(project):
    page = parse(build_report(project))
    imgs = [v for t, a, v in page.refs if t == "img"]
    figures = [p for p in project.rglob("*.png")]
    assert len(imgs) == len(figures) == 6
    assert all(v.startswith("data:image/png;base64,") for v in imgs)


def test_print_stylesheet_present(project):
    page = parse(build_report(project))
    assert "@media print" in page.style and "@page" in page.style
    printed = page.style[page.style.index("@media print"):]
    assert re.search(r"nav\.contents\s*\{\s*display:\s*none", printed)
    assert "break-inside: avoid" in printed


def test_sections_inputs_and_cautions(project):
    text = build_report(project).read_text(encoding="utf-8")
    for heading in ("Findings", "Cautions", "Model run: Test reach (invented)", "Model run: Test pulse (invented)",
                    "Field measurements", "Calibration", "Plan for the next measurements", "Provenance"):
        assert f">{heading}</h2>" in text, heading
    # the scenario file reproduced, escaped
    assert "# invented test scenario &lt;with markup &amp; quotes&gt;" in text
    assert "Test reach (calibrated)" in text            # quotes escaped, by name or by number
    assert re.search(r"scenario = &(quot|#34|#x22);test\.toml&(quot|#34|#x22);", text)
    # cautions: stream hazards and deferring to codes and licensed practice
    assert "Work in and beside streams can injure or drown people" in text
    assert "local codes" in text and "licensed professional" in text


def test_provenance_version_hashes_and_date(project, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1780000000")
    text = build_report(project).read_text(encoding="utf-8")
    digest = hashlib.sha256(SCENARIO_TEXT.encode()).hexdigest()
    assert digest in text and "copy matches" in text
    assert f"bedflux {__version__}" in text
    assert "2026-05-28 20:26 UTC" in text
    fig = project / "fit" / "parameter_intervals.png"
    assert hashlib.sha256(fig.read_bytes()).hexdigest() in text


def test_changed_input_copy_is_reported(project):
    (project / "reach" / "inputs" / "test.toml").write_text("changed\n")
    assert "copy differs" in build_report(project).read_text(encoding="utf-8")


def test_findings_numbers_in_report(project):
    text = build_report(project).read_text(encoding="utf-8")
    findings = text[text.index('id="findings"'):text.index('id="cautions"')]
    assert "17.3 m³/d per metre of channel" in findings           # steady run
    assert "from 7.2 h to 15.5 h" in findings                       # pulse
    assert "1.54 m/d" in findings                                    # fit
    assert "1) a seepage meter at x = 10.0 m" in findings           # plan


def test_units_option(project):
    assert main(["report", str(project), "--units", "mm/d", "-q"]) == 0
    text = (project / "report.html").read_text(encoding="utf-8")
    assert "mm/d" in text[text.index('id="findings"'):text.index('id="cautions"')]


def test_gif_embedded_as_gif(tmp_path):
    run = write_run(tmp_path / "run", steady_summary())
    from PIL import Image
    frames = [Image.new("RGB", (20, 10), c) for c in ((255, 0, 0), (0, 0, 255))]
    frames[0].save(run / "animation.gif", save_all=True, append_images=frames[1:])
    manifest.write(run, "run")
    page = parse(build_report(tmp_path))
    assert any(v.startswith("data:image/gif;base64,") for t, a, v in page.refs if t == "img")


def test_run_alone_still_reports(tmp_path):
    write_run(tmp_path, steady_summary())
    png(tmp_path / "extra.png")                       # an unknown figure is not embedded
    text = build_report(tmp_path).read_text(encoding="utf-8")
    assert "There is no plan in this folder" in text
    assert text.count("<img ") == 1
