"""The findings of a report in plain language, from the numbers the commands wrote.

Every number in a finding is taken from an output file (``summary.json``, ``events.csv``,
``field_summary.json``, ``fit_results.json``, ``plan_table.csv``/``plan_summary.json``) and
formatted by the helpers of this module, so a test can format a value the same way and look
for it in the report. Signs follow the project's convention: upward (groundwater into the
stream, a gaining reach) is positive.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Iterable

import pandas as pd

from bedflux.scenario.units import SECONDS_PER_DAY as DAY
from bedflux.scenario.units import flux_factor
HOUR = 3600.0

#: Section of the findings each topic belongs to, in display order.
TOPICS = {
    "warnings": "What should not be believed as it stands",
    "exchange": "Is the reach gaining or losing?",
    "pulse": "Does the flood pulse reverse the exchange?",
    "hyporheic": "How long does stream water stay in the bed?",
    "field": "What the field measurements say",
    "temperature": "What the temperature records say",
    "conductivity": "How well is the bed conductivity known?",
    "next": "Where to measure next",
    "ranges": "How sure are these answers?",
}

_KIND_WORDS = {"seepage": "seepage meter", "vhg": "mini-piezometer (vertical gradient)",
               "head": "piezometer (head)", "piezometer": "mini-piezometer",
               "manometer": "mini-piezometer", "thermal_flux": "temperature-sensor pair (vertical flux)",
               "logger_pair": "temperature logger pair (vertical flux)"}
_PROPERTY_WORDS = {"kh": "horizontal conductivity", "kv": "vertical conductivity", "k": "conductivity",
                   "specific_storage": "specific storage", "specific_yield": "specific yield", "head": "head",
                   "thermal_conductivity": "thermal conductivity", "heat_capacity": "grain heat capacity",
                   "dispersivity": "thermal dispersivity"}


@dataclass
class Finding:
    """One finding: a topic (a key of :data:`TOPICS`), the folder it came from and its sentences."""

    topic: str
    source: str
    sentences: list[str] = field(default_factory=list)
    title: str = ""

    @property
    def text(self) -> str:
        """The sentences as one paragraph."""
        return " ".join(self.sentences)


# --------------------------------------------------------------------------- number formats

def finite(v: Any) -> bool:
    """True for a finite real number."""
    try:
        return v is not None and math.isfinite(float(v))
    except (TypeError, ValueError):
        return False


def number(v: Any, digits: int = 3) -> str:
    """A number to ``digits`` significant figures, in fixed notation between 0.001 and 1e6.

    ``None`` and NaN give ``n/a``.
    """
    if not finite(v):
        return "n/a"
    v = float(v)
    if v == 0.0:
        return "0"
    mag = math.floor(math.log10(abs(v)))
    if -3 <= mag < 6:
        decimals = max(digits - 1 - mag, 0)
        text = f"{v:.{decimals}f}"
        return "0" if float(text) == 0.0 else text
    return f"{v:.{digits - 1}e}"


def per_metre(m2_per_s: float, of: str = "channel") -> str:
    """A net exchange (m^2/s) as its size in m³/d per metre of channel (or of channel width, for a
    section along the channel; sign in the words)."""
    return f"{number(abs(m2_per_s) * DAY)} m³/d per metre of {of}"


def signed_per_metre(m2_per_s: float, of: str = "") -> str:
    """A net exchange with its sign, in m³/d per metre (of ``of`` when given; positive = gaining)."""
    return f"{number(m2_per_s * DAY)} m³/d per metre" + (f" of {of}" if of else "")


def length(m: float) -> str:
    """A length in metres."""
    return f"{number(m)} m"


def hours(s: float) -> str:
    """A time in seconds as hours with one decimal."""
    return f"{float(s) / HOUR:.1f} h" if finite(s) else "n/a"


def flux(m_per_s: float, unit: str = "m/d") -> str:
    """A flux (m/s, signed) in a display unit."""
    return f"{number(float(m_per_s) * flux_factor(unit))} {unit}" if finite(m_per_s) else "n/a"


def conductivity(m_per_s: float) -> str:
    """A hydraulic conductivity (m/s) in m/d."""
    return f"{number(float(m_per_s) * DAY)} m/d" if finite(m_per_s) else "n/a"


def percent(fraction: float) -> str:
    """A fraction as a whole percentage."""
    return f"{100 * float(fraction):.0f} %" if finite(fraction) else "n/a"


def parameter_value(path: str, value: float) -> str:
    """A calibrated value in a readable unit chosen from its parameter path."""
    prop = path.rsplit(".", 1)[-1]
    if prop in ("kh", "kv", "k"):
        return conductivity(value)
    if prop == "specific_storage":
        return f"{number(value)} 1/m"
    if prop in ("head", "stage") or path.endswith(".stage"):
        return f"{number(value, 5)} m"
    if prop in ("rate", "max_rate"):
        return f"{number(float(value) * 1000 * DAY)} mm/d"
    if prop == "thermal_conductivity":
        return f"{number(value)} W/(m K)"
    if prop == "heat_capacity":
        return f"{number(float(value) / 1e6)} MJ/(m3 K)"
    if prop == "dispersivity":
        return f"{number(value)} m"
    return number(value)


def _interval(path: str, lo: float, hi: float) -> str:
    prop = path.rsplit(".", 1)[-1]
    if prop in ("kh", "kv", "k"):
        return f"{number(lo * DAY)} to {number(hi * DAY)} m/d"
    return f"{parameter_value(path, lo)} to {parameter_value(path, hi)}"


def describe_parameter(path: str) -> str:
    """``bed.kv`` -> ``vertical conductivity of zone 'bed'``; other paths are returned as they are."""
    parts = path.split(".")
    if len(parts) == 2 and parts[1] in _PROPERTY_WORDS and parts[0] not in ("sides", "stream", "recharge"):
        return f"{_PROPERTY_WORDS[parts[1]]} of zone '{parts[0]}'"
    return path


# --------------------------------------------------------------------------- findings

def _direction(m2_per_s: float, scale: float) -> str:
    if abs(m2_per_s) <= 1e-9 * max(scale, 1e-30):
        return "neutral"
    return "gaining" if m2_per_s > 0 else "losing"


def exchange_finding(summary: dict, source: str = ".", unit: str = "m/d") -> Finding:
    """Gaining or losing, by how much per metre of channel, and over what lengths.

    Parameters
    ----------
    summary
        The content of a run's ``summary.json``.
    source
        The run's folder (relative), named in the finding.
    unit
        Display unit of the bed flux.
    """
    ex = float(summary["exchange_m2_per_s"])
    scale = sum(abs(float(v)) for v in (summary.get("inflow_m2_per_s") or {}).values()) or abs(ex)
    way = _direction(ex, scale)
    transient = summary.get("run") == "transient"
    when = f"At the end of the run ({hours(summary['end_time_s'])}) the" if transient and \
        finite(summary.get("end_time_s")) else "The"
    if summary.get("partial") and finite(summary.get("end_time_s")):
        when = f"At the last output of the interrupted run ({hours(summary['end_time_s'])}) the"
    f = Finding("exchange", source, title=summary.get("title", ""))
    of = summary.get("per_metre_of", "channel")
    over = (f" over the {length(float(summary['section_length_m']))} of the section"
            if of == "channel width" and finite(summary.get("section_length_m")) else "")
    if way == "gaining":
        f.sentences.append(f"{when} reach is gaining: groundwater flows into the stream at a net "
                           f"{per_metre(ex, of)}{over}.")
    elif way == "losing":
        f.sentences.append(f"{when} reach is losing: stream water flows into the aquifer at a net "
                           f"{per_metre(ex, of)}{over}.")
    else:
        f.sentences.append(f"{when} net exchange with the stream is about zero: gains and losses balance.")
    sub = float(summary.get("submerged_length_m", 0.0) or 0.0)
    gain = float(summary.get("gaining_length_m", 0.0) or 0.0)
    lose = float(summary.get("losing_length_m", 0.0) or 0.0)
    if sub > 0:
        if lose == 0 and gain > 0:
            f.sentences.append(f"All {length(sub)} of submerged bed is gaining (losing length 0 m).")
        elif gain == 0 and lose > 0:
            f.sentences.append(f"All {length(sub)} of submerged bed is losing (gaining length 0 m).")
        else:
            f.sentences.append(f"Of {length(sub)} of submerged bed, {length(gain)} is gaining and "
                               f"{length(lose)} losing.")
        lo = summary.get("bed_flux_min_m_per_s", summary.get("max_losing_flux_m_per_s"))
        hi = summary.get("bed_flux_max_m_per_s", summary.get("max_gaining_flux_m_per_s"))
        if finite(lo) and finite(hi):
            none = ("; no losing reach" if float(lo) >= 0 else "; no gaining reach" if float(hi) <= 0 else "")
            f.sentences.append(f"The bed flux ranges from {flux(lo, unit)} to {flux(hi, unit)} "
                               f"(positive upward, into the stream{none}).")
        if not transient:
            f.sentences += bed_sentences(summary.get("bed"), unit)
    else:
        f.sentences.append("No part of the bed is under water; the exchange is through the channel "
                           "sides only.")
    events = summary.get("events") or {}
    if transient and finite(events.get("initial_exchange")):
        e0 = float(events["initial_exchange"])
        way0 = _direction(e0, scale)
        word = {"gaining": "gained", "losing": "lost", "neutral": "exchanged"}[way0]
        f.sentences.append(f"At the start it {word} {per_metre(e0, of)}.")
    if summary.get("water_table_warning"):
        f.sentences.append(f"Caution: {summary['water_table_warning']}.")
    return f


_PARTS = {"channel": "the channel bed", "floodplain": "the floodplain (under water only at high stage)"}


def _at(place: dict) -> str:
    text = f"at x = {length(place.get('x_m'))}"
    return text + (f", t = {hours(place['time_s'])}" if finite(place.get("time_s")) else "")


def bed_sentences(bed: dict | None, unit: str = "m/d") -> list[str]:
    """Where the bed flux is strongest, for the channel bed and the floodplain apart: each extreme
    with its x (and time) beside the 5th/95th percentile over the wetted part (``bed`` block of
    summary.json)."""
    out = []
    for name, part in (bed or {}).items():
        if not isinstance(part, dict):
            continue
        where = " and ".join(f"{number(a)} to {number(b)}" for a, b in part.get("stretches_m") or [])
        head = f"On {_PARTS.get(name, name)} (x = {where} m)"
        g, lo, pen = part.get("gaining"), part.get("losing"), part.get("penetration")
        parts = []
        bulk = "95 % of the wetted bed" + (" and of the run" if finite((g or lo or {}).get("time_s")) else "")
        if isinstance(g, dict):
            parts.append(f"the strongest upward flux is {flux(g.get('peak_m_per_s'), unit)} {_at(g)}, while over "
                         f"{bulk} it stays below {flux(g.get('p95_m_per_s'), unit)}")
        else:
            parts.append("no part gains (no gaining reach)")
        if isinstance(lo, dict):
            parts.append(f"the strongest downward flux is {flux(lo.get('peak_m_per_s'), unit)} {_at(lo)}, while "
                         f"over {bulk} it stays above {flux(lo.get('p05_m_per_s'), unit)}")
        else:
            parts.append("no part loses (no losing reach)")
        text = f"{head} {'; '.join(parts)}."
        if isinstance(pen, dict):
            text += (f" Stream water reaches {length(pen.get('depth_m'))} below the bed {_at(pen)}; over 95 % of "
                     f"this part it stays within {length(pen.get('p95_m'))}.")
        out.append(text)
    return out


def interruption(summary: dict) -> str | None:
    """``interrupted at t = 2.5 h, of 4.0 h`` (with the last output) for a partial run, else None."""
    reason = summary.get("partial")
    if not reason:
        return None
    p = summary.get("partial_run") or {}
    word = "interrupted" if str(reason).startswith("interrupted") else "stopped"
    at = p.get("stopped_at_s", summary.get("end_time_s"))
    text = f"{word} at t = {hours(at)}" if finite(at) else word
    if finite(p.get("planned_end_s")):
        text += f", of {hours(p['planned_end_s'])}"
    last = p.get("last_output_s", summary.get("end_time_s"))
    if finite(last):
        text += f"; its last output is at t = {hours(last)}"
    return text


def warnings_finding(summary: dict, source: str = ".") -> Finding | None:
    """An interrupted run and the warnings of a run's summary (impossible heads, a stream that may
    be disconnected), or None when there is nothing to say."""
    f = Finding("warnings", source, title=summary.get("title", ""))
    stop = interruption(summary)
    if stop:
        f.sentences.append(f"This run was {stop}: its numbers, and every figure of the end of the run, show "
                           "that last output, not the planned end.")
    for w in summary.get("warnings") or []:
        text = str(w).strip()
        f.sentences.append(text[:1].upper() + text[1:] + ("" if text.endswith(".") else "."))
    return f if f.sentences else None


def pulse_finding(summary: dict, events_table: pd.DataFrame | None = None, source: str = ".",
                  unit: str = "m/d") -> Finding | None:
    """Whether a transient run reverses the exchange, when and for how long, and bank storage.

    Returns None for a steady run (no ``events`` in the summary).
    """
    ev = summary.get("events")
    if not ev:
        return None
    f = Finding("pulse", source, title=summary.get("title", ""))
    of = summary.get("per_metre_of", "channel")
    e0 = float(ev.get("initial_exchange", summary.get("exchange_m2_per_s", 0.0)))
    start_word = "gaining" if e0 > 0 else "losing"
    other_word = "losing" if e0 > 0 else "gaining"
    reversals = ev.get("reversals") or []
    if reversals:
        parts = []
        for s, e in reversals:
            parts.append(f"from {hours(s)} until the end of the run" if e is None
                         else f"from {hours(s)} to {hours(e)}")
        f.sentences.append(f"Yes: the net exchange turns from {start_word} to {other_word} "
                           f"{'; '.join(parts)} ({hours(ev.get('reversed_duration', float('nan')))} in all).")
        peak = ev.get("peak_losing_exchange")
        if e0 > 0 and finite(peak) and float(peak) < 0:
            f.sentences.append(f"At the peak the stream loses {per_metre(float(peak), of)} into its bed and banks.")
    else:
        lo, hi = summary.get("exchange_min_m2_per_s"), summary.get("exchange_max_m2_per_s")
        f.sentences.append(f"No: the net exchange stays {start_word} throughout the run"
                           + (f" (between {signed_per_metre(lo)} and {signed_per_metre(hi)})."
                              if finite(lo) and finite(hi) else "."))
    if events_table is not None and not events_table.empty and "reversals" in events_table:
        t = events_table
        wet0 = t["wet_at_start"].astype(str).str.lower().isin(["true", "1"])
        rev = t[(t["reversals"] > 0) & wet0]
        if not rev.empty:
            f.sentences.append(f"The bed flux reverses at {len(rev)} of {int(wet0.sum())} columns of the "
                               f"channel bed, for up to {hours(rev['reversed_duration'].max())}.")
        flooded = t[~wet0 & (t.get("submerged_duration", 0) > 0)]
        if not flooded.empty:
            f.sentences.append(f"The stage floods {len(flooded)} floodplain columns, for up to "
                               f"{hours(flooded['submerged_duration'].max())}.")
    bank = ev.get("bank_storage_volume")
    if finite(bank) and float(bank) > 0:
        back = ev.get("returned_volume")
        text = f"Bank storage takes in {number(bank)} m³ per metre of {of}"
        if finite(back):
            end = summary.get("end_time_s")
            text += (f"; {number(back)} m³ ({percent(ev.get('returned_fraction'))}) has come back by the "
                     f"end of the run{f' ({hours(end)})' if finite(end) else ''}")
        f.sentences.append(text + ".")
    bed = summary.get("bed")
    if isinstance(bed, dict) and bed:
        f.sentences += bed_sentences(bed, unit)
    else:
        depth = ev.get("max_penetration_depth")
        if finite(depth) and float(depth) > 0:
            f.sentences.append(f"Stream water reaches {length(depth)} below the bed at most.")
    return f


def hyporheic_finding(summary: dict, source: str = ".", unit: str = "m/d") -> Finding | None:
    """How much stream water enters the bed, how long and how deep it stays, where it goes, and
    (transient runs) when the bank-storage water comes back; None without a ``hyporheic`` block.

    A quantile beyond the horizon of the tracking is null in summary.json: "longer than" it.
    """
    h = summary.get("hyporheic")
    if not h:
        return None
    f = Finding("hyporheic", source, title=summary.get("title", ""))
    horizon = hours(h.get("horizon_s"))
    text = f"Stream water enters the submerged bed at {flux(h.get('exchange_flux_m_per_s'), unit)} on average"
    closed = h.get("bedform_exchange_flux_closed_form_m_per_s")
    if finite(closed):
        text += f" (bedform pumping alone, by the closed form of Elliott & Brooks 1997: {flux(closed, unit)})"
    f.sentences.append(text + ".")
    q = h.get("residence_time_quantiles_s") or {}
    if finite(q.get("50")):
        text = f"Half of it stays in the bed for less than {hours(q['50'])}"
    else:
        text = f"More than half of it is still in the ground after {horizon}"
    if finite(q.get("10")):
        text += f"; a tenth leaves within {hours(q['10'])}"
    if finite(q.get("90")):
        text += f" and a tenth stays longer than {hours(q['90'])}"
    f.sentences.append(text + f" (flux-weighted, from {h.get('paths')} traced flow paths).")
    depth = h.get("depth_holding_90_percent_m")
    if finite(depth):
        f.sentences.append(f"Nine tenths of it stays within {length(depth)} of the bed.")
    fate = h.get("fate") or {}
    words = {"returns_to_stream": "returns to the stream through the bed", "to_aquifer": "goes on into the aquifer",
             "seepage_face": "comes out at a seepage face", "taken_up_in_cells": "is taken up by roots",
             "not_out_within_horizon": f"is still in the ground after {horizon}"}
    parts = [f"{percent(fate[k])} {w}" for k, w in words.items() if finite(fate.get(k)) and float(fate[k]) > 0]
    if parts:
        f.sentences.append("Of the water that enters, " + "; ".join(parts) + ".")
    if finite(h.get("water_entered_m2")):
        r = h.get("return_time_quantiles_s") or {}
        text = (f"Of the {number(h['water_entered_m2'])} m³ per metre that went into the bed during the run, "
                f"{number(h.get('water_returned_m2'))} m³ ({percent(h.get('returned_fraction'))}) came back "
                "through the bed by its end")
        if finite(r.get("50")):
            text += f"; half of it within {hours(r['50'])} of entering"
        f.sentences.append(text + ".")
    return f


def field_finding(field_summary: dict, source: str = ".", unit: str = "m/d") -> Finding:
    """What the reduced field sheets say about the reach."""
    fs = field_summary
    f = Finding("field", source)
    counts = [(fs.get("meters"), "seepage meters"), (fs.get("piezometers"), "mini-piezometers"),
              (fs.get("slug_tests"), "slug tests"), (fs.get("permeameter_tests"), "permeameter tests")]
    listed = [f"{int(n)} {w}" for n, w in counts if finite(n) and int(n) > 0]
    if listed:
        f.sentences.append(f"The field sheets hold {', '.join(listed)}.")
    reach = fs.get("reach") or {}
    mean, per_m = reach.get("mean_flux [m/s]"), reach.get("per_metre_of_channel [m^2/s]")
    if finite(mean) and finite(per_m):
        way = "gains" if float(per_m) > 0 else "loses" if float(per_m) < 0 else "neither gains nor loses"
        text = (f"The meters give a mean bed flux of {flux(mean, unit)} over {length(reach.get('length [m]'))} "
                f"of channel: the reach {way} {per_metre(per_m)}")
        ci, span = reach.get("total_ci95 [m^3/s]"), reach.get("length [m]")
        if isinstance(ci, list) and len(ci) == 2 and finite(span) and float(span) > 0:
            lo, hi = (float(c) / float(span) for c in ci)
            text += f" (95 % range {number(lo * DAY)} to {number(hi * DAY)} m³/d per metre)"
        f.sentences.append(text + ".")
    k_slug, k_perm = fs.get("median_k_hvorslev [m/s]"), fs.get("median_kv_permeameter [m/s]")
    if finite(k_slug):
        f.sentences.append(f"The slug tests give a median conductivity of {conductivity(k_slug)}.")
    if finite(k_perm):
        f.sentences.append(f"The permeameter cores give a median vertical conductivity of {conductivity(k_perm)}.")
    left = (fs.get("flagged_observations") or {})
    sites = sorted({str(r.get("site")) for r in left.get("rows") or []})
    if sites:
        how = "are kept in" if left.get("kept") else "are left out of"
        f.sentences.append(f"The observations of flagged instruments ({', '.join(sites)}) {how} the calibration "
                           "(listed in flagged_observations.csv).")
        other = fs.get("reach_with_flagged_meters" if not left.get("kept") else "reach_without_flagged_meters") or {}
        alt = other.get("per_metre_of_channel [m^2/s]")
        if finite(alt) and finite(per_m):
            which = "with" if not left.get("kept") else "without"
            f.sentences.append(f"{which.capitalize()} the flagged meters the reach would give {per_metre(alt)} "
                               f"instead of {per_metre(per_m)}.")
    rejected = fs.get("rejected_rows", 0) or 0
    flagged = sum(int(v) for v in (fs.get("flags") or {}).values() if finite(v))
    if rejected or flagged:
        f.sentences.append(f"{int(rejected)} rows of the sheets were rejected and {flagged} flags raised "
                           "(listed in the field section).")
    return f


def same_length_sentence(field_summary: dict, run_summary: dict, run_label: str) -> str | None:
    """The field's and a model run's exchange quoted per the same length, saying which.

    A section across the channel gives flow per metre of channel length, as the meters' reach
    total per metre of channel does. A section along the channel gives flow per metre of channel
    width over the section's length; the meters' mean flux over that same length gives the field
    figure on that basis.
    """
    reach = field_summary.get("reach") or {}
    mean, per_m = reach.get("mean_flux [m/s]"), reach.get("per_metre_of_channel [m^2/s]")
    ex = run_summary.get("exchange_m2_per_s")
    if not finite(ex):
        return None
    if run_summary.get("per_metre_of") == "channel width":
        span = run_summary.get("section_length_m")
        if not (finite(mean) and finite(span)):
            return None
        return (f"On the basis of the model run in {run_label}, drawn along the channel (per metre of channel "
                f"width, over the same {length(span)} of channel; + = gaining), the meters give "
                f"{number(float(mean) * float(span) * DAY)} m³/d and the model "
                f"{number(float(ex) * DAY)} m³/d.")
    if not finite(per_m):
        return None
    return (f"Per metre of channel length, as the model run in {run_label} (drawn across the channel) is "
            f"quoted (+ = gaining): the meters give {number(float(per_m) * DAY)} m³/d and the model "
            f"{number(float(ex) * DAY)} m³/d.")


def _is_conductivity(path: str) -> bool:
    return path.rsplit(".", 1)[-1] in ("kh", "kv", "k")


def conductivity_finding(fit_results: dict, source: str = ".") -> Finding:
    """How well the calibration pins down the conductivities, the bed's first."""
    best: dict = fit_results.get("best", {})
    ci: dict = fit_results.get("ci95", {})
    verdicts: dict = fit_results.get("verdicts", {}) or {}
    paths = list(fit_results.get("parameters") or best)
    ks = [p for p in paths if _is_conductivity(p)]
    bed = [p for p in ks if "bed" in p.split(".")[0].lower()]
    chosen = bed + [p for p in ks if p not in bed]
    f = Finding("conductivity", source)
    if not chosen:
        f.sentences.append("The calibration estimated no conductivity (free parameters: "
                           f"{', '.join(paths) or 'none'}).")
    for p in chosen:
        b = float(best[p])
        lo, hi = (float(v) for v in ci.get(p, [float("nan"), float("nan")]))
        text = f"{p} ({describe_parameter(p)}) = {parameter_value(p, b)}"
        if finite(lo) and finite(hi):
            text += f", 95 % interval {_interval(p, lo, hi)}"
            if b > 0 and lo > 0:
                text += f", within a factor of {number(max(hi / b, b / lo))} of the best value"
        verdict = verdicts.get(p)
        f.sentences.append(text + (f": {verdict}." if verdict else "."))
    for p, note in (fit_results.get("at_bound") or {}).items():
        if p not in chosen:  # a conductivity's verdict already says it
            f.sentences.append(f"{note}.")
    st = fit_results.get("statistics") or {}
    rchi = st.get("reduced_chi_square")
    if finite(rchi):
        if float(rchi) > 2.0:
            f.sentences.append(
                f"The weighted misfit is {number(rchi)} times what the stated measurement errors explain "
                f"(reduced chi-square); the intervals are widened to match, but a misfit this large also "
                "points at the conceptual model or at errors that were set too small.")
        else:
            f.sentences.append(f"The misfit is in line with the stated measurement errors (reduced "
                               f"chi-square {number(rchi)}).")
    return f


