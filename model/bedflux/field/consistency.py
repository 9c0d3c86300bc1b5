"""Seepage meters against piezometers where they share a site (Darcy's law, Lee & Cherry 1978).

The Darcy flux K * vhg (positive upward) is set against the metered flux: do the signs agree,
what is their ratio, and which vertical conductivity would make them agree (flux / gradient)?
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from bedflux.field.flags import Flags


def darcy_flux(conductivity: ArrayLike, gradient: ArrayLike) -> np.ndarray:
    """Vertical Darcy flux, positive upward: q = K * vhg (m/s)."""
    return np.asarray(conductivity, dtype=float) * np.asarray(gradient, dtype=float)


def implied_conductivity(flux: ArrayLike, gradient: ArrayLike) -> np.ndarray:
    """Effective vertical conductivity implied by a metered flux and a gradient: q / vhg (m/s).

    NaN where the gradient is zero or the two have opposite signs (no positive K fits).
    """
    q = np.asarray(flux, dtype=float)
    j = np.asarray(gradient, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        k = q / j
    return np.where((j != 0) & (k > 0), k, np.nan)


def compare_methods(meters: pd.DataFrame, piezometers: pd.DataFrame, slug: pd.DataFrame,
                    permeameter: pd.DataFrame, flags: Flags) -> pd.DataFrame:
    """One row per piezometer at a site that also has a seepage meter.

    K at the site is the mean permeameter Kv there, else the mean Hvorslev K of its slug tests
    (a horizontal-leaning value), else unknown (only the implied K is given).
    """
    columns = ["site", "depth [m]", "meter_flux [m/s]", "vhg [1]", "implied_kv [m/s]", "k [m/s]",
               "k_source", "darcy_flux [m/s]", "sign_agrees", "flux_ratio [1]"]
    if meters.empty or piezometers.empty:
        return pd.DataFrame(columns=columns)
    kv = permeameter.groupby("site")["kv [m/s]"].mean() if not permeameter.empty else pd.Series(dtype=float)
    kh = slug.groupby("site")["k_hvorslev [m/s]"].mean() if not slug.empty else pd.Series(dtype=float)
    both = piezometers.merge(meters[["site", "mean [m/s]"]], on="site")
    rows = []
    for _, r in both.iterrows():
        site = r["site"]
        if site in kv.index:
            k, source = float(kv[site]), "permeameter"
        elif site in kh.index:
            k, source = float(kh[site]), "slug_hvorslev"
        else:
            k, source = np.nan, ""
        q = float(r["mean [m/s]"])
        j = float(r["vhg [1]"])
        darcy = float(darcy_flux(k, j))
        agrees = bool(np.sign(q) == np.sign(j))
        if not agrees:
            flags.add("consistency", f"{site} at {r['depth [m]']:g} m", "sign_disagrees",
                      f"metered flux {q:.3g} m/s and gradient {j:.3g} have opposite signs")
        rows.append({
            "site": site,
            "depth [m]": r["depth [m]"],
            "meter_flux [m/s]": q,
            "vhg [1]": j,
            "implied_kv [m/s]": float(implied_conductivity(q, j)),
            "k [m/s]": k,
            "k_source": source,
            "darcy_flux [m/s]": darcy,
            "sign_agrees": agrees,
            "flux_ratio [1]": q / darcy if np.isfinite(darcy) and darcy != 0 else np.nan,
        })
    return pd.DataFrame(rows, columns=columns)
