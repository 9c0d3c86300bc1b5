"""Bad input found by probing the command line: each exits 2 with a message, never a traceback.

The contract (design brief): exit status 2 and a message naming the file, key or row and what is
allowed; nothing written on failure.
"""
from __future__ import annotations

import os
import resource
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from bedflux.outputs import manifest
from bedflux.cli import main

ROOT = Path(__file__).resolve().parents[1]
SCEN = ROOT / "scenarios"


def run_cli(args, capsys):
    code = main(args)
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return code, err


def test_stage_csv_not_utf8(tmp_path, capsys):
    (tmp_path / "s.csv").write_bytes("elapsed [h],stage [m]\n0,1\n5,1\n".encode("utf-16"))
    (tmp_path / "s.toml").write_text((SCEN / "measured_stage.toml").read_text().replace("measured_stage.csv", "s.csv")
                                     .replace('end = "3 d"', 'end = "4 h"'))
    code, err = run_cli(["run", str(tmp_path / "s.toml"), "-o", str(tmp_path / "o")], capsys)
    assert code == 2 and "UTF-8" in err and not (tmp_path / "o").exists()


def test_seepage_sheet_with_every_row_rejected(tmp_path, capsys):
    d = tmp_path / "sheets"
    d.mkdir()
    (d / "sites.csv").write_text("site,x [m],y [m],bed_elevation [m]\nA1,0,0,0\n")
    (d / "seepage.csv").write_text("site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_diameter [cm]\n"
                                   "Z9,1,90,1000,2000,57\n")
    code, err = run_cli(["field", str(d), "-o", str(tmp_path / "o")], capsys)
    assert code == 2 and "seepage.csv" in err and not (tmp_path / "o").exists()


def _fit_file(tmp_path, free_block):
    for name in ("reach_long.toml",):
        shutil.copy(SCEN / name, tmp_path / name)
    shutil.copytree(SCEN / "field", tmp_path / "field")
    p = tmp_path / "fit.toml"
    p.write_text(f'scenario = "reach_long.toml"\nobservations = "field"\n{free_block}')
    return p


def test_free_path_without_a_value(tmp_path, capsys):
    p = _fit_file(tmp_path, '[[free]]\npath = "aquifer.depth"\nlow = "10 cm"\nhigh = "2 m"\n')
    code, err = run_cli(["fit", str(p), "-o", str(tmp_path / "o")], capsys)
    assert code == 2 and "aquifer.depth" in err


def test_unknown_free_path_is_named_before_units(tmp_path, capsys):
    p = _fit_file(tmp_path, '[[free]]\npath = "bed"\nlow = "0.01 m/d"\nhigh = "5 m/d"\n')
    code, err = run_cli(["fit", str(p), "-o", str(tmp_path / "o")], capsys)
    assert code == 2 and "unknown parameter path 'bed'" in err


def test_observation_outside_section_exits_2(tmp_path, capsys):
    obs = tmp_path / "obs.csv"
    obs.write_text("kind,x,depth,time,value,sigma\nseepage,500,0,0,1e-6,1e-7\n")
    shutil.copy(SCEN / "reach_long.toml", tmp_path / "reach_long.toml")
    p = tmp_path / "fit.toml"
    p.write_text('scenario = "reach_long.toml"\nobservations = "obs.csv"\n[[free]]\npath = "bed.kv"\n'
                 'low = "0.01 m/d"\nhigh = "10 m/d"\n')
    code, err = run_cli(["fit", str(p), "-o", str(tmp_path / "o")], capsys)
    assert code == 2 and "obs.csv" in err and "outside the section" in err


