"""The report as one self-contained HTML page.

Figures are embedded as base64 ``data:`` URIs, the stylesheet is inline, and no script or
external file is referenced: the page can be mailed, archived and printed as it is.
"""
from __future__ import annotations

import base64
import html
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


def esc(text: Any) -> str:
    """HTML-escape any value as text."""
    return html.escape(str(text), quote=True)


def data_uri(path: Path) -> str:
    """A file as a base64 ``data:`` URI."""
    mime = MIME.get(path.suffix.lower(), "application/octet-stream")
    return f"data:{mime};base64," + base64.b64encode(path.read_bytes()).decode("ascii")


def figure(path: Path, kind: str, alt: str, note: str = "", per_metre_of: str = "channel") -> str:
    """An embedded figure with its caption (``note`` first, e.g. that the run was interrupted)."""
    cap = CAPTIONS.get((kind, path.name), "").replace("per metre of channel", f"per metre of {per_metre_of}")
    cap = f"{note} {cap}".strip()
    return (f'<figure><img src="{data_uri(path)}" alt="{esc(alt)}">'
            f"<figcaption><b>{esc(path.name)}</b>. {esc(cap)}</figcaption></figure>")


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


def table(df: pd.DataFrame, caption: str = "", max_rows: int = MAX_ROWS, source: str = "") -> str:
    """An HTML table of a frame; long tables are thinned evenly to ``max_rows`` rows."""
    if df is None or df.empty:
        return f'<p class="note">{esc(caption)}: no rows.</p>' if caption else ""
    n = len(df)
    note = ""
    if n > max_rows:
        step = math.ceil(n / max_rows)
        df = df.iloc[::step]
        note = f" Every {step}th of {n} rows shown" + (f"; the full table is {source}." if source else ".")
    text_cols = [c for c in df.columns if not pd.api.types.is_numeric_dtype(df[c])]
    head = "".join(f'<th class="{"text" if c in text_cols else "num"}" scope="col">{esc(c)}</th>'
                   for c in df.columns)
    rows = []
    for rec in df.itertuples(index=False):
        tds = "".join(f'<td class="{"text" if c in text_cols else "num"}">{esc(cell(v))}</td>'
                      for c, v in zip(df.columns, rec))
        rows.append(f"<tr>{tds}</tr>")
    cap = f"<caption>{esc(caption + note)}</caption>" if caption or note else ""
    return (f'<div class="wide"><table>{cap}<thead><tr>{head}</tr></thead><tbody>{"".join(rows)}'
            "</tbody></table></div>")


def keys_table(rows: Iterable[tuple[str, str]], caption: str = "") -> str:
    """A two-column table of labels and formatted values."""
    body = "".join(f'<tr><td class="text">{esc(k)}</td><td>{esc(v)}</td></tr>' for k, v in rows)
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    return f'<table class="keys">{cap}<tbody>{body}</tbody></table>'


def reproduce(path: Path, label: str) -> str:
    """A text input file reproduced in full (or named with its hash when large or binary)."""
    size = path.stat().st_size
    if path.suffix.lower() in TEXT_SUFFIXES and size <= MAX_REPRODUCED_BYTES:
        try:
            text = path.read_text(encoding="utf-8")
            return f"<h4>{esc(label)}</h4><pre><code>{esc(text)}</code></pre>"
        except UnicodeDecodeError:
            pass
    return (f'<h4>{esc(label)}</h4><p class="note">{size} bytes, not reproduced; SHA-256 '
            f"<code>{sha256(path)}</code>.</p>")


# --------------------------------------------------------------------------- sections

def _opening(o: Output, title: str) -> list[str]:
    """The start of an output's section: its title and folder."""
    return [f'<section id="{o.anchor}"><h2>{esc(title)}</h2>', f'<p class="meta">folder {esc(o.label)}</p>']


def _closing(o: Output, heading: str) -> list[str]:
    """The end of an output's section: its input files reproduced under ``heading``."""
    parts = []
    if o.inputs:
        parts.append(f"<h3>{esc(heading)}</h3>")
        parts += [reproduce(p, p.relative_to(o.folder).as_posix()) for p in o.inputs]
    return parts + ["</section>"]


