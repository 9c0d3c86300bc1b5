"""A 1D column for the ensemble tests: a bed over sand, stage on top, a head on the base."""
from __future__ import annotations

import bedflux

BED_THICKNESS = 0.5   # m
SAND_THICKNESS = 2.5  # m
SAND_KV = 1e-4        # m/s
STAGE = 0.4           # m
BOTTOM_HEAD = 2.0     # m
DZ = 0.1              # m: every zone boundary on a cell face


def column(bed_kv: float = 1e-6, dz: float = DZ) -> bedflux.Scenario:
    """One column 1 m wide: ``bed`` (0.5 m, kv) over ``sand`` (2.5 m, 1e-4 m/s)."""
    d = {"grid": {"x": [0.0, 1.0], "bottom": -(BED_THICKNESS + SAND_THICKNESS), "dx": 1.0, "dz": dz},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": 3e-4, "kv": SAND_KV},
                  {"name": "bed", "kh": 3 * bed_kv, "kv": bed_kv, "depth": BED_THICKNESS}],
         "stream": {"stage": STAGE},
         "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": BOTTOM_HEAD}}}
    return bedflux.Scenario.from_dict(d)


def series_flux(bed_kv, sand_kv: float = SAND_KV):
    """Darcy through layers in series: q_up = (h_bottom - stage) / (b_bed / K_bed + b_sand / K_sand)
    (Freeze & Cherry 1979, Groundwater, ch. 2, layered formations)."""
    return (BOTTOM_HEAD - STAGE) / (BED_THICKNESS / bed_kv + SAND_THICKNESS / sand_kv)
