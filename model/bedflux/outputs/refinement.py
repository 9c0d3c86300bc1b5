"""The refinement check of a run: its answers on three grids and steps, and how far the run's own
may be from the converged value.

A three-grid refinement study with Richardson extrapolation and Roache's grid convergence index
(Roache 1998, Verification and Validation in Computational Science and Engineering, ch. 5; from
memory): the run is repeated with the grid spacing and the time step divided by ``r`` and by
``r^2`` (:mod:`bedflux.scenario.refinement`). For each answer, with ``f1`` (the run), ``f2`` and
``f3`` (the finest):

- the observed order ``p = ln(|f2 - f1| / |f3 - f2|) / ln(r)`` and the extrapolated value
  ``f* = f3 + (f3 - f2) / (r^p - 1)``, when the changes shrink with the same sign (monotone
  convergence);
- the error estimate of the run's answer, ``1.25 |f1 - f*| / |f*|`` (the safety factor of a
  three-grid study);
- the answer is called converged when that estimate is within :data:`TOLERANCE`. When the changes
  do not shrink, or change sign, the grids are not yet in the range where the error falls
  steadily: the answer is not called converged, and the largest change is reported instead.
"""
from __future__ import annotations

import math

#: Error estimate of an answer below which the check calls it converged (project choice: the
#: answers are compared with field data whose errors are 10 % and more).
TOLERANCE = 0.02
#: Safety factor on the extrapolated error of a three-grid study (Roache 1998; from memory).
SAFETY = 1.25
#: Changes below this fraction of the answer are round-off (the answer is exact on every grid).
ROUND_OFF = 1e-9

#: The answers compared: (name, how to find it in a run summary, unit for the text, scale to it).
_ANSWERS = (
    ("net exchange", ("exchange_m2_per_s",), "m3/d per metre", 86400.0),
    ("lowest net exchange over the run", ("exchange_min_m2_per_s",), "m3/d per metre", 86400.0),
    ("highest net exchange over the run", ("exchange_max_m2_per_s",), "m3/d per metre", 86400.0),
    ("strongest upward bed flux", ("bed", "channel", "gaining", "peak_m_per_s"), "m/d", 86400.0),
    ("95th percentile of the upward bed flux", ("bed", "channel", "gaining", "p95_m_per_s"), "m/d", 86400.0),
    ("strongest downward bed flux", ("bed", "channel", "losing", "peak_m_per_s"), "m/d", 86400.0),
    ("5th percentile of the downward bed flux", ("bed", "channel", "losing", "p05_m_per_s"), "m/d", 86400.0),
    ("deepest penetration of stream water", ("bed", "channel", "penetration", "depth_m"), "m", 1.0),
)


def _find(summary: dict, keys: tuple[str, ...]) -> float | None:
    node = summary
    for k in keys:
        if not isinstance(node, dict) or node.get(k) is None:
            return None
        node = node[k]
    return float(node) if isinstance(node, (int, float)) and math.isfinite(node) else None


def three_grid_estimate(f1: float, f2: float, f3: float, ratio: float) -> dict:
    """Observed order, extrapolated value and the error estimate of ``f1`` from three answers on
    grids refined by ``ratio`` each time (see the module notes)."""
    scale = max(abs(f1), abs(f2), abs(f3))
    e21, e32 = f2 - f1, f3 - f2
    largest = max(abs(e21), abs(e32), abs(f3 - f1)) / scale if scale > 0 else 0.0
    out = {"values": [f1, f2, f3], "largest_change": largest}
    if largest <= ROUND_OFF:
        return {**out, "order": None, "extrapolated": f3, "error_estimate": largest, "converged": True,
                "pattern": "unchanged"}
    if e21 * e32 <= 0.0 or abs(e32) >= abs(e21):
        pattern = "oscillating" if e21 * e32 < 0.0 else "not shrinking"
        return {**out, "order": None, "extrapolated": None, "error_estimate": None, "converged": False,
                "pattern": pattern}
    p = math.log(abs(e21) / abs(e32)) / math.log(ratio)
    extrapolated = f3 + e32 / (ratio**p - 1.0)
    error = SAFETY * abs(f1 - extrapolated) / max(abs(extrapolated), 1e-300)
    return {**out, "order": p, "extrapolated": extrapolated, "error_estimate": error,
            "converged": bool(error <= TOLERANCE), "pattern": "monotone"}


def refinement_check(summaries: list[dict], ratio: float, steps: list[float] | None) -> dict:
    """Compare three run summaries (:func:`bedflux.outputs.summary.run_summary`) of one scenario,
    each on the grid and step of the one before refined by ``ratio``; ``steps`` are their time
    steps (s) in a transient run (None: steady).

    Returns
    -------
    dict
        ``ratio``, ``cells`` and ``step_s`` of the three runs, ``tolerance``, ``answers`` (per
        answer: :func:`three_grid_estimate`) and ``converged`` (all of them).
    """
    answers = {}
    for name, keys, _unit, _scale in _ANSWERS:
        values = [_find(s, keys) for s in summaries]
        if any(v is None for v in values):
            continue
        answers[name] = three_grid_estimate(*values, ratio)
    return {"ratio": ratio, "cells": [s.get("cells") for s in summaries], "step_s": steps,
            "tolerance": TOLERANCE, "answers": answers,
            "converged": all(v["converged"] for v in answers.values())}


def refinement_text(check: dict) -> list[str]:
    """The check as summary lines."""
    if "failed" in check:
        return [f"refinement check: {check['failed']}"]
    units = {name: (unit, scale) for name, _keys, unit, scale in _ANSWERS}
    how = f"grid spacing{' and step' if check['step_s'] else ''} divided by {check['ratio']:.3g} twice"
    cells = " -> ".join(str(c) for c in check["cells"])
    lines = [f"refinement check ({how}; {cells} cells):"]
    for name, a in check["answers"].items():
        unit, scale = units[name]
        values = " -> ".join(f"{v * scale:.4g}" for v in a["values"])
        if a["pattern"] == "unchanged":
            verdict = "unchanged: converged"
        elif a["pattern"] == "monotone":
            verdict = (f"order {a['order']:.2g}, converged value about {a['extrapolated'] * scale:.4g}, the run's "
                       f"answer within about {100 * a['error_estimate']:.2g} %"
                       + ("" if a["converged"] else ": NOT converged, refine the grid or the step"))
        else:
            verdict = (f"changes {a['pattern']} (up to {100 * a['largest_change']:.2g} %): NOT converged, refine "
                       "the grid or the step")
        lines.append(f"  {name}: {values} {unit}; {verdict}")
    if not check["answers"]:
        lines.append("  no answers to compare")
    elif check["converged"]:
        lines.append(f"  every answer converged to within {100 * check['tolerance']:g} %")
    return lines
