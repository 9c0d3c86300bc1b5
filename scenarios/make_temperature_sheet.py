"""Write scenarios/field/temperature.csv: invented sensor-rod records for the demo campaign.

Three rods (at sites A2, B2 and C2, beside meters and piezometers) carry sensors 5, 15 and 25 cm
below the bed, read hourly for 21 days from the campaign origin. The temperatures follow the
periodic solution for a daily wave over a bed with vertical flow (Stallman 1965), taken at each
hour with that hour's flux (quasi-steady: the flux changes over days, the wave over one), added
to the steady profile between the stream's mean and 10 degC groundwater 1 m down (Bredehoeft &
Papadopulos 1965; the equation is linear, so the two add), plus sensor noise rounded to the
logger's 0.01 degC display.

The flux at each rod starts at the seepage meters' flux there (upward, gaining). A flood from day
8 raises the stage: the flux turns downward at A2 and B2 for a few days and only weakens at C2,
where the upwelling is strongest, then recovers. The bed's true properties (1.8 W/(m K),
2.7e6 J/(m^3 K)) differ a little from the sand defaults the field reduction assumes, as they
would in the field.

Run from the repository root: ``python scenarios/make_temperature_sheet.py``. Invented data
for demonstration only.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from bedflux.field.periodic import wavenumbers
from bedflux.field.thermal_properties import WATER_HEAT_CAPACITY

DAY = 86400.0
CONDUCTIVITY = 1.8
HEAT_CAPACITY = 2.7e6
DEPTHS = (0.05, 0.15, 0.25)
#: Base upward flux (m/s) and the flux at the height of the flood (negative: losing).
RODS = {"A2": (1.4e-6, -4.5e-6), "B2": (1.65e-6, -3.5e-6), "C2": (2.2e-6, 0.5e-6)}
GROUNDWATER, PROFILE_DEPTH = 10.0, 1.0
FLOOD_START, FLOOD_RISE, FLOOD_FALL = 8.0 * DAY, 1.0 * DAY, 4.0 * DAY


def flood_shape(t: np.ndarray) -> np.ndarray:
    """0 before the flood, rising to 1 over a day, falling back exponentially."""
    s = np.clip((t - FLOOD_START) / FLOOD_RISE, 0.0, 1.0)
    s = 0.5 - 0.5 * np.cos(np.pi * s)
    fall = np.exp(-np.clip(t - FLOOD_START - FLOOD_RISE, 0.0, None) / FLOOD_FALL)
    return np.where(t <= FLOOD_START + FLOOD_RISE, s, fall)


def steady_profile(z: float, top: np.ndarray, flux_up: np.ndarray) -> np.ndarray:
    """Bredehoeft & Papadopulos (1965): T(z) = T0 + (TL - T0)(exp(Pe z/L) - 1)/(exp(Pe) - 1), with
    Pe = rho_w c_w q L / lambda and q positive downward."""
    pe = -flux_up * WATER_HEAT_CAPACITY * PROFILE_DEPTH / CONDUCTIVITY
    return top + (GROUNDWATER - top) * np.expm1(pe * z / PROFILE_DEPTH) / np.expm1(pe)


def records(seed: int = 15) -> list[str]:
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, 21 * DAY, 3600.0)
    w = 2.0 * np.pi / DAY
    flood = flood_shape(t)
    # surface wave: weather changes the amplitude from day to day; turbid flood water damps it
    daily = 2.6 + 0.6 * np.sin(2 * np.pi * t / (6.5 * DAY))
    amplitude = daily * (1.0 - 0.55 * flood)
    mean = 15.5 + 1.2 * np.sin(2 * np.pi * t / (11 * DAY)) - 2.0 * flood
    k = CONDUCTIVITY / HEAT_CAPACITY
    rows = []
    for site, (base, peak) in RODS.items():
        flux_up = base + (peak - base) * flood
        v = -flux_up * WATER_HEAT_CAPACITY / HEAT_CAPACITY
        a, b = wavenumbers(v, k, DAY)
        for z in DEPTHS:
            wave = amplitude * np.exp(-a * z) * np.cos(w * (t - 15 * 3600.0) - b * z)
            temp = steady_profile(z, mean, flux_up) + wave
            temp = np.round(temp + rng.normal(0.0, 0.02, t.size), 2)
            rows += [f"{site},{ti / 3600.0:g},{z * 100:g},{Ti:.2f},0.1" for ti, Ti in zip(t, temp)]
    return rows


def main() -> None:
    out = Path(__file__).resolve().parent / "field" / "temperature.csv"
    lines = ["site,time [h],depth [cm],temperature [degC],accuracy [degC]"] + records()
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print(f"wrote {out} ({len(lines) - 1} readings)")


if __name__ == "__main__":
    main()
