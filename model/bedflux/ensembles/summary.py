"""The ensemble's answers as ranges: medians, 5-95 % ranges and probabilities.

Over the members that ran (failed members are counted, not used): for each answer its median
and 5 % and 95 % quantiles; the probability that the net exchange reverses at all (transient
runs) or that the reach loses (steady runs); per column the probability that the bed loses
water at some time; and the quantiles of the reversal duration and bank storage. Beside them,
when given, the same answers of the deterministic run (the scenario as written).
"""
from __future__ import annotations

import math

import numpy as np
import xarray as xr

from bedflux.ensembles.members import EVENTS

HOUR = 3600.0
#: quantiles of the distributions of reversal duration and bank storage
QUANTILES = (0.05, 0.25, 0.5, 0.75, 0.95)
#: answers -> (factor, display unit, words)
ANSWERS = {
    "net_exchange_start": (1.0, "m2/s", "net exchange at the start"),
    "net_exchange_min": (1.0, "m2/s", "lowest net exchange"),
    "net_exchange": (1.0, "m2/s", "net exchange"),
    "reversal_start": (1 / HOUR, "h", "start of the reversal"),
    "reversal_end": (1 / HOUR, "h", "end of the reversal"),
    "reversal_duration": (1 / HOUR, "h", "duration of the reversal"),
    "bank_storage": (1.0, "m3/m", "bank storage"),
    "returned_volume": (1.0, "m3/m", "returned by the end"),
    "penetration_depth": (1.0, "m", "deepest penetration of stream water"),
}


def answers(ds: xr.Dataset) -> dict[str, np.ndarray]:
    """Each answer per member (NaN for failed members or where the answer does not exist)."""
    ex = np.asarray(ds["exchange"].values, dtype=float)
    if "time" not in ds.dims:
        return {"net_exchange": ex}
    out = {"net_exchange_start": ex[:, 0], "net_exchange_min": np.min(ex, axis=1)}
    out.update({k: np.asarray(ds[k].values, dtype=float) for k in EVENTS if k in ANSWERS})
    return out


def _range(v: np.ndarray) -> dict:
    v = v[np.isfinite(v)]
    if v.size == 0:
        return {"members": 0, "median": None, "p5": None, "p95": None}
    p5, med, p95 = np.quantile(v, [0.05, 0.5, 0.95])
    return {"members": int(v.size), "median": float(med), "p5": float(p5), "p95": float(p95)}


def losing_probability(ds: xr.Dataset, at_end: bool = False) -> np.ndarray:
    """Per column: the share of the members that ran whose bed loses water there at some time
    (``at_end``: at the last output time) (NaN where the column is not under the stream). Works
    on a lazily read Dataset."""
    q = ds["bed_flux"].where(ds["failed"] == 0)
    if "time" in ds.dims and at_end:
        q = q.isel(time=-1)
    loses, wet = q < 0, q.notnull()
    if "time" in q.dims:
        loses, wet = loses.any("time"), wet.any("time")
    n_wet = wet.sum("member").values
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n_wet > 0, loses.sum("member").values / np.maximum(n_wet, 1), np.nan)


def summarise(ds: xr.Dataset, deterministic: dict[str, float] | None = None) -> dict:
    """The summary (JSON-ready, SI) of an ensemble Dataset."""
    failed = np.asarray(ds["failed"].values, dtype=bool)
    ran = ~failed
    ans = {k: v[ran] for k, v in answers(ds).items()}
    out: dict = {
        "members": int(ds.sizes["member"]),
        "members_ran": int(ran.sum()),
        "members_failed": int(failed.sum()),
        "seed": int(ds.attrs.get("seed", 0)),
        "transient": "time" in ds.dims,
        "answers": {k: _range(v) for k, v in ans.items()},
        "parameters": {str(p): _range(np.asarray(ds["parameter_value"].sel(parameter=p).values, dtype=float))
                       for p in ds["parameter"].values},
    }
    if out["transient"]:
        rev = np.isfinite(ans["reversal_start"])
        out["probability_of_reversal"] = float(rev.mean()) if rev.size else None
        out["probability_still_reversed_at_end"] = (
            float((rev & ~np.isfinite(ans["reversal_end"])).mean()) if rev.size else None)
        for k in ("reversal_duration", "bank_storage"):
            v = ans[k][np.isfinite(ans[k])]
            out[f"{k}_quantiles"] = ({f"p{round(100 * q)}": float(np.quantile(v, q)) for q in QUANTILES}
                                     if v.size else {})
    else:
        out["probability_of_losing_reach"] = float((ans["net_exchange"] < 0).mean()) if ran.any() else None
    out["losing_along_x"] = {"x": [float(v) for v in ds["x"].values],
                             "probability": _listed(losing_probability(ds))}
    if out["transient"]:
        out["losing_along_x"]["probability_at_end"] = _listed(losing_probability(ds, at_end=True))
    out["failed"] = [{"member": int(m), "reason": str(r),
                      "values": {str(p): float(v) for p, v in zip(ds["parameter"].values, vals)}}
                     for m, r, vals in zip(ds["member"].values[failed], ds["failure"].values[failed],
                                           np.asarray(ds["parameter_value"].values)[failed])]
    if deterministic is not None:
        out["deterministic"] = {k: (None if not np.isfinite(v) else float(v)) for k, v in deterministic.items()}
    return out