def _findings_section(found: list[findings.Finding]) -> str:
    parts = ['<section class="findings" id="findings"><h2>Findings</h2>']
    for topic, heading in findings.TOPICS.items():
        items = [f for f in found if f.topic == topic]
        if not items:
            continue
        parts.append(f'<h3 id="finding-{topic}">{esc(heading)}</h3>')
        for f in items:
            src = f"from {f.source}" + (f": {f.title}" if f.title else "")
            parts.append(f'<p class="source">{esc(src)}</p>'
                         f'<p class="finding" data-topic="{topic}" data-source="{esc(f.source)}">'
                         f"{esc(f.text)}</p>")
    parts.append("</section>")
    return "".join(parts)


def _cautions_section() -> str:
    items = "".join(f"<li>{esc(c)}</li>" for c in CAUTIONS)
    return f'<section class="cautions" id="cautions"><h2>Cautions</h2><ul>{items}</ul></section>'


def _run_section(o: Output, unit: str) -> str:
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
            ("bed flux range (+ = upward)", f"{findings.flux(lo, unit)} to {findings.flux(hi, unit)}"
             if findings.finite(lo) else "no bed under water"),
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
    parts = _opening(o, f"Model run: {s.get('title', o.label)}") + [
        keys_table(rows, f"Key numbers (SI files; shown in m³/d per metre and {unit})")]
    inflow = s.get("inflow_m2_per_s") or {}
    outflow = s.get("outflow_m2_per_s") or {}
    terms = [t for t in inflow if abs(inflow.get(t, 0.0)) > 0 or abs(outflow.get(t, 0.0)) > 0]
    if terms:
        bud = pd.DataFrame({"term": terms, "inflow (m³/d per m)": [inflow[t] * day for t in terms],
                            "outflow (m³/d per m)": [outflow.get(t, 0.0) * day for t in terms]})
        parts.append(table(bud, "Water budget" + (" at the last output time" if ev else "")))
    extremes = _extremes_table(s.get("bed"), unit)
    if extremes:
        parts.append(extremes)
    note = f"PARTIAL RESULT, {stop}." if stop else ""
    for fig in o.figures:
        parts.append(figure(fig, "run", f"{fig.stem} of {s.get('title', o.label)}", note, of))
    if "movie" in o.data:
        parts.append(f'<p class="note">A video of the same animation is beside the outputs: '
                     f"{esc(Path(o.data['movie']).name)}.</p>")
    if "events.csv" in o.tables:
        event_table = read_table(o.tables["events.csv"])
        if not event_table.empty:
            shown = event_table.copy()
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
            parts.append(table(shown, "Exchange events by column", source=f"{o.label}/events.csv"))
    parts += _closing(o, "Scenario files")
    return "".join(parts)


def _extremes_table(bed: dict | None, unit: str) -> str:
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
                         "t (h)": e["time_s"] / findings.HOUR
                         if isinstance(e, dict) and findings.finite(e.get("time_s")) else float("nan"),
                         "robust figure": f"{rlabel} {findings.flux(e.get(robust), unit)}"
                         if isinstance(e, dict) else ""})
        pen = part.get("penetration")
        if isinstance(pen, dict):
            rows.append({"part of the bed": words.get(name, name), "extreme": "deepest stream water below the bed",
                         "value": findings.length(pen.get("depth_m")), "x (m)": pen.get("x_m"),
                         "t (h)": pen["time_s"] / findings.HOUR if findings.finite(pen.get("time_s")) else float("nan"),
                         "robust figure": f"95th percentile {findings.length(pen.get('p95_m'))}"})
    if not rows:
        return ""
    return table(pd.DataFrame(rows), "Where the bed flux is strongest: each extreme with its place, beside a "
                                     "percentile over the wetted part of the bed (length- and time-weighted)")


def _field_section(o: Output, unit: str) -> str:
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
                 ("per metre of channel",
                  findings.signed_per_metre(reach.get("per_metre_of_channel [m^2/s]", float("nan")))),
                 ("area and length",
                  f"{findings.number(reach.get('area [m^2]'))} m², {findings.length(reach.get('length [m]'))}"),
                 ("method", reach.get("method", ""))]
    parts = _opening(o, "Field measurements") + [keys_table(rows, "Summary of the field sheets")]
    for fig in o.figures:
        parts.append(figure(fig, "field", f"{fig.stem} of the field campaign"))
    for name, path in o.tables.items():
        parts.append(table(read_table(path), name, source=f"{o.label}/{name}"))
    parts += _closing(o, "Input files")
    return "".join(parts)


