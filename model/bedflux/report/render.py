"""The report as one self-contained HTML page, from the Jinja template ``templates/report.html``.

Figures are embedded as base64 ``data:`` URIs, the stylesheet is inline, and no script or
external file is referenced: the page can be mailed, archived and printed as it is. This module
turns the collected outputs into plain values (key tables, tables, figures, notes, reproduced
files, each a *block*); the template lays them out and escapes every value (autoescaping).
"""
from __future__ import annotations

import base64
import math
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Iterable

import pandas as pd

from bedflux.version import __version__
from bedflux.report import findings
from bedflux.outputs.summary import closure_phrase
from bedflux.outputs.files import sha256
from bedflux.report.collect import MAX_REPRODUCED_BYTES, TEXT_SUFFIXES, Output, Project, read_table
from bedflux.report.style import STYLESHEET

#: One piece of a section for the template: a dict with ``kind`` (keys, table, figure, note,
#: heading, file) and that kind's values.
Block = dict[str, Any]

MIME = {".png": "image/png", ".gif": "image/gif", ".jpg": "image/jpeg", ".jpeg": "image/jpeg",
        ".svg": "image/svg+xml"}
MAX_ROWS = 40

CAPTIONS = {
    ("run", "section.png"): "Heads (contours) and flow paths over the zones; the bed-flux profile beneath, "
                            "gaining stretches shaded purple, losing orange. Transient runs: the last output time.",
    ("run", "bed_flux_map.png"): "Bed flux over time and x (purple upward, gaining; orange downward, losing; "
                                 "white zero), under the stage hydrograph.",
    ("run", "exchange.png"): "Net exchange per metre of channel through the run, with the stage (dashed).",
    ("run", "animation.gif"): "Animation through the run: heads in the section, the bed-flux profile and the "
                              "stage hydrograph with the time of the frame.",
    ("field", "transect_profiles.png"): "Seepage-meter fluxes across the channel, one line per transect, "
                                        "with 95 % bars; crosses mark robust outliers.",
    ("field", "bed_flux_map.png"): "Map of the bed flux interpolated between the meters.",
    ("field", "gradient_vs_flux.png"): "Vertical gradient at the piezometers against the flux of the "
                                       "meter beside each.",
    ("fit", "observed_vs_simulated.png"): "Observed against simulated values, with two-sigma bars; the line "
                                          "is one to one.",
    ("fit", "residuals.png"): "Weighted residuals against x and time; the grey band is plus or minus two.",
    ("fit", "parameter_intervals.png"): "Best values and 95 % intervals, relative to the best value.",
    ("plan", "plan_map.png"): "Where the next instruments would go, in ranked order.",
    ("plan", "detectability.png"): "How well a reversal could be detected by each candidate instrument.",
    ("ensemble", "ensemble_fan.png"): "Stage (median and 5-95 %) above the net exchange of the ensemble's members: "
                                      "median, 25-75 % and 5-95 % bands, and the deterministic run (dashed).",
    ("ensemble", "ensemble_losing.png"): "Share of the members whose bed loses water at each x, at some time "
                                         "and at the end of the run.",
    ("ensemble", "ensemble_histograms.png"): "How the members' answers are spread.",
}

CAUTIONS = [
    "Work in and beside streams can injure or drown people. Flows can rise within minutes after rain "
    "upstream or a release from a dam; cold water numbs hands and judgement; soft beds, undercut banks "
    "and snagged debris can trap a leg. Go out with a partner, check forecasts and gauges before entering "
    "the water, keep out of flows you cannot stand in comfortably, wear the protective equipment your "
    "organisation requires, and stop when conditions change.",
    "Installing and sampling piezometers and seepage meters disturbs the bed; mind buried services, "
    "contaminated sediment and the rules for working in protected waters.",
    "This report is a screening and interpretation aid. The model is a vertical section with chosen "
    "zones and boundaries, and its numbers are only as good as that picture and the data behind it. "
    "Any decision about water supply, contamination, permits or structures must follow the local codes "
    "and regulations and be made or reviewed by a licensed professional.",
]


