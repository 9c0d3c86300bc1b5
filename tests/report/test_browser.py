"""The report of the worked example, rendered in a real headless browser.

The chain of issue 7 is run on the worked example into a temporary project folder: ``bedflux run``
on scenarios/flood_pulse.toml and scenarios/reach_long.toml, ``bedflux field`` on scenarios/field,
``bedflux fit`` on scenarios/reach_fit.toml, ``bedflux plan`` when that verb exists (the session
fixture ``worked_example`` of tests/conftest.py, shared with other tests), then ``bedflux report``. Debian's Chromium (``chromium`` and ``chromium-driver``) renders the page
through selenium. This test never skips: without a browser it fails and says what to install.

Set ``BEDFLUX_UPDATE_SCREENSHOT=1`` to also refresh docs/report_example.png from the screenshot.
"""
from __future__ import annotations

import base64
import io
import json
import os
import re
import shutil
from pathlib import Path

import pandas as pd
import pytest
from PIL import Image

from bedflux.cli import main
from bedflux.report import findings
from bedflux.report.collect import collect

ROOT = Path(__file__).resolve().parents[2]
INSTALL_HINT = ("install Debian's browser and its driver: apt-get install -y chromium chromium-driver "
                "(.ci/run does this), and the test extras: pip install '.[test]' (selenium)")


def _find(*names: str) -> str | None:
    for n in names:
        if n.startswith("/") and os.access(n, os.X_OK):
            return n
        found = shutil.which(n) if not n.startswith("/") else None
        if found:
            return found
    return None


@pytest.fixture(scope="module")
def project(worked_example) -> Path:
    """The worked example's outputs (shared with other tests: tests/conftest.py), and the report."""
    worked_example.assert_all_succeeded()
    root = worked_example.root
    if not (root / "pulse" / "animation.gif").exists():
        # until bedflux run writes the animation itself
        from bedflux.outputs.animation import animate
        from bedflux.outputs.files import read_result

        animate(read_result(root / "pulse" / "result.nc"), root / "pulse" / "animation")
    assert main(["report", str(root), "-q"]) == 0
    assert (root / "report.html").is_file()
    return root


@pytest.fixture(scope="module")
def browser():
    """A headless Chromium driven by selenium (fails, never skips, when either is missing)."""
    try:
        from selenium import webdriver
        from selenium.webdriver.chrome.service import Service
    except ImportError:
        pytest.fail(f"selenium is not installed; {INSTALL_HINT}")
    chromium = _find("/usr/bin/chromium", "chromium", "chromium-browser")
    driver_exe = _find("/usr/bin/chromedriver", "chromedriver")
    if chromium is None or driver_exe is None:
        missing = " and ".join(n for n, p in (("chromium", chromium), ("chromedriver", driver_exe)) if p is None)
        pytest.fail(f"the browser test needs {missing}; {INSTALL_HINT}")
    opts = webdriver.ChromeOptions()
    opts.binary_location = chromium
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--window-size=1100,1300", "--hide-scrollbars", "--force-device-scale-factor=1"):
        opts.add_argument(arg)
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    try:
        drv = webdriver.Chrome(service=Service(driver_exe), options=opts)
    except Exception as err:  # noqa: BLE001 - any start-up failure is a failed test with its reason
        pytest.fail(f"headless Chromium did not start ({chromium}, {driver_exe}): {err}")
    drv.set_page_load_timeout(60)
    yield drv
    drv.quit()


@pytest.fixture(scope="module")
def page(project, browser):
    """The report loaded, every image finished loading."""
    from selenium.webdriver.support.ui import WebDriverWait

    browser.get((project / "report.html").as_uri())
    WebDriverWait(browser, 30).until(lambda d: d.execute_script(
        "return document.readyState === 'complete' && "
        "Array.from(document.images).every(i => i.complete)"))
    return browser


def test_every_figure_loaded(project, page):
    imgs = page.execute_script(
        "return Array.from(document.images).map(i => ({w: i.naturalWidth, h: i.naturalHeight, "
        "src: i.src.slice(0, 22), alt: i.alt}))")
    expected = sum(len(o.figures) for o in collect(project).outputs)
    assert expected >= 11       # section x2, flux map, exchange, animation, 3 field, 3 fit
    assert len(imgs) == expected
    for im in imgs:
        assert im["w"] > 0 and im["h"] > 0, f"figure did not load: {im['alt']}"
        assert im["src"].startswith("data:image/")
    assert any(im["src"].startswith("data:image/gif") for im in imgs), "the animation is missing"


