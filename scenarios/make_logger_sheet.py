"""Write scenarios/field/logger.csv and scenarios/reach_stream_temperature.csv: invented data.

A logger in the water records the stream temperature every 30 minutes over the 8 days before
the flood (the surface wave of scenarios/make_temperature_sheet.py before day 8: a daily wave of
2.0-3.2 K about a mean that drifts by +/- 1.2 degC over 11 days). Six loggers stand in the bed
beside the piezometers A4, B4 and C4, 10 and 25 cm below the bed, and are read every 2 hours
from day 1 to day 4 (the first day after installation is left out: the bed settles). Their
readings are a run of scenarios/reach_heat.toml at the values below (the "truth" a fit of them
should recover), plus an error uniform within the loggers' stated accuracy of +/- 0.1 degC,
rounded to the 0.01 degC they display.

Run from the repository root: ``python scenarios/make_logger_sheet.py``. Invented data for
demonstration only.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters

DAY = 86400.0
HERE = Path(__file__).resolve().parent
#: The values the logger readings were made with (SI): bed and aquifer kv 1.5 and 2.7 m/d, the
#: upwelling head 99.09 m, the bed's bulk thermal conductivity 1.5 W/(m K).
TRUTH = {"bed.kv": 1.5 / DAY, "aquifer.kv": 2.7 / DAY, "sides.bottom.head": 99.09,
         "bed.thermal_conductivity": 1.5}
LOGGERS = {"A4": 19.53, "B4": 60.10, "C4": 99.39}
DEPTHS = (0.10, 0.25)
TIMES = np.arange(1.0 * DAY, 4.0 * DAY + 1.0, 7200.0)
ACCURACY = 0.1


def stream_temperature(t: np.ndarray) -> np.ndarray:
    """The stream's temperature (degC) at ``t`` (s) before the flood."""
    mean = 15.5 + 1.2 * np.sin(2 * np.pi * t / (11 * DAY))
    amplitude = 2.6 + 0.6 * np.sin(2 * np.pi * t / (6.5 * DAY))
    return mean + amplitude * np.cos(2 * np.pi / DAY * (t - 15 * 3600.0))


def write_stream_series() -> Path:
    t = np.arange(0.0, 8 * DAY + 1.0, 1800.0)
    lines = ["time [h],temperature [degC]"] + [f"{a / 3600.0:g},{b:.2f}" for a, b in zip(t, stream_temperature(t))]
    out = HERE / "reach_stream_temperature.csv"
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return out


def true_readings() -> pd.DataFrame:
    """The loggers' temperatures in the scenario at :data:`TRUTH`, without error."""
    s = bedflux.load(HERE / "reach_heat.toml").with_values(TRUTH)
    rows = [(site, x, d, t) for site, x in LOGGERS.items() for d in DEPTHS for t in TIMES]
    table = pd.DataFrame(rows, columns=["site", "x", "depth", "time"])
    obs = table.assign(kind="temperature", value=0.0, sigma=ACCURACY / np.sqrt(3.0))
    forward = Forward(s, obs[["kind", "x", "depth", "time", "value", "sigma"]],
                      free_parameters(s, [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}]))
    return table.assign(temperature=forward.predict(forward.start()))


def main(seed: int = 21) -> None:
    print(f"wrote {write_stream_series()}")
    table = true_readings()
    noise = np.random.default_rng(seed).uniform(-ACCURACY, ACCURACY, len(table))
    lines = ["site,time [h],depth [cm],temperature [degC],accuracy [degC]"] + [
        f"{r.site},{r.time / 3600.0:g},{r.depth * 100:g},{r.temperature + e:.2f},{ACCURACY:g}"
        for r, e in zip(table.itertuples(), noise)]
    out = HERE / "field" / "logger.csv"
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print(f"wrote {out} ({len(lines) - 1} readings)")


if __name__ == "__main__":
    main()