def data_uri(path: Path) -> str:
    """A file as a base64 ``data:`` URI."""
    mime = MIME.get(path.suffix.lower(), "application/octet-stream")
    return f"data:{mime};base64," + base64.b64encode(path.read_bytes()).decode("ascii")


def figure(path: Path, kind: str, alt: str, note: str = "", per_metre_of: str = "channel") -> Block:
    """An embedded figure with its caption (``note`` first, e.g. that the run was interrupted)."""
    cap = CAPTIONS.get((kind, path.name), "").replace("per metre of channel", f"per metre of {per_metre_of}")
    return {"kind": "figure", "src": data_uri(path), "alt": alt, "name": path.name,
            "caption": f"{note} {cap}".strip()}


def remark(text: str) -> Block:
    """A note in small print."""
    return {"kind": "note", "text": text}


def cell(v: Any) -> str:
    """A table cell value: numbers to 4 significant figures, blanks for NaN."""
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int,)) and not isinstance(v, bool):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return ""
        if v.is_integer() and abs(v) < 1e6:
            return str(int(v))
        return findings.number(v, 4)
    return str(v)


def table(df: pd.DataFrame, caption: str = "", max_rows: int = MAX_ROWS, source: str = "") -> list[Block]:
    """A table of a frame (none, or a note, when it is empty); long tables are thinned evenly to
    ``max_rows`` rows."""
    if df is None or df.empty:
        return [remark(f"{caption}: no rows.")] if caption else []
    n = len(df)
    thinned = ""
    if n > max_rows:
        step = math.ceil(n / max_rows)
        df = df.iloc[::step]
        thinned = f" Every {step}th of {n} rows shown" + (f"; the full table is {source}." if source else ".")
    classes = ["num" if pd.api.types.is_numeric_dtype(df[c]) else "text" for c in df.columns]
    rows = [[(cell(v), c) for v, c in zip(rec, classes)] for rec in df.itertuples(index=False)]
    return [{"kind": "table", "caption": caption + thinned, "columns": list(zip(map(str, df.columns), classes)),
             "rows": rows}]


def keys_table(rows: Iterable[tuple[str, Any]], caption: str = "") -> Block:
    """A two-column table of labels and formatted values."""
    return {"kind": "keys", "caption": caption, "rows": [(str(k), str(v)) for k, v in rows]}


def reproduce(path: Path, label: str) -> Block:
    """A text input file reproduced in full (or named with its hash when large or binary)."""
    size = path.stat().st_size
    if path.suffix.lower() in TEXT_SUFFIXES and size <= MAX_REPRODUCED_BYTES:
        try:
            return {"kind": "file", "label": label, "text": path.read_text(encoding="utf-8")}
        except UnicodeDecodeError:
            pass
    return {"kind": "file", "label": label, "text": None, "size": size, "sha256": sha256(path)}


def inputs(o: Output, heading: str) -> list[Block]:
    """The input files of an output under a heading (nothing when it has none)."""
    if not o.inputs:
        return []
    return [{"kind": "heading", "text": heading}] + [reproduce(p, p.relative_to(o.folder).as_posix())
                                                     for p in o.inputs]


def section(anchor: str, heading: str, blocks: list[Block], meta: str = "") -> dict:
    """A section of the page."""
    return {"id": anchor, "heading": heading, "meta": meta, "blocks": blocks}


# --------------------------------------------------------------------------- sections

def _findings(found: list[findings.Finding]) -> list[tuple[str, str, list[findings.Finding]]]:
    """The findings by topic, in the order of :data:`findings.TOPICS`; topics without any left out."""
    by_topic = [(topic, heading, [f for f in found if f.topic == topic]) for topic, heading in findings.TOPICS.items()]
    return [t for t in by_topic if t[2]]


