"""The report reads only what bedflux wrote, and never overwrites what it did not write.

Checked against the project's own rules for outputs (docs/outputs.md, docs/report.md): the report
trusts only files named by a command's manifest, embeds only regular files inside the project
folder, and replaces only an earlier report.
"""
from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from bedflux.cli import main


@pytest.fixture(scope="module")
def built_run(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("built") / "run"
    assert main(["run", "-o", str(folder), "-q"]) == 0
    return folder


@pytest.fixture
def project(tmp_path, built_run) -> Path:
    root = tmp_path / "project"
    shutil.copytree(built_run, root / "run")
    return root


def test_report_refuses_to_overwrite_a_scenario(project, capsys):
    scenario = project / "x.toml"
    scenario.write_text('title = "my scenario"\n')
    assert main(["report", str(project), "-o", str(scenario)]) == 2
    err = capsys.readouterr().err
    assert str(scenario) in err and ".html" in err and "Traceback" not in err
    assert scenario.read_text() == 'title = "my scenario"\n'
    assert main(["report", str(project), "-o", str(scenario), "--force"]) == 2   # still not .html


def test_report_replaces_only_an_earlier_report(project, capsys):
    mine = project / "notes.html"
    mine.write_text("<html><body>my own page</body></html>\n")
    assert main(["report", str(project), "-o", str(mine), "-q"]) == 2
    assert "not a report written by bedflux" in capsys.readouterr().err
    assert mine.read_text() == "<html><body>my own page</body></html>\n"
    assert main(["report", str(project), "-o", str(mine), "-q", "--force"]) == 0
    assert "bedflux" in mine.read_text()
    assert main(["report", str(project), "-o", str(mine), "-q"]) == 0            # now an earlier report


def test_link_leaving_the_project_is_listed_not_embedded(project, tmp_path):
    secret = tmp_path / "elsewhere" / "secret.csv"
    secret.parent.mkdir()
    secret.write_text("account,password\nclient,hunter2-not-for-the-report\n")
    (project / "run" / "inputs" / "extra.csv").symlink_to(secret)
    (project / "run" / "inputs" / "gaining_channel.toml").unlink()
    (project / "run" / "inputs" / "gaining_channel.toml").symlink_to(secret)
    assert main(["report", str(project), "-q"]) == 0
    text = (project / "report.html").read_text(encoding="utf-8")
    assert "hunter2-not-for-the-report" not in text
    assert "Files found but not read" in text
    assert text.count("outside the project folder); not followed") == 2


def test_report_leaves_out_files_not_named_or_changed(project):
    run = project / "run"
    (run / "events.csv").write_text("x,initial_flux\n0,1\n")          # not written by this run
    (run / "section.png").write_bytes(b"\x89PNG\r\n\x1a\n not the figure bedflux drew")
    assert main(["report", str(project), "-q"]) == 0
    text = (project / "report.html").read_text(encoding="utf-8")
    assert "<img " not in text                                          # the changed figure is left out
    assert "Exchange events by column" not in text
    assert "run/section.png</td><td class=\"text\">changed since bedflux wrote it" in text
    assert "run/events.csv</td><td class=\"text\">not named by the manifest" in text


def test_output_without_its_manifest_is_not_trusted(project, capsys):
    (project / "run" / "run_manifest.json").unlink(missing_ok=True)     # an unfinished commit
    assert main(["report", str(project)]) == 2
    err = capsys.readouterr().err
    assert "no bedflux outputs found" in err and "no run_manifest.json beside it" in err