def _fit_section(o: Output) -> str:
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
    parts = _opening(o, "Calibration") + [table(pd.DataFrame(rows), "Calibrated parameters (SI in the files)")]
    if st:
        parts.append(keys_table([(k.replace("_", " "), cell(v) if isinstance(v, float) else str(v))
                                 for k, v in st.items()], "Fit statistics"))
    corr = r.get("correlation")
    if isinstance(corr, list) and corr and len(corr) == len(paths):
        parts.append(table(pd.DataFrame(corr, columns=paths).assign(parameter=paths)
                           [["parameter"] + paths], "Parameter correlation"))
    for fig in o.figures:
        parts.append(figure(fig, "fit", f"{fig.stem} of the calibration"))
    if "residuals.csv" in o.tables:
        res = read_table(o.tables["residuals.csv"])
        if "weighted_residual" in res:
            worst = res.reindex(res["weighted_residual"].abs().sort_values(ascending=False).index).head(10)
            parts.append(table(worst, f"The 10 largest weighted residuals of {len(res)}",
                               source=f"{o.label}/residuals.csv"))
    parts += _closing(o, "Fit file and calibrated scenario")
    return "".join(parts)


def _plan_section(o: Output) -> str:
    s = o.data.get("plan_summary") or {}
    t = o.data.get("plan_table")
    parts = _opening(o, "Plan for the next measurements")
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
    if rows:
        parts.append(keys_table(rows, "Plan summary"))
    if t is not None:
        parts.append(table(t, "Ranked picks", source=f"{o.label}/plan_table.csv"))
    elif isinstance(s.get("picks"), list) and s["picks"]:
        parts.append(table(pd.DataFrame([p for p in s["picks"] if isinstance(p, dict)]), "Ranked picks"))
    for fig in o.figures:
        parts.append(figure(fig, "plan", f"{fig.stem} of the plan"))
    parts += _closing(o, "Plan files")
    return "".join(parts)


def _provenance_section(project: Project, created: str) -> str:
    parts = ['<section id="provenance"><h2>Provenance</h2>',
             keys_table([("report written", created), ("by bedflux", __version__),
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
        parts.append(table(pd.DataFrame(runs), "Inputs of each run, as recorded by bedflux run", max_rows=500))
    files = [{"file": p.relative_to(project.folder).as_posix(), "bytes": p.stat().st_size, "SHA-256": sha256(p)}
             for p in project.files_read]
    parts.append(table(pd.DataFrame(files), "Every file this report read", max_rows=1000))
    if project.skipped:
        left = [{"file": p.relative_to(project.folder).as_posix(), "why it was not read": why}
                for p, why in project.skipped]
        parts.append(table(pd.DataFrame(left), "Files found but not read", max_rows=1000))
    parts.append("</section>")
    return "".join(parts)


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
    findings.flux_factor(unit)
    created = created_stamp()
    found = findings.findings(project, unit)
    sections = [_findings_section(found), _cautions_section()]
    toc = [("findings", "Findings"), ("cautions", "Cautions")]
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
    sections.append(_provenance_section(project, created))
    toc.append(("provenance", "Provenance"))
    kinds = sorted({o.kind for o in project.outputs}, key=["run", "field", "fit", "plan"].index)
    nav = "".join(f'<li><a href="#{a}">{esc(t)}</a></li>' for a, t in toc)
    title = f"Stream-aquifer exchange: {project.folder.name}"
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f'<meta name="generator" content="bedflux {esc(__version__)}">'
        '<link rel="icon" href="data:,">'
        f"<title>{esc(title)}</title><style>{STYLESHEET}</style></head><body>"
        f'<header class="top"><h1>{esc(title)}</h1>'
        f'<p class="meta">Report of the bedflux outputs in the folder {esc(project.folder.name)} '
        f"({esc(', '.join(kinds))}); written {esc(created)} by bedflux {esc(__version__)}. "
        "Signs: upward flux, groundwater into the stream, is positive (gaining).</p></header>"
        f'<nav class="contents" aria-label="contents"><b>Contents</b><ol>{nav}</ol></nav>'
        + "".join(sections)
        + '<footer><p>Written by bedflux. Figures use colour maps that read in greyscale; fluxes '
          "purple upward (gaining), orange downward (losing).</p></footer></body></html>\n")