def _run_section(o: Output, unit: str) -> dict:
    s = o.data["summary"]
    day = findings.DAY
    of = s.get("per_metre_of", "channel")
    lo = s.get("bed_flux_min_m_per_s", s.get("max_losing_flux_m_per_s"))
    hi = s.get("bed_flux_max_m_per_s", s.get("max_gaining_flux_m_per_s"))
    rows = [("run", s.get("run", "")), ("cells, solver", f"{s.get('cells', '')}, {s.get('solver', '')}"),
            ("net exchange (+ = gaining)", findings.signed_per_metre(s["exchange_m2_per_s"], of)),
            ("submerged bed", findings.length(s.get("submerged_length_m"))),
            ("gaining length", findings.length(s.get("gaining_length_m"))),
            ("losing length", findings.length(s.get("losing_length_m"))),
            ("bed flux range (+ = upward)", f"{findings.flux(lo, unit)} to {findings.flux(hi, unit)}" if findings.finite(lo)
             else "no bed under water"),
            ("water budget closure", closure_phrase(s.get("budget_closure"), s.get("budget_closure_note", "")))]
    stop = findings.interruption(s)
    if stop:
        rows.insert(0, ("PARTIAL RESULT", stop))
    if "exchange_min_m2_per_s" in s:
        rows.insert(3, ("net exchange over the run", f"{findings.signed_per_metre(s['exchange_min_m2_per_s'])} to "
                                                     f"{findings.signed_per_metre(s['exchange_max_m2_per_s'], of)}"))
        rows.insert(1, ("end of run", findings.hours(s.get("end_time_s"))))
    ev = s.get("events") or {}
    if ev:
        rev = ev.get("reversals") or []
        rows += [("net exchange reversals", "; ".join(
                     f"{findings.hours(a)} to {'end' if b is None else findings.hours(b)}" for a, b in rev) or "none"),
                 ("reversed for", findings.hours(ev.get("reversed_duration"))),
                 ("bank storage taken in", f"{findings.number(ev.get('bank_storage_volume'))} m³ per metre of {of}"),
                 ("returned by the end", f"{findings.number(ev.get('returned_volume'))} m³ per metre of {of} "
                                         f"({findings.percent(ev.get('returned_fraction'))})"),
                 ("deepest stream water below the bed", findings.length(ev.get("max_penetration_depth")))]
    for w in s.get("warnings") or []:
        rows.append(("WARNING", str(w)))
    blocks = [keys_table(rows, f"Key numbers (SI files; shown in m³/d per metre and {unit})")]
    inflow = s.get("inflow_m2_per_s") or {}
    outflow = s.get("outflow_m2_per_s") or {}
    terms = [t for t in inflow if abs(inflow.get(t, 0.0)) > 0 or abs(outflow.get(t, 0.0)) > 0]
    if terms:
        bud = pd.DataFrame({"term": terms, "inflow (m³/d per m)": [inflow[t] * day for t in terms],
                            "outflow (m³/d per m)": [outflow.get(t, 0.0) * day for t in terms]})
        blocks += table(bud, "Water budget" + (" at the last output time" if ev else ""))
    blocks += _extremes_table(s.get("bed"), unit)
    partial = f"PARTIAL RESULT, {stop}." if stop else ""
    blocks += [figure(fig, "run", f"{fig.stem} of {s.get('title', o.label)}", partial, of) for fig in o.figures]
    if "movie" in o.data:
        blocks.append(remark(f"A video of the same animation is beside the outputs: {Path(o.data['movie']).name}."))
    if "events.csv" in o.tables:
        blocks += _events_table(read_table(o.tables["events.csv"]), unit, f"{o.label}/events.csv")
    blocks += inputs(o, "Scenario files")
    return section(o.anchor, f"Model run: {s.get('title', o.label)}", blocks, f"folder {o.label}")


def _events_table(events: pd.DataFrame, unit: str, source: str) -> list[Block]:
    """The exchange events by column, in hours and the display unit."""
    if events.empty:
        return []
    shown = events.copy()
    fac = findings.flux_factor(unit)
    for c in ("submerged_duration", "first_reversal_start", "last_reversal_end", "reversed_duration",
              "penetration_time"):
        if c in shown:
            shown[c] = shown[c] / findings.HOUR
    for c in ("initial_flux", "peak_losing_flux"):
        if c in shown:
            shown[c] = shown[c] * fac
    shown = shown.rename(columns={
        "x": "x (m)", "submerged_duration": "submerged (h)", "initial_flux": f"flux at t=0 ({unit})",
        "first_reversal_start": "first reversal (h)", "last_reversal_end": "last reversal end (h)",
        "reversed_duration": "reversed (h)", "peak_losing_flux": f"peak losing flux ({unit})",
        "volume_into_bed": "into bed (m³/m²)", "volume_returned": "returned (m³/m²)",
        "penetration_depth": "depth reached (m)", "penetration_time": "deepest at (h)"})
    return table(shown, "Exchange events by column", source=source)