def test_page_is_not_blank(page, tmp_path_factory):
    png = page.get_screenshot_as_png()
    shot = Image.open(io.BytesIO(png)).convert("RGB")
    out = tmp_path_factory.mktemp("shots") / "report.png"
    shot.save(out)
    lo, hi = shot.convert("L").getextrema()
    assert hi - lo > 200, f"screenshot is nearly uniform ({out})"
    assert len(shot.getcolors(1 << 20) or []) > 50, f"screenshot has hardly any colours ({out})"
    body = page.find_element("tag name", "body").text
    assert len(body) > 3000
    assert page.title.startswith("Stream-aquifer exchange")
    headings = [h.text for h in page.find_elements("tag name", "h2")]
    for h in ("Findings", "Cautions", "Field measurements", "Calibration", "Provenance"):
        assert h in headings
    if os.environ.get("BEDFLUX_UPDATE_SCREENSHOT"):
        small = shot.crop((0, 0, shot.width, min(shot.height, 1125)))
        small = small.resize((small.width * 3 // 4, small.height * 3 // 4), Image.LANCZOS)
        small.quantize(colors=96, method=Image.Quantize.MEDIANCUT).save(ROOT / "docs" / "report_example.png",
                                                                         optimize=True)


def test_no_console_errors(page):
    severe = [e for e in page.get_log("browser") if e.get("level") == "SEVERE"]
    assert not severe, f"console errors: {severe}"


def test_findings_state_the_numbers_of_the_runs(project, page):
    text = page.find_element("id", "findings").text
    for run in ("pulse", "reach"):
        s = json.loads((project / run / "summary.json").read_text())
        ex = s["exchange_m2_per_s"]
        way = "gaining" if ex > 0 else "losing"
        # formatted independently of the report (3 significant figures, m3/d per metre)
        assert f"reach is {way}" in text
        assert f"{abs(ex) * 86400:.3g} m³/d per metre of {s['per_metre_of']}" in text, run
        for key in ("gaining_length_m", "losing_length_m", "submerged_length_m"):
            assert findings.length(s[key]) in text, (run, key)
        assert findings.flux(s["bed_flux_max_m_per_s"]) in text
        assert findings.flux(s["bed_flux_min_m_per_s"]) in text
    ev = json.loads((project / "pulse" / "summary.json").read_text())["events"]
    assert ev["reversals"], "the worked flood pulse should reverse the exchange"
    for start, end in ev["reversals"]:
        assert f"from {start / 3600:.1f} h to {end / 3600:.1f} h" in text
    assert f"({ev['reversed_duration'] / 3600:.1f} h in all)" in text
    assert f"Bank storage takes in {findings.number(ev['bank_storage_volume'])} m³ per metre of channel" in text
    assert f"{findings.number(ev['returned_volume'])} m³ ({100 * ev['returned_fraction']:.0f} %)" in text
    assert findings.length(ev["max_penetration_depth"]) + " below the bed" in text

    fit = json.loads((project / "fit" / "fit_results.json").read_text())
    kv = fit["best"]["bed.kv"]
    lo, hi = fit["ci95"]["bed.kv"]
    # three significant figures, trailing zeros kept (1.498 -> "1.50")
    assert f"bed.kv (vertical conductivity of zone 'bed') = {f'{kv * 86400:#.3g}'.rstrip('.')} m/d" in text
    assert f"95 % interval {findings.number(lo * 86400)} to {findings.number(hi * 86400)} m/d" in text
    assert fit["verdicts"]["bed.kv"] in text

    field = json.loads((project / "field" / "field_summary.json").read_text())
    assert findings.per_metre(field["reach"]["per_metre_of_channel [m^2/s]"]) in text

    if (project / "plan" / "plan_table.csv").exists():
        first = pd.read_csv(project / "plan" / "plan_table.csv").sort_values("rank").iloc[0]
        assert f"1) {findings.pick_text(first.to_dict())}" in text
    else:
        assert "Where to measure next" in text


def test_print_layout(page):
    page.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    try:
        shown = page.execute_script("return getComputedStyle(document.querySelector('nav.contents')).display")
        assert shown == "none"
    finally:
        page.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": ""})
    pdf = base64.b64decode(page.print_page())
    assert pdf.startswith(b"%PDF")
    pages = len(re.findall(rb"/Type\s*/Page(?!s)", pdf))
    assert pages >= 5, f"the printed report has {pages} pages"
