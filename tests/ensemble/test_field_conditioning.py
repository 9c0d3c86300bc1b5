"""Random fields conditioned on a field folder: the slug tests (kh) and permeameter tests (kv) of
the sheets become conditioning points at their site's x and their depth below the bed, and every
member passes through them.

Sources: the slug tests' K is Hvorslev's (1951) K = r^2 ln(Le / R) / (2 Le T0) (simplified shape
term for Le / R > 8), the permeameter's Kv = (pi D / 11 + Lv) / T0 (Chen 2000, after Hvorslev 1951),
both for a recovery H = H0 exp(-t / T0) written in the sheets here; conditioning honours the data
exactly (simple kriging is an exact interpolator: Journel & Huijbregts 1978, Mining Geostatistics,
from memory).
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import tomli_w

from bedflux.cli import main
from bedflux.section.grid import build_grid
from bedflux.ensembles.fields import parse_field

from test_random_fields import SD_LOG10, ALONG, ACROSS, section

MEDIAN = 1e-5
# slug tests: casing and screen radius 2.5 cm, screen 30 cm (Le / R = 12 > 8: simplified shape term)
R, LE = 0.025, 0.30
# permeameter: pipe diameter 5 cm, sediment column 30 cm
D, LV = 0.05, 0.30


def hvorslev(t0: float) -> float:
    return R**2 * math.log(LE / R) / (2 * LE * t0)


def chen(t0: float) -> float:
    return (math.pi * D / 11 + LV) / t0


def slug_rows(test: str, site: str, t0: float, extra: str) -> list[str]:
    """A recovery H = 30 cm exp(-t / T0) over 0.9 T0 (normalised head above 0.4)."""
    times = np.linspace(0.0, 0.9 * t0, 8)
    rows = [f"{test},{site},{t:.6f},{30 * math.exp(-t / t0):.9f},{R * 100},{R * 100},{LE * 100},{extra}"
            for t in times[:1]]
    rows += [f"{test},{site},{t:.6f},{30 * math.exp(-t / t0):.9f},,,,{extra}" for t in times[1:]]
    return rows


def write_folder(folder: Path, s1_depth: str = "17.5") -> dict:
    """Sites at cell centres of :func:`section` (dx 0.25 m, dz 0.05 m, ground at 0).

    S1 gives screen_depth 17.5 cm; S2 gives well_depth and water_depth: the screen midpoint at
    60 - 30 - 30 / 2 = 15 cm below the bed; S3 gives neither; P1 gives sample_depth 22.5 cm; P2 none.
    """
    folder.mkdir()
    (folder / "sites.csv").write_text("site,x [m],y [m],bed_elevation [m]\n"
                                      "A,0.375,0,0\nB,1.875,0,0\nC,2.625,0,0\n")
    header = ("test,site,time [s],displacement [cm],casing_radius [cm],screen_radius [cm],screen_length [cm],"
              "well_depth [cm],water_depth [cm],screen_depth [cm]")
    rows = (slug_rows("S1", "A", 150.0, f",,{s1_depth}") + slug_rows("S2", "B", 400.0, "60,30,")
            + slug_rows("S3", "C", 250.0, ",,"))
    (folder / "slug.csv").write_text("\n".join([header] + rows) + "\n")
    perm = ["test,site,time [s],head [cm],diameter [cm],sediment_length [cm],sample_depth [cm]"]
    for test, site, t0, depth in (("P1", "B", 2.0e4, "22.5"), ("P2", "C", 1.0e4, "")):
        perm += [f"{test},{site},{t:.1f},{50 * math.exp(-t / t0):.9f},{D * 100},{LV * 100},{depth}"
                 for t in (0.0, 0.3 * t0, 0.6 * t0)]
    (folder / "permeameter.csv").write_text("\n".join(perm) + "\n")
    return {"S1": (0.375, 0.175, hvorslev(150.0)), "S2": (1.875, 0.15, hvorslev(400.0)),
            "P1": (1.875, 0.225, chen(2.0e4))}


def field_on(prop: str, folder: Path):
    s = section()
    return s, parse_field({"zone": "bed", "property": prop, "sd_log10": SD_LOG10, "along": ALONG,
                           "across": ACROSS, "condition": str(folder)}, "random field 1", s.zone_names())


def test_slug_and_permeameter_values_condition_kh_and_kv(tmp_path):
    expected = write_folder(tmp_path / "field")
    with pytest.warns(UserWarning, match=r"slug\.csv: tests 'S3' \(lines 18-25\) give no depth"):
        s, kh = field_on("kh", tmp_path / "field")
    with pytest.warns(UserWarning, match=r"permeameter\.csv: tests 'P2' \(lines 5-7\) give no depth"):
        _, kv = field_on("kv", tmp_path / "field")
    # the points: site x, depth below the bed, and Hvorslev's / Chen's K of the written recovery
    for got, names in ((kh.condition, ("S1", "S2")), (kv.condition, ("P1",))):
        want = sorted(expected[n] for n in names)
        assert len(got) == len(want)
        for g, w in zip(got, want):
            assert g[:2] == pytest.approx(w[:2], abs=1e-12)
            assert g[2] == pytest.approx(w[2], rel=1e-6)
    # every member passes through the data: log10 K at the data points equals log10 k
    grid = build_grid(s)
    for rf in (kh, kv):
        x, depth, k = (np.array(c) for c in zip(*rf.condition))
        z = np.interp(x, grid.xc, grid.ground) - depth
        for seed in range(3):
            got = rf.standard_normal(x, z, seed, (x, z, (np.log10(k) - np.log10(MEDIAN)) / SD_LOG10))
            np.testing.assert_allclose(SD_LOG10 * got + np.log10(MEDIAN), np.log10(k), rtol=1e-6)
    # and on the grid: the cell at S1 (x 0.375 m = column 1, depth 0.175 m = row 3) carries S1's K
    m = kh.multipliers(grid, 5, MEDIAN)["bed.kh"]
    assert np.log10(MEDIAN * m[3, 1]) == pytest.approx(math.log10(expected["S1"][2]), rel=1e-6)


def write_ensemble(tmp_path: Path) -> Path:
    (tmp_path / "bed.toml").write_text(tomli_w.dumps(dict(section().raw)))
    path = tmp_path / "ens.toml"
    path.write_text(tomli_w.dumps({"scenario": "bed.toml", "members": 2, "random_field": [
        {"zone": "bed", "property": "kh", "sd_log10": SD_LOG10, "along": ALONG, "across": ACROSS,
         "condition": "field"}]}))
    return path


@pytest.mark.parametrize("s1_depth, words", [
    ("-20", ["slug.csv", "line 2", "screen_depth"]),
    ("2000", ["slug.csv", "line 2", "screen_depth"]),
])
def test_bad_depth_exits_2_naming_file_and_row(tmp_path, capsys, s1_depth, words):
    write_folder(tmp_path / "field", s1_depth)
    out = tmp_path / "out"
    assert main(["ensemble", str(write_ensemble(tmp_path)), "-o", str(out), "--workers", "0"]) == 2
    err = capsys.readouterr().err
    for w in words:
        assert w in err, (w, err)
    assert "Traceback" not in err
    assert not out.exists() or not any(out.iterdir())


def test_screen_above_the_bed_exits_2_naming_the_test_lines(tmp_path, capsys):
    folder = tmp_path / "field"
    write_folder(folder)
    text = (folder / "slug.csv").read_text().replace(",60,30,", ",40,30,")  # 40 - 30 - 15 < 0
    (folder / "slug.csv").write_text(text)
    assert main(["ensemble", str(write_ensemble(tmp_path)), "-o", str(tmp_path / "out"), "--workers", "0"]) == 2
    err = capsys.readouterr().err
    for w in ("slug.csv", "lines 10-17", "test 'S2'", "above the bed"):
        assert w in err, (w, err)