def pick_text(row: dict) -> str:
    kind = str(row.get("kind", "instrument"))
    words = _KIND_WORDS.get(kind.lower(), kind)
    article = "an" if words[:1].lower() in "aeiou" else "a"
    text = f"{article} {words} at x = {length(row.get('x'))}"
    d = row.get("depth")
    shallow, deep = row.get("shallow_depth"), row.get("deep_depth")
    if finite(shallow) and finite(deep):
        text += f", sensors {length(shallow)} and {length(deep)} below the bed"
    elif finite(d) and float(d) > 0:
        text += f", {length(d)} below the bed"
    r = row.get("reduction")
    if finite(r) and float(r) > 0:
        text += f" (spread {'under 1 %' if float(r) < 0.005 else percent(r)} less)"
    return text


def spread(target: str, sd: float) -> str:
    """A plan's standard deviation of its target, in the target's unit when it is a parameter path."""
    return parameter_value(target, sd) if "." in str(target) else number(sd)


def plan_picks(plan_summary: dict | None, plan_table: pd.DataFrame | None) -> list[dict]:
    """The ranked picks of a plan, from its table (preferred) or its summary."""
    if plan_table is not None and not plan_table.empty:
        t = plan_table.sort_values("rank") if "rank" in plan_table else plan_table
        return t.to_dict("records")
    if plan_summary and isinstance(plan_summary.get("picks"), list):
        return [p for p in plan_summary["picks"] if isinstance(p, dict)]
    return []


