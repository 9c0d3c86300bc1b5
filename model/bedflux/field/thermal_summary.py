"""What the fluxes from temperature say, for ``field_summary.json``: per sensor pair the flux
through time, its reversals, and the comparison with the nearest seepage meter."""
from __future__ import annotations

import numpy as np
import pandas as pd

from bedflux.field.sites import Sites
from bedflux.field.temperature import SHEET_METHOD, TemperatureReduction
from bedflux.scenario.units import SECONDS_PER_DAY

#: A window's direction is resolved when its flux is this many standard deviations from zero
#: (about 95 %, normal).
RESOLVED = 2.0


def directions(flux: np.ndarray, sd: np.ndarray) -> np.ndarray:
    """+1 (upward, gaining), -1 (downward, losing) or 0 (not resolved) per window."""
    with np.errstate(invalid="ignore"):
        return np.where(flux > RESOLVED * sd, 1, np.where(flux < -RESOLVED * sd, -1, 0))


def _crossing(time: np.ndarray, flux: np.ndarray, i: int) -> float:
    """Time at which the flux crosses zero between windows ``i - 1`` and ``i`` (linear)."""
    q0, q1 = flux[i - 1], flux[i]
    return float(time[i - 1] + (time[i] - time[i - 1]) * q0 / (q0 - q1))


def reversals(time: np.ndarray, flux: np.ndarray, sd: np.ndarray) -> list[dict]:
    """Spans in which the flux runs opposite to the record's first resolved direction.

    A reversal is confirmed by windows whose direction is resolved (:func:`directions`); it
    starts where the estimated flux crosses zero before its first such window and ends where it
    crosses zero again after its last one (linear between window centres; ``None`` when the
    record ends before the flux turns back).
    """
    d = directions(flux, sd)
    known = np.flatnonzero(d != 0)
    if known.size == 0:
        return []
    base = d[known[0]]
    sign = np.sign(flux)
    spans = []
    i = known[0]
    while True:
        opposite = known[(known > i) & (d[known] == -base)]
        if opposite.size == 0:
            return spans
        first = int(opposite[0])
        back = known[(known > first) & (d[known] == base)]
        last = int(opposite[opposite < back[0]][-1]) if back.size else int(opposite[-1])
        j = first
        while j > 0 and sign[j - 1] == -base:
            j -= 1
        m = last + 1
        while m < flux.size and sign[m] != base:
            m += 1
        start = _crossing(time, flux, j) if j > 0 else float(time[0])
        end = _crossing(time, flux, m) if m < flux.size else None
        spans.append(_span(time, flux, base, first, last, start, end))
        if not back.size:
            return spans
        i = int(back[0])


def _span(time, flux, base, first, last, start, end) -> dict:
    word = {1: "gaining", -1: "losing"}
    seg = flux[first:last + 1]
    extreme = float(np.nanmin(seg) if base > 0 else np.nanmax(seg))
    return {"from": word[int(base)], "to": word[int(-base)], "start [s]": float(start),
            "end [s]": None if end is None else float(end),
            "first_window [s]": float(time[first]), "last_window [s]": float(time[last]),
            "extreme_flux [m/s]": extreme}


def _nearest_meter(meters: pd.DataFrame, x: float, y: float, time: np.ndarray, flux: np.ndarray,
                   sd: np.ndarray) -> dict | None:
    """The meter nearest the rod and the window nearest the meter's time."""
    if meters is None or meters.empty:
        return None
    dist = np.hypot(meters["x [m]"].to_numpy(float) - x, meters["y [m]"].to_numpy(float) - y)
    m = meters.iloc[int(np.argmin(dist))]
    ok = np.isfinite(flux)
    if not ok.any():
        return None
    j = np.flatnonzero(ok)[np.argmin(np.abs(time[ok] - float(m["time [s]"])))]
    q_m, s_m = float(m["mean [m/s]"]), float(m["sigma [m/s]"])
    q_t, s_t = float(flux[j]), float(sd[j])
    z = (q_t - q_m) / np.hypot(s_m, s_t)
    return {"meter": str(m["site"]), "distance [m]": float(dist.min()), "meter_time [s]": float(m["time [s]"]),
            "meter_flux [m/s]": q_m, "meter_sigma [m/s]": s_m, "window [s]": float(time[j]),
            "thermal_flux [m/s]": q_t, "thermal_sd [m/s]": s_t, "difference_in_sd": float(z),
            "agree": bool(abs(z) <= RESOLVED), "same_sign": bool(np.sign(q_t) == np.sign(q_m))}


def thermal_summary(temp: TemperatureReduction, meters: pd.DataFrame | None = None,
                    sites: Sites | None = None) -> dict:
    """The temperature part of ``field_summary.json``.

    Parameters
    ----------
    temp
        The reduced temperature sheet.
    meters
        The seepage meters table (for the comparison), or None.
    sites
        The sites (for the rods' y); without them the comparison uses x alone.
    """
    pairs = []
    for (site, upper, lower), g in temp.fluxes.groupby(["site", "shallow_depth [m]", "deep_depth [m]"], sort=True):
        t = g["time [s]"].to_numpy(float)
        q = g["flux [m/s]"].to_numpy(float)
        s = g["flux_sd [m/s]"].to_numpy(float)
        read = np.isfinite(q)
        d = directions(q, s)
        y = float(sites.y[sites.index(site)]) if sites is not None else 0.0
        x = float(g["x [m]"].iloc[0])
        pairs.append({
            "site": site, "shallow_depth [m]": float(upper), "deep_depth [m]": float(lower),
            "x [m]": x, "windows": int(len(g)), "read": int(read.sum()),
            "flagged": {w: int(sum(w in f.split() for f in g["flags"])) for w in
                        sorted({w for f in g["flags"] for w in f.split()})},
            "median_flux [m/s]": float(np.nanmedian(q)) if read.any() else None,
            "min_flux [m/s]": float(np.nanmin(q)) if read.any() else None,
            "max_flux [m/s]": float(np.nanmax(q)) if read.any() else None,
            "gaining_windows": int((d > 0).sum()), "losing_windows": int((d < 0).sum()),
            "unresolved_windows": int((read & (d == 0)).sum()),
            "reversals": reversals(t[read], q[read], s[read]),
            "meter": _nearest_meter(meters, x, y, t, q, s),
        })
    n_rev = [p for p in pairs if p["reversals"]]
    headline = f"{len(pairs)} sensor pair(s) at {temp.fluxes['site'].nunique() if len(pairs) else 0} site(s)"
    if n_rev:
        first = min(r["start [s]"] for p in n_rev for r in p["reversals"])
        headline += (f"; the flux reverses at {', '.join(sorted({p['site'] for p in n_rev}))}, first from day "
                     f"{first / SECONDS_PER_DAY:.1f}")
    elif pairs:
        headline += "; no reversal"
    return {
        "method": f"{SHEET_METHOD} ratio of the daily wave (Hatch et al. 2006; Keery et al. 2007); phase and "
                  "combined (McCallum et al. 2012) beside it in thermal_flux.csv",
        "time_origin": temp.origin,
        "resolved_at_sd": RESOLVED,
        "properties": temp.properties,
        "pairs": pairs,
        "headline": headline,
    }