def test_empty_candidate_table_and_bad_targets(tmp_path, capsys):
    shutil.copy(SCEN / "reach_long.toml", tmp_path / "reach_long.toml")
    (tmp_path / "c.csv").write_text("")
    base = ('scenario = "reach_long.toml"\nn = {n}\ntarget = "{target}"\n[candidates]\n{cand}\n'
            '[[free]]\npath = "bed.kv"\nlow = "0.01 m/d"\nhigh = "10 m/d"\n')
    cases = [(2, "bed.kv", 'table = "c.csv"', "c.csv"),
             (2.5, "bed.kv", 'seepage_spacing = "10 m"', "whole number"),
             (2, "reversal:5000", 'seepage_spacing = "10 m"', "reversal")]
    for n, target, cand, needle in cases:
        p = tmp_path / "plan.toml"
        p.write_text(base.format(n=n, target=target, cand=cand))
        code, err = run_cli(["plan", str(p), "-o", str(tmp_path / "o")], capsys)
        assert code == 2 and needle in err, (target, err)
        assert not (tmp_path / "o").exists()


def test_quantity_needs_a_number_and_one_unit(tmp_path, capsys):
    text = (SCEN / "channel_banks.toml").read_text().replace('kh = "25 m/d"', 'kh = "m/d"')
    (tmp_path / "s.toml").write_text(text)
    code, err = run_cli(["run", str(tmp_path / "s.toml"), "-o", str(tmp_path / "o")], capsys)
    assert code == 2 and "number and a unit" in err


def test_report_with_a_wrong_type_and_empty_output_name(tmp_path, capsys):
    (tmp_path / "p" / "run").mkdir(parents=True)
    (tmp_path / "p" / "run" / "summary.json").write_text('{"exchange_m2_per_s": "abc"}')
    code, err = run_cli(["report", str(tmp_path / "p"), "-o", str(tmp_path / "r.html")], capsys)
    assert code == 2 and not (tmp_path / "r.html").exists()
    code, err = run_cli(["run", "-o", ""], capsys)
    assert code == 2 and "-o" in err


def _base(**over):
    d = {"grid": {"x": [0, 10], "bottom": -5, "dx": 1, "dz": 0.5}, "ground": {"elevation": 0},
         "zone": [{"name": "aquifer", "kh": 1e-5}], "stream": {"stage": 0.5}}
    d.update(over)
    return d


@pytest.mark.parametrize("over,needle", [
    ({"zone": [{"name": "aquifer", "kh": 1e-5}, {"name": "far", "kh": 1e-6, "depth": 1, "x": [100, 200]}]},
     "covers no cell"),
    ({"riparian": [{"x": [100, 200], "max_rate": "3 mm/d", "extinction_depth": 2}]}, "no column centre"),
    ({"stream": {"stage": "1e6 m"}}, "check the unit"),
    ({"zone": [{"name": "aquifer", "kh": 1e300}]}, "above 1 m/s"),
])
def test_values_that_do_nothing_or_cannot_be_meant(over, needle):
    import bedflux
    from bedflux.errors import InputError

    with pytest.raises(InputError) as e:
        bedflux.simulate(bedflux.Scenario.from_dict(_base(**over)))
    assert needle in str(e.value)
    assert "did you mean '1e+300" not in str(e.value)


# ------------------------------------------------------------------ tracebacks found by probing the limits

BASE = ('[grid]\nx = [0, 10]\nbottom = -5\ndx = 1\ndz = 0.5\n[ground]\nelevation = 0\n'
        '[[zone]]\nname = "aquifer"\nkh = 1e-5\n[stream]\nstage = 0.5\n')
#: Address space of the probed command: a 7.45 GiB grid cannot even be asked for.
MEMORY_LIMIT = 3 * 2**30


def _limit_memory():
    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT, MEMORY_LIMIT))


def bedflux_cli(*args, timeout=120):
    """The console command in a fresh process with limited memory and time."""
    env = dict(os.environ, PYTHONPATH=str(ROOT / "model"))
    return subprocess.run([sys.executable, "-m", "bedflux.cli", *args], capture_output=True, text=True,
                          timeout=timeout, env=env, preexec_fn=_limit_memory)


def _refused(r, *needles):
    assert r.returncode == 2, r.stderr
    assert "Traceback" not in r.stderr
    for n in needles:
        assert n in r.stderr, (n, r.stderr)