def _extremes_table(bed: dict | None, unit: str) -> list[Block]:
    """Where the bed flux is strongest, per part of the bed, beside the robust percentile."""
    rows = []
    words = {"channel": "channel bed", "floodplain": "floodplain"}
    for name, part in (bed or {}).items():
        if not isinstance(part, dict):
            continue
        for key, label, robust, rlabel in (("gaining", "strongest upward flux", "p95_m_per_s", "95th percentile"),
                                          ("losing", "strongest downward flux", "p05_m_per_s", "5th percentile")):
            e = part.get(key)
            rows.append({"part of the bed": words.get(name, name), "extreme": label,
                         "value": findings.flux(e.get("peak_m_per_s"), unit) if isinstance(e, dict)
                         else f"none (no {key} reach)",
                         "x (m)": e.get("x_m") if isinstance(e, dict) else float("nan"),
                         "t (h)": e["time_s"] / findings.HOUR if isinstance(e, dict) and findings.finite(e.get("time_s"))
                         else float("nan"),
                         "robust figure": f"{rlabel} {findings.flux(e.get(robust), unit)}" if isinstance(e, dict) else ""})
        pen = part.get("penetration")
        if isinstance(pen, dict):
            rows.append({"part of the bed": words.get(name, name), "extreme": "deepest stream water below the bed",
                         "value": findings.length(pen.get("depth_m")), "x (m)": pen.get("x_m"),
                         "t (h)": pen["time_s"] / findings.HOUR if findings.finite(pen.get("time_s")) else float("nan"),
                         "robust figure": f"95th percentile {findings.length(pen.get('p95_m'))}"})
    if not rows:
        return []
    return table(pd.DataFrame(rows), "Where the bed flux is strongest: each extreme with its place, beside a "
                                     "percentile over the wetted part of the bed (length- and time-weighted)")


def _field_section(o: Output, unit: str) -> dict:
    fs = o.data["field_summary"]
    rows = [("sheets folder", fs.get("sheets_folder", "")), ("sign convention", fs.get("sign_convention", ""))]
    for k in ("meters", "piezometers", "slug_tests", "permeameter_tests", "rejected_rows"):
        if k in fs:
            rows.append((k.replace("_", " "), str(fs[k])))
    obs = fs.get("observations") or {}
    if obs:
        rows.append(("observations for calibration", ", ".join(f"{v} {k}" for k, v in obs.items())))
    flags = fs.get("flags") or {}
    if flags:
        rows.append(("flags", ", ".join(f"{v} {k}" for k, v in flags.items())))
    eff = fs.get("default_efficiency") or {}
    if eff:
        rows.append(("seepage meter efficiency used", f"{eff.get('value')} ({eff.get('source', '')})"))
    reach = fs.get("reach") or {}
    if reach:
        rows += [("reach mean bed flux", findings.flux(reach.get("mean_flux [m/s]"), unit)),
                 ("per metre of channel", findings.signed_per_metre(reach.get("per_metre_of_channel [m^2/s]", float("nan")))),
                 ("area and length", f"{findings.number(reach.get('area [m^2]'))} m², {findings.length(reach.get('length [m]'))}"),
                 ("method", reach.get("method", ""))]
    blocks = [keys_table(rows, "Summary of the field sheets")]
    blocks += [figure(fig, "field", f"{fig.stem} of the field campaign") for fig in o.figures]
    for name, path in o.tables.items():
        blocks += table(read_table(path), name, source=f"{o.label}/{name}")
    blocks += inputs(o, "Input files")
    return section(o.anchor, "Field measurements", blocks, f"folder {o.label}")


