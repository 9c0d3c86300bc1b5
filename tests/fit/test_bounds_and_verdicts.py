"""What a fit says about a parameter that ends on a bound, and the quantile behind its verdicts.

Bounds. A 2 m column: a 0.4 m bed over the aquifer, the stage on top and a flux q imposed at the
base. By continuity the flux through the bed is q, and by Darcy's law the vertical gradient
inside the bed is i = q / K_bed (Darcy 1856; Freeze & Cherry 1979, ch. 2, from memory). A
gradient observed as 0.25 with q = 2e-6 m/s asks for K_bed = q / i = 8e-6 m/s; with an upper
bound of half that, the best the fit can do is the bound, and the data want more. With two
unknowns (bed kv and the head at the base) the head that passes q through bed and aquifer in
series is stage + q (b / K_bed + (L - b) / K_aquifer) = 0.364 m (Freeze & Cherry 1979, ch. 2,
layers in series); an upper bound of 0.3 m pins it.

Verdicts. With n = 3 gradients and one parameter (2 degrees of freedom), the 95 % interval of
log10(kv) is ``b +- t(0.975, 2) s.e.`` with t(0.975, 2) = 4.303 (Student's t; Draper & Smith 1998,
ch. 5; Hill & Tiedeman 2007, ch. 8, from memory), not 1.96. The "well determined" verdict (an
interval spanning less than a factor of 3, docs/calibration.md) must use the same interval the
fit reports. The gradients scatter by +-30 % about q / K: the t interval spans a factor of about
4.4, the normal one a factor of about 2.
"""
from __future__ import annotations

import json
import math
import re
import tomllib

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import bedflux
from bedflux.calibration import fit
from bedflux.calibration.outputs import result_dict, write_fit
from bedflux.report.findings import conductivity_finding

STAGE, BED, K_AQUIFER, Q = 0.2, 0.4, 5e-5, 2e-6
DAY = 86400.0


def column(bottom: dict) -> bedflux.Scenario:
    return bedflux.Scenario.from_dict({
        "title": "bound column (invented)",
        "grid": {"x": [0.0, 1.0], "bottom": -2.0, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": K_AQUIFER},
                 {"name": "bed", "kh": 3e-5, "kv": 1e-5, "depth": BED}],
        "stream": {"stage": STAGE},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": bottom}})


def gradients(values: list[float], depths: list[float]) -> pd.DataFrame:
    return pd.DataFrame({"kind": "vhg", "x": 0.5, "depth": depths, "time": 0.0, "value": values,
                         "sigma": [0.1 * abs(v) for v in values]})


@pytest.fixture(scope="module")
def pinned_kv():
    """Bed kv asked for 8e-6 m/s by the data, bounded above at 4e-6 m/s."""
    free = [{"path": "bed.kv", "low": 1e-8, "high": 4e-6, "start": 1e-6}]
    return fit(column({"flux": Q}), gradients([0.25], [0.225]), free)


def test_upper_bound_is_named_in_the_verdict(pinned_kv):
    assert pinned_kv.best["bed.kv"] == pytest.approx(4e-6, rel=1e-6)
    # 4e-6 m/s = 0.3456 m/d
    assert pinned_kv.verdicts["bed.kv"] == ("stopped at its upper bound 0.3456 m/d: the data want more; widen the "
                                            "bound or question the model")


def test_lower_bound_the_data_want_less():
    free = [{"path": "bed.kv", "low": 1.6e-5, "high": 1e-3, "start": 1e-4}]
    res = fit(column({"flux": Q}), gradients([0.25], [0.225]), free)
    assert res.verdicts["bed.kv"].startswith("stopped at its lower bound 1.382 m/d: the data want less")


def test_bound_note_in_summary_and_beside_the_value_in_calibrated_toml(pinned_kv, tmp_path):
    write_fit(pinned_kv, column({"flux": Q}), tmp_path)
    note = "bed.kv stopped at its upper bound 0.3456 m/d: the data want more; widen the bound or question the model"
    assert note in (tmp_path / "fit_summary.txt").read_text()
    text = (tmp_path / "calibrated.toml").read_text()
    beside = [line for line in text.splitlines() if not line.startswith("#") and note in line]
    assert len(beside) == 1
    value = float(re.search(r"\bkv = ([-+0-9.eE]+)", beside[0].split("#")[0]).group(1))
    assert value == pytest.approx(4e-6, rel=1e-6)          # the comment sits beside the bed's kv
    tomllib.loads(text)                                     # and the file is still valid TOML
    s = bedflux.Scenario.from_dict(tomllib.loads(text))
    assert s.value_at("bed.kv") == pytest.approx(4e-6, rel=1e-6)
    assert json.loads((tmp_path / "fit_results.json").read_text())["at_bound"] == {"bed.kv": note}


def test_a_pinned_head_reaches_the_report():
    free = [{"path": "bed.kv", "low": 1e-9, "high": 1e-2, "start": 1e-4},
            {"path": "sides.bottom.head", "low": -1.0, "high": 0.3, "start": 0.25}]
    q, i = Q, 0.25
    obs = pd.DataFrame({"kind": ["seepage", "vhg"], "x": 0.5, "depth": [0.0, 0.375], "time": 0.0,
                        "value": [q, i], "sigma": [0.1 * q, 0.1 * i]})
    res = fit(column({"head": 0.6}), obs, free)
    h_base = STAGE + q * (BED / (q / i) + (2.0 - BED) / K_AQUIFER)
    assert h_base == pytest.approx(0.364) and res.best["sides.bottom.head"] == pytest.approx(0.3, abs=1e-9)
    note = "sides.bottom.head stopped at its upper bound 0.3 m: the data want more"
    assert res.at_bound["sides.bottom.head"].startswith(note)
    finding = conductivity_finding(json.loads(json.dumps(result_dict(res), allow_nan=True)))
    assert note in finding.text


def test_verdict_uses_the_t_quantile_of_the_reported_interval():
    depths = [0.125, 0.225, 0.325]                  # cell centres inside the 0.4 m bed
    kv = 8e-6
    values = [Q / kv * f for f in (1.3, 1.0, 0.7)]
    res = fit(column({"flux": Q}), gradients(values, depths), [{"path": "bed.kv", "low": 1e-9, "high": 1e-2,
                                                                 "start": 1e-5}])
    dof = res.statistics["degrees_of_freedom"]
    assert dof == 2
    t = stats.t.ppf(0.975, dof)
    assert t == pytest.approx(4.303, abs=1e-3)      # Student's t table, 2 degrees of freedom
    se = math.sqrt(res.covariance[0, 0])            # log10 units
    lo, hi = res.ci95["bed.kv"]
    assert hi / lo == pytest.approx(10 ** (2 * t * se), rel=1e-9)
    assert 10 ** (2 * 1.96 * se) < 3.0 < hi / lo   # the case where the two quantiles disagree
    assert res.verdicts["bed.kv"] == f"poorly determined: the 95 % interval spans a factor of {hi / lo:.2g}"


def test_well_determined_agrees_with_the_interval():
    depths = [0.125, 0.225, 0.325]
    values = [Q / 8e-6 * f for f in (1.02, 1.0, 0.98)]
    res = fit(column({"flux": Q}), gradients(values, depths), [{"path": "bed.kv", "low": 1e-9, "high": 1e-2,
                                                                 "start": 1e-5}])
    lo, hi = res.ci95["bed.kv"]
    assert hi / lo < 3.0 and res.verdicts["bed.kv"] == "well determined"
    assert np.isclose(res.best["bed.kv"], 8e-6, rtol=0.02)