DEEP = "deep = " + "[" * 5000 + "]" * 5000 + "\n"


@pytest.mark.parametrize("verb", ["run", "fit", "plan"])
def test_toml_nested_thousands_of_levels_deep(tmp_path, verb):
    path = tmp_path / f"{verb}.toml"
    path.write_text(DEEP)
    _refused(bedflux_cli(verb, str(path), "-o", str(tmp_path / "o")), str(path), "nested")
    assert not (tmp_path / "o").exists()


@pytest.mark.parametrize("key,needle", [("end = 1e-6\nstep = 1e-10", "step"),
                                        ('end = "1 h"\nstep = "10 min"\noutput_every = 1e-10', "output_every")])
def test_step_or_output_interval_under_a_nanosecond(tmp_path, key, needle):
    path = tmp_path / "s.toml"
    path.write_text(BASE + f"[time]\n{key}\n")
    _refused(bedflux_cli("run", str(path), "-o", str(tmp_path / "o")), str(path), "[time]", needle, ">= 0.001 s")


def test_a_one_megabyte_title(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(f'title = "{"x" * 2**20}"\n' + BASE)
    _refused(bedflux_cli("run", str(path), "-o", str(tmp_path / "o"), timeout=60), str(path), "title")


@pytest.mark.parametrize("dx,columns", [('"1 mm"', "1e+09 columns"), ("1e-300", "columns")])
def test_huge_grid_is_refused_before_allocating(tmp_path, dx, columns):
    path = tmp_path / "s.toml"
    path.write_text(BASE.replace("x = [0, 10]", "x = [0, 1000000]").replace("dx = 1\n", f"dx = {dx}\n"))
    _refused(bedflux_cli("run", str(path), "-o", str(tmp_path / "o"), timeout=60), str(path), "[grid]", columns)


def test_device_and_pipe_are_not_reported_as_missing(tmp_path):
    _refused(bedflux_cli("run", "/dev/zero", "-o", str(tmp_path / "o"), timeout=60), "/dev/zero", "a device")
    _refused(bedflux_cli("fit", "/dev/zero", "-o", str(tmp_path / "o"), timeout=60), "/dev/zero", "a device")
    fifo = tmp_path / "scenario.toml"
    os.mkfifo(fifo)
    _refused(bedflux_cli("run", str(fifo), "-o", str(tmp_path / "o"), timeout=60), str(fifo), "a pipe")
    csv = tmp_path / "stage.csv"
    os.mkfifo(csv)
    (tmp_path / "s.toml").write_text(BASE.replace("stage = 0.5", 'stage_csv = "stage.csv"') +
                                     '[time]\nend = "1 h"\nstep = "10 min"\n')
    _refused(bedflux_cli("run", str(tmp_path / "s.toml"), "-o", str(tmp_path / "o"), timeout=60), "a pipe")


def test_deeply_nested_summary_given_to_report(tmp_path):
    run = tmp_path / "p" / "run"
    run.mkdir(parents=True)
    (run / "summary.json").write_text('{"exchange_m2_per_s": ' + "[" * 100000 + "]" * 100000 + "}")
    manifest.write(run, "run")
    _refused(bedflux_cli("report", str(tmp_path / "p"), "-o", str(tmp_path / "r.html")),
             str(run / "summary.json"), "nested")
    assert not (tmp_path / "r.html").exists()


def test_missing_stage_csv_names_the_scenario_and_its_key(tmp_path, capsys):
    text = (SCEN / "measured_stage.toml").read_text().replace("measured_stage.csv", "logger/stage.csv")
    (tmp_path / "s.toml").write_text(text)
    code, err = run_cli(["run", str(tmp_path / "s.toml"), "-o", str(tmp_path / "o")], capsys)
    assert code == 2
    assert err.startswith(f"bedflux run: error: {tmp_path / 's.toml'}: [stream] stage_csv:")
    assert "'logger/stage.csv' was not found" in err and str(tmp_path / "logger" / "stage.csv") in err
