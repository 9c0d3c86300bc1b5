"""Mass balance of the mixed form against the head form: the infiltration problem of Celia,
Bouloutas & Zarba (1990), Water Resour. Res. 26(7), 1483-1496.

Their test (parameters from memory, as used throughout the later literature): a 1 m column of a
van Genuchten soil (alpha 3.35 1/m, n 2, theta_r 0.102, theta_s 0.368, Ks 9.22e-5 m/s), initially
at psi = -10 m, with psi = -0.75 m held on the top and -10 m on the base, run for one day. Their
finding, checked here: the mixed form conserves mass to the solver tolerance whatever the step,
while the head form, C(psi) (psi1 - psi0) / dt, loses or gains mass, more so with longer steps.
The mass balance ratio is the change of water in the column over the net inflow through its
ends (Celia et al. 1990, eq. 13).
"""
from __future__ import annotations

import numpy as np
import pytest

from bedflux.section.richards_steps import run_steps

from .columns import box, pressure_terms, stepper

SOIL = {"model": "van-genuchten", "alpha": 3.35, "n": 2.0, "residual": 0.102, "saturated": 0.368}
KS = 9.22e-5


def mass_balance(form: str, step: float, dz: float = 0.01) -> tuple[float, np.ndarray]:
    sec = box(0.1, 1.0, 0.1, dz, KS, SOIL)
    forcing = pressure_terms(sec, {"top": lambda x: -0.75 + 0 * x, "bottom": lambda x: -10.0 + 0 * x})
    st = stepper(sec, forcing, form=form)
    system = st.system
    psi0 = np.full(sec.n, -10.0)
    theta0 = system.soil.properties(psi0).theta
    net_in = [0.0]
    final = {}

    def on_step(out, forcing, storage, t0, t1):
        u = system.head_u(out.psi)
        for term, kr in zip(forcing.terms, out.evaluation.term_kr):
            net_in[0] += (t1 - t0) * float((kr * (term.r - term.conductance * u[term.cells])).sum())
        return 0.0

    def on_stop(out, forcing, t):
        final["psi"] = out.psi

    run_steps(st, psi0, sec.initial_active_set(), np.array([86400.0]), step, on_step, on_stop)
    stored = float((system.volume * (system.soil.properties(final["psi"]).theta - theta0)).sum())
    return stored / net_in[0], final["psi"]


@pytest.mark.parametrize("step", [60.0, 600.0, 3600.0])
def test_mixed_form_conserves_mass(step):
    ratio, psi = mass_balance("mixed", step)
    assert abs(ratio - 1.0) < 1e-8
    assert psi.max() <= -0.75 + 1e-9 and psi.min() >= -10.0 - 1e-9  # the wetting front stays bounded


def test_head_form_does_not():
    errors = [abs(mass_balance("head", step)[0] - 1.0) for step in (60.0, 600.0, 3600.0)]
    # the head form's error grows with the step (Celia et al. 1990, fig. 3-4) and is far above the
    # mixed form's at every step
    assert errors[0] > 1e-2 and np.all(np.diff(errors) > 0), errors