def next_finding(plans: Iterable[tuple[str, dict | None, pd.DataFrame | None]],
                 fits: Iterable[tuple[str, dict]] = ()) -> Finding:
    """Where to measure next: the plan's ranked picks, else what the calibration suggests.

    Parameters
    ----------
    plans
        ``(source, plan_summary, plan_table)`` for each plan output.
    fits
        ``(source, fit_results)`` for each fit output (used when there is no plan).
    """
    plans = list(plans)
    f = Finding("next", plans[0][0] if plans else ".")
    for source, summary, table in plans:
        picks = plan_picks(summary, table)
        target = (summary or {}).get("target", "the target")
        if not picks:
            f.sentences.append(f"The plan in {source} lists no picks.")
            continue
        shown = picks[:5]
        items = "; ".join(f"{i + 1}) {pick_text(p)}" for i, p in enumerate(shown))
        more = f" (and {len(picks) - 5} more in the plan table)" if len(picks) > 5 else ""
        f.sentences.append(f"To narrow {target}, place the next instruments in this order: {items}{more}.")
        prior, final = (summary or {}).get("prior_sd"), (summary or {}).get("final_sd")
        if finite(prior) and finite(final):
            cut = f" ({percent(1 - float(final) / float(prior))} less)" if float(prior) > 0 else ""
            f.sentences.append(f"Together the {len(picks)} picks would cut the standard deviation of "
                               f"{target} from {spread(target, prior)} to {spread(target, final)}{cut}.")
        elif finite(shown[0].get("expected_sd")):
            f.sentences.append(f"After the first pick the expected standard deviation of {target} is "
                               f"{spread(target, shown[0]['expected_sd'])}.")
        f.sentences += [f"Warning: {w}." for w in (summary or {}).get("warnings") or [] if isinstance(w, str)]
    if plans:
        return f
    hints = []
    fits = list(fits)
    if fits:
        f.source = ", ".join(source for source, _ in fits)
    for _source, res in fits:
        for v in (res.get("verdicts") or {}).values():
            if isinstance(v, str) and "add a" in v:
                hint = v[v.index("add a"):]
                if hint not in hints:
                    hints.append(hint)
    if hints:
        f.sentences.append("There is no plan in this folder; the calibration suggests: "
                           + "; ".join(hints) + ".")
    else:
        f.sentences.append("There is no plan in this folder: run bedflux plan to rank where the next "
                           "seepage meters, piezometers and temperature logger pairs would narrow the "
                           "bed conductivity most.")
    return f


