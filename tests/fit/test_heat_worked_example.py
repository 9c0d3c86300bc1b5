"""The worked example with heat (scenarios/reach_heat_fit.toml): seepage meters, piezometers and
temperature loggers fitted jointly.

External check: a twin experiment against known truth (common practice for checking an
estimator; Hill & Tiedeman 2007, ch. 7-8, from memory). Data made by the model at known values,
with errors of the stated sigmas, must be fitted with linearised 95 % intervals that hold those
values and a weighted sum of squares inside the 99 % range of its chi-square distribution.
"""
import importlib.util
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import bedflux
from bedflux.calibration.spec import free_tables, load_fit, read_toml
from bedflux.forward.sensitivity import Forward, free_parameters

SCENARIOS = Path(__file__).resolve().parents[2] / "scenarios"
FIT_FILE = SCENARIOS / "reach_heat_fit.toml"


def _generator():
    spec = importlib.util.spec_from_file_location("make_logger_sheet", SCENARIOS / "make_logger_sheet.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _chi_square_99(dof: int) -> tuple[float, float]:
    return stats.chi2.ppf(0.005, dof), stats.chi2.ppf(0.995, dof)


def test_the_worked_heat_fit_reads_loggers_meters_and_piezometers():
    spec = load_fit(FIT_FILE)
    counts = spec.observations["kind"].value_counts().to_dict()
    # 3 loggers x 2 depths x 37 readings (every 2 h from day 1 to day 4); the 14 unflagged meters,
    # 6 piezometers with gradient and head; the rods' fluxes are not asked for
    assert counts == {"temperature": 222, "seepage": 14, "vhg": 6, "head": 6}
    assert [f.path for f in spec.free] == ["bed.kv", "aquifer.kv", "sides.bottom.head", "bed.thermal_conductivity"]


def test_the_logger_sheet_is_reproducible_from_its_generator(tmp_path, monkeypatch):
    gen = _generator()
    monkeypatch.setattr(gen, "HERE", tmp_path)
    (tmp_path / "field").mkdir()
    (tmp_path / "reach_heat.toml").write_text((SCENARIOS / "reach_heat.toml").read_text())
    gen.main()
    for name in ("field/logger.csv", "reach_stream_temperature.csv"):
        assert (tmp_path / name).read_text() == (SCENARIOS / name).read_text(), name


def _twin_observations(seed: int):
    """The worked fit's rows (places, times, sigmas) with values made at the generator's truth."""
    gen = _generator()
    spec = load_fit(FIT_FILE)
    obs = spec.observations.copy()
    truth = spec.scenario.with_values(gen.TRUTH)
    forward = Forward(truth, obs, free_parameters(truth, [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}]))
    clean = forward.predict(forward.start())
    rng = np.random.default_rng(seed)
    logger = (obs["kind"] == "temperature").to_numpy()
    # loggers: uniform within their +/- 0.1 degC (sd = sigma); meters and piezometers: normal
    noise = np.where(logger, rng.uniform(-0.1, 0.1, len(obs)), rng.normal(0.0, obs["sigma"]))
    obs["value"] = clean + noise
    return spec, obs, gen.TRUTH


@pytest.mark.slow
def test_twin_experiment_recovers_the_truth_within_the_intervals():
    spec, obs, truth = _twin_observations(seed=3)
    free = free_tables(read_toml(FIT_FILE, "fit file"), str(FIT_FILE), spec.scenario)
    result = bedflux.fit(spec.scenario, obs, free, pan_diameter=spec.pan_diameter)
    for path, value in truth.items():
        low, high = result.ci95[path]
        assert low <= value <= high, (path, result.best[path], (low, high), value)
        assert "well determined" in result.verdicts[path], (path, result.verdicts[path])
    s = result.statistics
    low, high = _chi_square_99(s["degrees_of_freedom"])
    assert low <= s["weighted_sum_of_squares"] <= high


@pytest.mark.slow
def test_worked_heat_fit_from_the_command_line(tmp_path):
    # The loggers were made at the generator's truth; the meters and piezometers of the demo
    # campaign were invented near it (the steady fit gives bed kv 1.50 m/d, aquifer kv 2.73 m/d,
    # base head 99.09 m). The joint fit must hold the loggers' truth in its intervals and
    # describe all rows to within their sigmas.
    out = tmp_path / "fit"
    run = subprocess.run([sys.executable, "-m", "bedflux.cli", "fit", str(FIT_FILE), "-o", str(out)],
                         capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    results = json.loads((out / "fit_results.json").read_text())
    for path, value in _generator().TRUTH.items():
        low, high = results["ci95"][path]
        assert low <= value <= high, (path, results["best"][path], (low, high), value)
    s = results["statistics"]
    low, high = _chi_square_99(s["degrees_of_freedom"])
    assert low <= s["weighted_sum_of_squares"] <= high
    calibrated = bedflux.load(out / "calibrated.toml")
    assert np.isclose(calibrated.value_at("bed.thermal_conductivity"), results["best"]["bed.thermal_conductivity"],
                      rtol=1e-9)


def test_the_stream_temperature_series_travels_with_the_scenario():
    # calibrated.toml and inputs/ copy the CSV files a scenario reads; the stream's temperature
    # series is one of them (without it calibrated.toml would not load)
    from bedflux.outputs.files import input_files

    files = [p.name for p in input_files(bedflux.load(SCENARIOS / "reach_heat.toml"))]
    assert files == ["reach_heat.toml", "reach_stream_temperature.csv"]