def _fit_section(o: Output) -> dict:
    r = o.data["fit_results"]
    paths = list(r.get("parameters") or r["best"])
    css = r.get("composite_scaled_sensitivity") or {}
    rows = []
    for p in paths:
        lo, hi = r["ci95"].get(p, [float("nan"), float("nan")])
        rows.append({"parameter": p, "meaning": findings.describe_parameter(p),
                     "best": findings.parameter_value(p, r["best"][p]),
                     "95 % low": findings.parameter_value(p, lo), "95 % high": findings.parameter_value(p, hi),
                     "scaled sensitivity": css.get(p, float("nan")),
                     "verdict": (r.get("verdicts") or {}).get(p, "")})
    st = r.get("statistics") or {}
    blocks = table(pd.DataFrame(rows), "Calibrated parameters (SI in the files)")
    if st:
        blocks.append(keys_table([(k.replace("_", " "), cell(v) if isinstance(v, float) else str(v))
                                  for k, v in st.items()], "Fit statistics"))
    corr = r.get("correlation")
    if isinstance(corr, list) and corr and len(corr) == len(paths):
        blocks += table(pd.DataFrame(corr, columns=paths).assign(parameter=paths)[["parameter"] + paths],
                        "Parameter correlation")
    blocks += [figure(fig, "fit", f"{fig.stem} of the calibration") for fig in o.figures]
    if "residuals.csv" in o.tables:
        res = read_table(o.tables["residuals.csv"])
        if "weighted_residual" in res:
            worst = res.reindex(res["weighted_residual"].abs().sort_values(ascending=False).index).head(10)
            blocks += table(worst, f"The 10 largest weighted residuals of {len(res)}",
                            source=f"{o.label}/residuals.csv")
    blocks += inputs(o, "Fit file and calibrated scenario")
    return section(o.anchor, "Calibration", blocks, f"folder {o.label}")


def _plan_section(o: Output) -> dict:
    s = o.data.get("plan_summary") or {}
    t = o.data.get("plan_table")
    rows = []
    for k, v in s.items():
        if k == "picks" or isinstance(v, list):
            continue
        if isinstance(v, dict):
            v = "; ".join(f"{a}: {b}" for a, b in v.items())
        elif k.endswith("_sd") and findings.finite(v):
            v = f"{cell(float(v))} ({findings.spread(str(s.get('target', '')), v)})"
        elif isinstance(v, float):
            v = cell(v)
        rows.append((k.replace("_", " "), str(v)))
    blocks = [keys_table(rows, "Plan summary")] if rows else []
    if t is not None:
        blocks += table(t, "Ranked picks", source=f"{o.label}/plan_table.csv")
    elif isinstance(s.get("picks"), list) and s["picks"]:
        blocks += table(pd.DataFrame([p for p in s["picks"] if isinstance(p, dict)]), "Ranked picks")
    blocks += [figure(fig, "plan", f"{fig.stem} of the plan") for fig in o.figures]
    blocks += inputs(o, "Plan files")
    return section(o.anchor, "Plan for the next measurements", blocks, f"folder {o.label}")


def _ensemble_section(o: Output) -> dict:
    s = o.data["ensemble_summary"]
    det = s.get("deterministic") or {}
    rows = [{"answer": k.replace("_", " "), "median": r.get("median"), "5 %": r.get("p5"), "95 %": r.get("p95"),
             "members": r.get("members"), "deterministic run": det.get(k)}
            for k, r in (s.get("answers") or {}).items() if isinstance(r, dict)]
    keys = [(k.replace("_", " "), cell(v) if isinstance(v, float) else str(v)) for k, v in s.items()
            if k in ("members", "members_ran", "members_failed", "seed", "probability_of_reversal",
                     "probability_still_reversed_at_end", "probability_of_losing_reach")]
    blocks = [keys_table(keys, "Ensemble")]
    blocks += table(pd.DataFrame(rows), "Answers over the members that ran (SI: s, m³/m, m, m²/s) beside "
                                        "the deterministic run")
    blocks += [figure(fig, "ensemble", f"{fig.stem} of the ensemble") for fig in o.figures]
    if "ensemble_failed.csv" in o.tables:
        failed = read_table(o.tables["ensemble_failed.csv"])
        if not failed.empty:
            blocks += table(failed, "Failed members", source=f"{o.label}/ensemble_failed.csv")
    blocks += inputs(o, "Ensemble file and scenario")
    return section(o.anchor, "Ensemble", blocks, f"folder {o.label}")