def _range_text(r: dict, show) -> str:
    return f"{show(r['median'])} (5-95 %: {show(r['p5'])} to {show(r['p95'])})"


def ensemble_finding(summary: dict, source: str = ".") -> Finding:
    """The ranges of an ensemble: the probability of a reversal, the medians and 5-95 % ranges of
    its answers, beside the deterministic run."""
    f = Finding("ranges", source)
    n, ran, failed = summary.get("members"), summary.get("members_ran"), summary.get("members_failed")
    f.sentences.append(f"Over {n} members of an ensemble ({ran} ran"
                       + (f", {failed} failed and are left out" if failed else "") + "):")
    det = summary.get("deterministic") or {}
    answers = summary.get("answers") or {}
    if summary.get("transient"):
        p = summary.get("probability_of_reversal")
        if finite(p):
            f.sentences.append(f"the net exchange reverses in {percent(p)} of the members.")
        for key, words, show in (("reversal_duration", "A reversal lasts", hours),
                                 ("bank_storage", "Bank storage takes in", lambda v: f"{number(v)} m³ per metre"),
                                 ("penetration_depth", "Stream water reaches", length)):
            r = answers.get(key) or {}
            if r.get("members"):
                text = f"{words} {_range_text(r, show)}"
                if finite(det.get(key)):
                    text += f"; the deterministic run gives {show(det[key])}"
                f.sentences.append(text + ".")
    else:
        r = answers.get("net_exchange") or {}
        if r.get("members"):
            text = f"the net exchange is {_range_text(r, signed_per_metre)}"
            if finite(det.get("net_exchange")):
                text += f"; the deterministic run gives {signed_per_metre(det['net_exchange'])}"
            f.sentences.append(text + ".")
        p = summary.get("probability_of_losing_reach")
        if finite(p):
            f.sentences.append(f"The reach loses water in {percent(p)} of the members.")
    return f


