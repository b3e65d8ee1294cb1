"""Tables of a run: the terminal summary and the per-sample audit CSV.

Formatting only: every value comes computed from :mod:`icing.runs`; unknown
values are written as ``unknown`` or left empty, never as 0 or "none".
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np

from icing import codes
from icing.caution import CAUTION
from icing.constants import FT
from icing.hazards.segments import KIND_GAP, _iso
from icing.outputs.names import OUTCOME_WORDS, SUMMARY_FIRST, label

__all__ = [
    "format_number",
    "summary_table",
    "departure_table",
    "samples_csv",
    "sample_table",
    "SAMPLE_COLUMNS",
    "SUMMARY_COLUMNS",
]


def format_number(x, nd=1, none="-"):
    """Format a float to ``nd`` decimals; ``none`` for None, ``str`` otherwise."""
    if x is None:
        return none
    if isinstance(x, float):
        return f"{x:.{nd}f}"
    return str(x)


#: Columns of the terminal summary table (keys; their labels come from ``names``).
SUMMARY_COLUMNS = SUMMARY_FIRST + ("freezing_level_ft_min", "gap_km")


def _summary_cell(s, key):
    """One cell of the summary table; what was not computed reads "unknown"."""
    if key == "outcome":
        return s.get("outcome") or "-"
    if key == "sld":
        sld = s.get("sld")
        return "unknown" if sld is None else (",".join(x for x in sld if x != "none") or "none")
    if key == "freezing_level_ft_min":
        fl = (s.get("freezing_level_ft_min"), s.get("freezing_level_ft_max"))
        if fl[0] is None:
            return "unknown" if s.get("worst_severity") is None else "none found"
        return f"{fl[0]}" if fl[0] == fl[1] else f"{fl[0]}-{fl[1]}"
    value = s.get(key)
    if value is None:
        return "unknown"
    partly = (s.get("gap_km") or 0) > 0 or (s.get("gap_minutes") or 0) > 0
    if key in ("worst_severity", "minutes_in_icing", "accretion_mm") and partly:
        # over the screened part only: the rest is unknown
        text = (
            value
            if key == "worst_severity"
            else format_number(value, 2 if key == "accretion_mm" else 1)
        )
        return f"{text} + gaps"
    return format_number(value, 2 if key == "accretion_mm" else 1)


def _grid(head, rows):
    widths = [max(len(str(r[i])) for r in rows + [head]) for i in range(len(head))]
    lines = ["  ".join(str(c).ljust(w) for c, w in zip(head, widths, strict=True)).rstrip()]
    lines.append("  ".join("-" * w for w in widths))
    for r in rows:
        lines.append("  ".join(str(c).ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())
    return lines


def summary_table(summaries) -> str:
    """Render route summaries as a plain-text table (with the outcomes and the caution)."""
    head = [
        label(k) if k != "freezing_level_ft_min" else "freezing level [ft MSL]"
        for k in SUMMARY_COLUMNS
    ]
    rows = [[_summary_cell(s, k) for k in SUMMARY_COLUMNS] for s in summaries]
    lines = _grid(head, rows)
    for s in summaries:
        if s.get("members"):
            lines.append(
                f"{s['route']}: {s['members']} members, severity by the "
                f"{s.get('member_statistic')} member; "
                f"{s.get('member_fraction_words') or 'no member has data'}; worst member "
                f"{s.get('severity_worst_member') or 'unknown'}"
                + (
                    f"; {s['member_gap_km']:g} km where some member has no data"
                    if s.get("member_gap_km")
                    else ""
                )
            )
        if s.get("outcome") is not None or s.get("worst_severity") is None:
            lines.append(
                f"{s['route']}: {OUTCOME_WORDS[s.get('outcome')]}: {s['outcome_reason']}"
                if s.get("outcome_reason")
                else f"{s['route']}: worst icing unknown"
            )
    lines += _candidate_lines(summaries)
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def _candidate_lines(summaries, shown=3):
    lines = []
    for s in summaries:
        cands = [
            c
            for c in s.get("candidate_altitudes") or s.get("candidate_altitudes_ft") or []
            if isinstance(c, dict) and c.get("text")
        ]
        if not cands:
            continue
        cands.sort(key=lambda c: -codes.SEVERITY.index(c.get("severity") or "none"))
        lines.append(f"{s['route']}: candidate altitudes for the worst icing stretches:")
        for cand in cands[:shown]:
            lines.append(f"  {cand['text']}")
        if len(cands) > shown:
            lines.append(f"  ... {len(cands) - shown} more stretches in the summary JSON")
    return lines


def departure_table(summaries) -> str:
    """Render the outcomes of a departure window: one row per route, one column per departure.

    Each cell is the outcome (or, with no condition stated, the worst icing), so a
    dispatcher reads at a glance when a route can be flown.
    """
    routes = list(dict.fromkeys(s["route"] for s in summaries))
    times = sorted({s["departure_time"] for s in summaries})
    cell = {(s["route"], s["departure_time"]): s for s in summaries}
    head = ["route \\ departure [UTC]"] + [t[11:16] for t in times]
    rows = []
    for r in routes:
        row = [r]
        for t in times:
            s = cell.get((r, t))
            if s is None:
                row.append("")
            elif s.get("outcome") is not None:
                row.append(s["outcome"])
            else:
                row.append(s.get("worst_severity") or "unknown")
        rows.append(row)
    day = times[0][:10] if times else ""
    return "\n".join([f"departures on {day}:"] + _grid(head, rows))


#: Columns of the per-sample audit table (``--samples OUT.csv``). Altitudes are MSL
#: (``altitude_ft``, ``altitude_m``); the route's own value and reference beside them;
#: ``altitude_msl_m`` is the deprecated name of ``altitude_m``, kept one release.
SAMPLE_COLUMNS = [
    # the columns of schema 1.0, in their order (positional readers keep working)
    "route",
    "index",
    "lat",
    "lon",
    "altitude_ft",
    "altitude_msl_m",
    "distance_km",
    "time",
    "dt_s",
    "covered",
    "gap_reason",
    "pressure_hpa",
    "temperature_c",
    "relative_humidity_pct",
    "cloud",
    "lwc_g_m3",
    "lwc_model_g_m3",
    "lwc_diagnosed_g_m3",
    "basis",
    "droplet_number_cm3",
    "mvd_um",
    "glaciation",
    "sld",
    "sld_lwc_g_m3",
    "sld_mvd_um",
    "worst_collector",
    "collection_efficiency",
    "beta0",
    "freezing_fraction",
    "ice_type",
    "ice_density_kg_m3",
    "accretion_rate_mm_h",
    "accretion_mm",
    "severity",
    # added in schema 1.1
    "airframe",
    "altitude_m",
    "altitude_agl_m",
    "ground_elevation_m",
    "route_altitude_ft",
    "route_altitude_reference",
    "hold",
    "tas_m_s",
    "severity_rank",
    "severity_reasons",
    # added in schema 1.2: ensembles and spreads (empty for a single forecast)
    "members_covering",
    "severity_worst_member",
    "member_fraction_trace",
    "member_fraction_light",
    "member_fraction_moderate",
    "member_fraction_severe",
]

#: The ensemble columns of the samples table (filled when a run has several members).
_MEMBER_COLUMNS = SAMPLE_COLUMNS[SAMPLE_COLUMNS.index("members_covering") :]


def _number(x):
    x = float(x)
    return "" if not math.isfinite(x) else round(x, 5)


def sample_table(screening) -> list[dict]:
    """Return the per-sample audit rows (one dict per sample, SAMPLE_COLUMNS keys).

    Unknown values (coverage gaps) are empty cells, never 0 or "none".
    """
    s, af = screening.samples, screening.at_flight
    n = len(s.lat)
    alt_m = np.asarray(af.get("altitude_msl_m", s.altitude_m), float)
    ground = np.asarray(af.get("ground_m", np.full(n, np.nan)), float)
    hold = np.asarray(getattr(s, "hold", np.zeros(n, bool)), bool)
    rows = []
    for i in range(n):
        sev = int(af["severity"][i])
        gap = sev == codes.GAP or not bool(af["covered"][i])
        row = {
            "route": screening.route_name,
            "airframe": screening.airframe_name,
            "index": i,
            "lat": round(float(s.lat[i]), 6),
            "lon": round(float(s.lon[i]), 6),
            "altitude_ft": _number(alt_m[i] / FT),
            "altitude_m": _number(alt_m[i]),
            "altitude_agl_m": _number(alt_m[i] - ground[i]),
            "ground_elevation_m": _number(ground[i]),
            "route_altitude_ft": _number(float(s.altitude_m[i]) / FT),
            "route_altitude_reference": s.altitude_reference,
            "time": _iso(s.time[i]),
            "dt_s": round(float(s.dt_s[i]), 2),
            "hold": bool(hold[i]),
            "tas_m_s": _number(s.tas[i]),
            "distance_km": round(float(s.distance_m[i]) / 1000.0, 3),
            "covered": not gap,
            "gap_reason": af["gap_reason"][i],
            "basis": "" if gap else codes.BASIS[int(af["basis"][i])],
            "sld": "" if gap else codes.SLD_CLASSES[int(af["sld_class"][i])],
            "ice_type": "" if gap else codes.ICE_TYPES[int(af["ice_type"][i])],
            "severity": str(codes.words(sev, codes.SEVERITY, gap=KIND_GAP)),
            "severity_rank": "" if gap else sev,
            "worst_collector": "" if gap else af["worst_collector"][i],
            "cloud": "" if gap else bool(af["cloud"][i]),
            "altitude_msl_m": _number(alt_m[i]),
            "severity_reasons": ""
            if gap
            else str(np.asarray(af.get("severity_reasons", [""] * n))[i]),
        }
        row.update(_member_cells(af, i))
        for key in SAMPLE_COLUMNS:  # what the forecast and the physics say: unknown in a gap
            if key not in row:
                v = af.get(key)
                row[key] = "" if v is None or gap else _number(v[i])
        rows.append(row)
    return rows


def _member_cells(af, i):
    """Return the ensemble cells of sample ``i`` (empty without members; empty where unknown)."""
    if "member_fraction" not in af:
        return dict.fromkeys(_MEMBER_COLUMNS, "")
    worst = int(af["severity_worst_member"][i])
    out = {
        "members_covering": int(af["members_covering"][i]),
        "severity_worst_member": "" if worst == codes.GAP else codes.SEVERITY[worst],
    }
    for word, f in af["member_fraction"].items():
        out[f"member_fraction_{word}"] = _number(f[i])
    return out


def samples_csv(screenings) -> str:
    """Return the per-sample audit table of the screenings as CSV text."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=SAMPLE_COLUMNS, lineterminator="\n")
    w.writeheader()
    for s in screenings:
        for row in sample_table(s):
            w.writerow(row)
    return buf.getvalue()
