"""What the temperature records say: fluxes from the daily wave against the meters, and whether
(and when) the flux reverses. Reads the ``temperature`` entry of ``field_summary.json``."""
from __future__ import annotations

import pandas as pd

from bedflux.report.findings import Finding, finite, flux, number

DAY = 86400.0


def _when(seconds: float | None, origin: str | None) -> str:
    """A time since the origin as a day number, or a date and hour when the sheet gave date-times."""
    if seconds is None or not finite(seconds):
        return "the end of the record"
    if origin:
        stamp = pd.Timestamp(origin) + pd.Timedelta(seconds=float(seconds))
        return stamp.strftime("%d %b %Y %H:%M")
    return f"day {float(seconds) / DAY:.1f}"


def _pair(p: dict) -> str:
    return f"{p['site']} ({p['shallow_depth [m]'] * 100:g}-{p['deep_depth [m]'] * 100:g} cm)"


def temperature_finding(field_summary: dict, source: str = ".", unit: str = "m/d") -> Finding | None:
    """The temperature finding, or None when the field outputs hold no temperature records."""
    temp = field_summary.get("temperature")
    if not temp or not temp.get("pairs"):
        return None
    pairs = temp["pairs"]
    origin = temp.get("time_origin")
    f = Finding("temperature", source)
    sites = sorted({p["site"] for p in pairs})
    windows = sum(int(p["windows"]) for p in pairs)
    f.sentences.append(
        f"Temperature sensors at {', '.join(sites)} give the vertical flux through time from the daily "
        f"wave ({len(pairs)} sensor pairs, {windows} windows), by the {temp.get('method', 'amplitude ratio')}.")
    compared = [p for p in pairs if p.get("meter")]
    if compared:
        agree = [p for p in compared if p["meter"]["agree"]]
        parts = [f"{_pair(p)} {flux(p['meter']['thermal_flux [m/s]'], unit)} +/- "
                 f"{flux(p['meter']['thermal_sd [m/s]'], unit)} against meter {p['meter']['meter']} "
                 f"{flux(p['meter']['meter_flux [m/s]'], unit)}" for p in compared]
        f.sentences.append(
            f"Against the nearest seepage meter on the meter's day (upward positive): {'; '.join(parts)}. "
            f"{len(agree)} of {len(compared)} agree within two combined standard deviations"
            + ("." if len(agree) == len(compared) else
               f"; {', '.join(_pair(p) for p in compared if not p['meter']['agree'])} do not."))
    reversed_pairs = [p for p in pairs if p.get("reversals")]
    if reversed_pairs:
        texts = []
        for p in reversed_pairs:
            for r in p["reversals"]:
                texts.append(f"{_pair(p)} from {r['from']} to {r['to']} from {_when(r['start [s]'], origin)} "
                             f"to {_when(r['end [s]'], origin)} (at most {flux(abs(r['extreme_flux [m/s]']), unit)} "
                             f"{'downward' if r['to'] == 'losing' else 'upward'})")
        steady = sorted({p["site"] for p in pairs} - {p["site"] for p in reversed_pairs})
        f.sentences.append("The temperature record shows the exchange reversing: " + "; ".join(texts) + "."
                           + (f" At {', '.join(steady)} the flux keeps its direction." if steady else ""))
    else:
        f.sentences.append("The temperature record shows no reversal: where the direction is resolved (flux "
                           f"beyond {number(temp.get('resolved_at_sd', 2))} standard deviations) it keeps it.")
    flagged: dict[str, int] = {}
    for p in pairs:
        for word, n in (p.get("flagged") or {}).items():
            flagged[word] = flagged.get(word, 0) + int(n)
    if flagged:
        f.sentences.append("Flagged windows: " + ", ".join(f"{w.replace('_', ' ')} {n}" for w, n in
                                                           sorted(flagged.items())) + " (thermal_flux.csv).")
    return f