def findings(project, unit: str = "m/d") -> list[Finding]:
    """Every finding of a project (a :class:`bedflux.report.collect.Project`), grouped by topic."""
    from bedflux.report.collect import read_table
    from bedflux.report.temperature_findings import temperature_finding

    out: list[Finding] = []
    for o in project.of_kind("run"):
        s = o.data["summary"]
        w = warnings_finding(s, o.label)
        if w is not None:
            out.append(w)
        out.append(exchange_finding(s, o.label, unit))
        events = read_table(o.tables["events.csv"]) if "events.csv" in o.tables else None
        p = pulse_finding(s, events, o.label, unit)
        if p is not None:
            out.append(p)
        h = hyporheic_finding(s, o.label, unit)
        if h is not None:
            out.append(h)
    runs = [(o.label, o.data["summary"]) for o in project.of_kind("run")]
    for o in project.of_kind("field"):
        f = field_finding(o.data["field_summary"], o.label, unit)
        for label, s in runs:
            same = same_length_sentence(o.data["field_summary"], s, label)
            if same:
                f.sentences.append(same)
        out.append(f)
        t = temperature_finding(o.data["field_summary"], o.label, unit)
        if t is not None:
            out.append(t)
    fits = [(o.label, o.data["fit_results"]) for o in project.of_kind("fit")]
    for label, res in fits:
        out.append(conductivity_finding(res, label))
    plans = [(o.label, o.data["plan_summary"], o.data["plan_table"]) for o in project.of_kind("plan")]
    out.append(next_finding(plans, fits))
    out += [ensemble_finding(o.data["ensemble_summary"], o.label) for o in project.of_kind("ensemble")]
    order = list(TOPICS)
    return sorted(out, key=lambda f: order.index(f.topic))
