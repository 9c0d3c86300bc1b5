"""The public entry point ``bedflux.flowpaths`` (design brief's contract) and its input checks:
a user's mistake is an InputError naming what is allowed."""
from __future__ import annotations

import subprocess
import sys

import pytest

import bedflux
from bedflux.errors import InputError

SMALL = {"grid": {"x": [0.0, 1.0], "bottom": -0.3, "dx": 0.05, "dz": 0.03}, "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": 1e-4}],
         "stream": {"stage": 0.2, "bedform": {"amplitude": 0.01, "wavelength": 0.5}},
         "sides": {"left": "periodic", "right": "periodic", "bottom": "no-flow"}}


def test_flowpaths_is_public_and_callable_whatever_was_imported_first():
    code = ("import bedflux.flowpaths.tracer, bedflux\n"
            f"fp = bedflux.flowpaths(bedflux.Scenario.from_dict({SMALL!r}), per_metre=20)\n"
            "assert 'flowpaths' in bedflux.__all__ and fp.sizes['path'] == 20\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr


def test_the_dataset_has_the_contracts_names():
    fp = bedflux.flowpaths(bedflux.Scenario.from_dict(SMALL), per_metre=20, keep_geometry=True)
    for name in ("entry_x", "exit_x", "residence_time", "depth_reached", "length", "weight", "exit_kind",
                 "path_x", "path_z"):
        assert name in fp
    for name in ("exchange_flux", "median_residence_time", "mean_residence_time", "residence_time_q10",
                 "residence_time_q25", "residence_time_q75", "residence_time_q90"):
        assert name in fp.attrs
    # the geometry starts where the path enters and ends where it leaves
    first = fp.path_x.values[:, 0]
    assert (abs(first - fp.entry_x.values) < 1e-12).all()


@pytest.mark.parametrize("kwargs, needle", [({"per_metre": 0}, "per_metre"), ({"max_time": -1.0}, "max_time")])
def test_bad_arguments_are_input_errors(kwargs, needle):
    with pytest.raises(InputError, match=needle):
        bedflux.flowpaths(bedflux.Scenario.from_dict(SMALL), **kwargs)


def test_a_result_of_another_grid_is_refused():
    other = bedflux.simulate(bedflux.Scenario.from_dict({**SMALL, "grid": {**SMALL["grid"], "dx": 0.1}}))
    with pytest.raises(InputError, match="pass the result of this scenario"):
        bedflux.flowpaths(bedflux.Scenario.from_dict(SMALL), other)


def test_a_variably_saturated_scenario_with_a_linear_result_is_refused():
    zone = {**SMALL["zone"][0], "retention": {"model": "van-genuchten", "alpha": 3.0, "n": 2.0, "residual": 0.05,
                                              "saturated": 0.35}}
    linear = bedflux.simulate(bedflux.Scenario.from_dict(SMALL))
    with pytest.raises(InputError, match="water_content"):
        bedflux.flowpaths(bedflux.Scenario.from_dict({**SMALL, "zone": [zone]}), linear)