def _provenance_section(project: Project, created: str) -> dict:
    blocks = [keys_table([("report written", created), ("by bedflux", __version__),
                          ("from the folder", str(project.folder))])]
    runs = []
    for o in project.of_kind("run"):
        prov = o.data.get("provenance") or {}
        for name, digest in (prov.get("inputs") or {}).items():
            copy = o.folder / "inputs" / name
            status = ("copy matches" if copy.is_file() and sha256(copy) == digest
                      else "copy differs" if copy.is_file() else "no copy")
            runs.append({"run": o.label, "bedflux version": prov.get("bedflux_version", ""), "input": name,
                         "SHA-256 at run time": digest, "inputs/ copy": status})
    if runs:
        blocks += table(pd.DataFrame(runs), "Inputs of each run, as recorded by bedflux run", max_rows=500)
    files = [{"file": p.relative_to(project.folder).as_posix(), "bytes": p.stat().st_size, "SHA-256": sha256(p)}
             for p in project.files_read]
    blocks += table(pd.DataFrame(files), "Every file this report read", max_rows=1000)
    if project.skipped:
        left = [{"file": p.relative_to(project.folder).as_posix(), "why it was not read": why}
                for p, why in project.skipped]
        blocks += table(pd.DataFrame(left), "Files found but not read", max_rows=1000)
    return section("provenance", "Provenance", blocks)


def created_stamp() -> str:
    """The report date (UTC); ``SOURCE_DATE_EPOCH`` fixes it for reproducible builds."""
    import os

    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    when = datetime.fromtimestamp(int(epoch), timezone.utc) if epoch and epoch.isdigit() \
        else datetime.now(timezone.utc)
    return when.strftime("%Y-%m-%d %H:%M UTC")


def render(project: Project, unit: str = "m/d") -> str:
    """The whole report as an HTML string.

    Parameters
    ----------
    project
        What :func:`bedflux.report.collect.collect` found.
    unit
        Display unit of bed fluxes (``m/d``, ``mm/d``, ``cm/d``, ``cm/s``, ``m/s``).
    """
    import jinja2
    from markupsafe import Markup

    findings.flux_factor(unit)
    created = created_stamp()
    found = findings.findings(project, unit)
    sections, toc = [], [("findings", "Findings"), ("cautions", "Cautions")]
    for o in project.outputs:
        if o.kind == "run":
            sections.append(_run_section(o, unit))
            toc.append((o.anchor, f"Model run: {o.data['summary'].get('title') or o.label}"))
        elif o.kind == "field":
            sections.append(_field_section(o, unit))
            toc.append((o.anchor, f"Field measurements ({o.label})"))
        elif o.kind == "fit":
            sections.append(_fit_section(o))
            toc.append((o.anchor, f"Calibration ({o.label})"))
        elif o.kind == "plan":
            sections.append(_plan_section(o))
            toc.append((o.anchor, f"Plan ({o.label})"))
        elif o.kind == "ensemble":
            sections.append(_ensemble_section(o))
            toc.append((o.anchor, f"Ensemble ({o.label})"))
    sections.append(_provenance_section(project, created))
    toc.append(("provenance", "Provenance"))
    kinds = sorted({o.kind for o in project.outputs}, key=["run", "field", "fit", "plan", "ensemble"].index)
    env = jinja2.Environment(loader=jinja2.PackageLoader("bedflux.report", "templates"),
                             autoescape=True, undefined=jinja2.StrictUndefined, keep_trailing_newline=True)
    return env.get_template("report.html").render(
        title=f"Stream-aquifer exchange: {project.folder.name}", folder=project.folder.name,
        kinds=", ".join(kinds), created=created, version=__version__, stylesheet=Markup(STYLESHEET), toc=toc,
        findings=_findings(found), cautions=CAUTIONS, sections=sections)
