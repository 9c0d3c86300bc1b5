"""``bedflux ensemble``: bad input exits 2 with a message naming the file, the key and what is
allowed, and writes nothing; a good file writes the outputs its manifest lists."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
import tomli_w

from bedflux.cli import main

from ensemble_columns import column

ROOT = Path(__file__).resolve().parents[2]
GOOD = {"scenario": "column.toml", "members": 6, "seed": 1,
        "uncertain": [{"path": "bed.kv", "distribution": "lognormal", "median": "0.1 m/d", "sd_log10": 0.3}]}


def write(tmp_path: Path, content: dict | str) -> Path:
    (tmp_path / "column.toml").write_text(tomli_w.dumps(dict(column().raw)))
    path = tmp_path / "ens.toml"
    path.write_text(content if isinstance(content, str) else tomli_w.dumps(content))
    return path


def with_entry(**change) -> dict:
    return {**GOOD, "uncertain": [{**GOOD["uncertain"][0], **change}]}


@pytest.mark.parametrize("content, words", [
    ({**GOOD, "membres": 3}, ["top level", "unknown key 'membres'", "members"]),
    ({**GOOD, "members": 0}, ["members = 0", "[1, "]),
    (with_entry(distribution="weibull"), ["uncertain 'bed.kv'", "weibull", "lognormal, normal, uniform, triangular"]),
    (with_entry(sd_log10=-0.2), ["uncertain 'bed.kv'", "sd_log10"]),
    (with_entry(path="bed.kz"), ["uncertain 'bed.kz'", "cannot be set", "kv"]),
    (with_entry(low="1 m/d", high="0.5 m/d"), ["low", "below high"]),
    (with_entry(median="5 m/s"), ["uncertain 'bed.kv'", "above 1 m/s"]),
    ({**GOOD, "random_field": [{"zone": "gravel", "property": "k", "sd_log10": 0.3, "along": 1, "across": 0.1}]},
     ["random field 1", "'gravel'", "zones are sand, bed"]),
    ({**GOOD, "random_field": [{"zone": "bed", "property": "k", "sd_log10": 0.3, "along": 1, "across": 0.1,
                                "model": "spherical"}]}, ["random field 1", "model", "exponential, gaussian, matern"]),
    ({**GOOD, "random_field": [{"zone": "bed", "property": "k", "sd_log10": 0.3, "along": 1, "across": 0.1,
                                "condition": [{"x": 0.5, "depth": 0.2, "k": 1e-6}]}]},
     ["random field 1", "kh (slug tests) or kv (permeameters)"]),
    ({**GOOD, "random_field": [{"zone": "bed", "property": "kv", "sd_log10": 0.3, "along": 1, "across": 0.1,
                                "condition": [{"x": 0.5, "depth": 0.2, "k": "5 m/s"}]}]},
     ["random field 1 condition 1", "above 1"]),
    ({**GOOD, "scenario": "missing.toml"}, ["missing.toml"]),
    ({**GOOD, "from_fit": "nofit"}, ["from_fit", "no such folder"]),
    ("members = [", ["ens.toml"]),
])
def test_bad_input_exits_2_and_writes_nothing(tmp_path, capsys, content, words):
    path = write(tmp_path, content)
    out = tmp_path / "out"
    assert main(["ensemble", str(path), "-o", str(out), "--workers", "0"]) == 2
    err = capsys.readouterr().err
    assert str(path) in err or "missing.toml" in err, err
    for w in words:
        assert w in err, (w, err)
    assert "Traceback" not in err
    assert not out.exists() or not any(out.iterdir())


def test_bad_engine_options_exit_2(tmp_path, capsys):
    path = write(tmp_path, GOOD)
    assert main(["ensemble", str(path), "-o", str(tmp_path / "a"), "--workers", "-1"]) == 2
    assert "--workers" in capsys.readouterr().err
    assert main(["ensemble", str(path), "-o", str(tmp_path / "b"), "--workers", "2",
                 "--scheduler", "tcp://127.0.0.1:1"]) == 2
    assert "leave out --workers" in capsys.readouterr().err


def test_console_script_writes_the_outputs(tmp_path):
    path = write(tmp_path, GOOD)
    out = tmp_path / "out"
    env = {"PYTHONPATH": str(ROOT / "model"), "PATH": "/usr/bin:/bin"}
    r = subprocess.run([sys.executable, "-m", "bedflux.cli", "ensemble", str(path), "-o", str(out),
                        "--workers", "0"], capture_output=True, text=True, env=env, timeout=300)
    assert r.returncode == 0, r.stderr
    assert "6 members (seed 1), 6 ran, 0 failed" in r.stdout
    manifest = json.loads((out / "ensemble_manifest.json").read_text())
    for name in ("ensemble.nc", "ensemble_summary.txt", "ensemble_summary.json", "ensemble_failed.csv",
                 "ensemble_losing.png", "ensemble_histograms.png", "inputs/ens.toml", "inputs/column.toml"):
        assert name in manifest["files"], name
    s = json.loads((out / "ensemble_summary.json").read_text())
    assert s["probability_of_losing_reach"] == 0.0  # the column gains in every member (bottom head above stage)