def _listed(p: np.ndarray) -> list:
    return [None if not np.isfinite(v) else float(v) for v in p]


def deterministic_answers(result, transient: bool) -> dict[str, float]:
    """The answers of the deterministic run (a :class:`~bedflux.ensembles.members.MemberResult`)."""
    if result.failure:
        return {}
    ex = np.asarray(result.exchange, dtype=float)
    if not transient:
        return {"net_exchange": float(ex)}
    return {"net_exchange_start": float(ex[0]), "net_exchange_min": float(ex.min()),
            **{k: v for k, v in result.events.items() if k in ANSWERS}}


def _show(key: str, v: float | None) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "none"
    factor, unit, _ = ANSWERS[key]
    return f"{v * factor:.3g} {unit}"


def summary_text(s: dict) -> str:
    """Plain lines of the summary."""
    lines = [f"ensemble: {s['members']} members (seed {s['seed']}), {s['members_ran']} ran, "
             f"{s['members_failed']} failed"]
    det = s.get("deterministic") or {}
    if s["transient"] and s.get("probability_of_reversal") is not None:
        lines.append(f"probability that the net exchange reverses: {100 * s['probability_of_reversal']:.0f} % "
                     f"(still reversed at the end of the run: {100 * s['probability_still_reversed_at_end']:.0f} %)")
    if not s["transient"] and s.get("probability_of_losing_reach") is not None:
        lines.append(f"probability that the reach loses water: {100 * s['probability_of_losing_reach']:.0f} %")
    lines.append("answers: median (5-95 %) over the members that have them" + ("; deterministic run" if det else ""))
    for key, r in s["answers"].items():
        words = ANSWERS[key][2]
        if r["members"] == 0:
            lines.append(f"  {words}: no member has one" + (f"; deterministic {_show(key, det.get(key))}" if det else ""))
            continue
        text = (f"  {words}: {_show(key, r['median'])} ({_show(key, r['p5'])} to {_show(key, r['p95'])}; "
                f"{r['members']} members)")
        if det:
            text += f"; deterministic {_show(key, det.get(key))}"
        lines.append(text)
    lines += _losing_lines(s["losing_along_x"], s["transient"])
    for item in s["failed"][:5]:
        values = ", ".join(f"{p} = {v:.4g}" for p, v in item["values"].items())
        lines.append(f"  failed member {item['member']}{' (' + values + ')' if values else ''}: {item['reason']}")
    if len(s["failed"]) > 5:
        lines.append(f"  ... and {len(s['failed']) - 5} more failed members (ensemble_summary.json lists them)")
    return "\n".join(lines) + "\n"


def _losing_lines(losing: dict, transient: bool) -> list[str]:
    """Where the bed is likely to lose: the columns with a probability of at least one half."""
    lines = []
    x = np.asarray(losing["x"])
    for key, words in (("probability", "at some time" if transient else ""), ("probability_at_end", "at the end")):
        if key not in losing:
            continue
        p = np.array([np.nan if v is None else v for v in losing[key]], dtype=float)
        if not np.isfinite(p).any():
            continue
        likely = np.nan_to_num(p) >= 0.5
        where = (f"more likely than not at {int(likely.sum())} columns between x = {x[likely].min():.3g} and "
                 f"{x[likely].max():.3g} m") if likely.any() else "more likely than not nowhere"
        lines.append(f"the bed loses water{' ' + words if words else ''}: {where}; highest probability "
                     f"{100 * np.nanmax(p):.0f} %")
    return lines
