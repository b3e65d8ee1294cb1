"""Tables of a run: the terminal summary and the per-sample audit CSV.

Formatting only: every value comes computed from :mod:`icing.runs`; unknown
values are written as ``unknown`` or left empty, never as 0 or "none".
"""

from __future__ import annotations

import csv
import io
import math

from icing import codes
from icing.caution import CAUTION
from icing.hazards.segments import KIND_GAP, _iso

__all__ = ["format_number", "summary_table", "samples_csv", "sample_table", "SAMPLE_COLUMNS"]


def format_number(x, nd=1, none="-"):
    """Format a float to ``nd`` decimals; ``none`` for None, ``str`` otherwise."""
    if x is None:
        return none
    if isinstance(x, float):
        return f"{x:.{nd}f}"
    return str(x)


def summary_table(summaries) -> str:
    """Render route summaries as a plain-text table (with the caution)."""
    head = [
        "route",
        "km",
        "worst",
        "min icing",
        "ice mm",
        "SLD",
        "freezing lvl ft",
        "gaps km",
        "status",
    ]
    rows = []
    for s in summaries:
        fl = (s.get("freezing_level_ft_min"), s.get("freezing_level_ft_max"))
        fl_txt = "-" if fl[0] is None else (f"{fl[0]}" if fl[0] == fl[1] else f"{fl[0]}-{fl[1]}")
        rows.append(
            [
                s["route"],
                format_number(s["distance_km"]),
                s["worst_severity"] or "unknown",
                format_number(s["minutes_in_icing"]),
                format_number(s.get("accretion_mm_reference"), 2),
                ",".join(x for x in s["sld"] if x != "none") or "none",
                fl_txt,
                format_number(s["gap_km"]),
                s["status"],
            ]
        )
    widths = [max(len(str(r[i])) for r in rows + [head]) for i in range(len(head))]
    lines = ["  ".join(str(c).ljust(w) for c, w in zip(head, widths, strict=True))]
    lines.append("  ".join("-" * w for w in widths))
    for r in rows:
        lines.append("  ".join(str(c).ljust(w) for c, w in zip(r, widths, strict=True)))
    shown = 3
    for s in summaries:
        cands = [
            c
            for c in s.get("candidate_altitudes_ft") or []
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
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


#: Columns of the per-sample audit table (``--samples OUT.csv``).
SAMPLE_COLUMNS = [
    "route",
    "index",
    "lat",
    "lon",
    "altitude_ft",
    "altitude_msl_m",
    "distance_km",
    "time",
    "dt_s",
    "tas_kt",
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
    "severity_reasons",
]


def sample_table(screening) -> list[dict]:
    """Return the per-sample audit rows (one dict per sample, SAMPLE_COLUMNS keys)."""
    s, af = screening.samples, screening.at_flight
    rows = []
    n = len(s.lat)
    for i in range(n):
        sev = int(af["severity"][i])
        row = {
            "route": screening.route_name,
            "index": i,
            "lat": round(float(s.lat[i]), 6),
            "lon": round(float(s.lon[i]), 6),
            "time": _iso(s.time[i]),
            "dt_s": round(float(s.dt_s[i]), 2),
            "distance_km": round(float(s.distance_m[i]) / 1000.0, 3),
            "covered": bool(af["covered"][i]) and sev != codes.GAP,
            "gap_reason": af["gap_reason"][i],
            "basis": codes.BASIS[int(af["basis"][i])],
            "sld": codes.SLD_CLASSES[int(af["sld_class"][i])],
            "ice_type": codes.ICE_TYPES[int(af["ice_type"][i])],
            "severity": str(codes.words(sev, codes.SEVERITY, gap=KIND_GAP)),
            "worst_collector": af["worst_collector"][i],
            "cloud": bool(af["cloud"][i]),
            "severity_reasons": str(af["severity_reasons"][i]) if "severity_reasons" in af else "",
        }
        for key in SAMPLE_COLUMNS:
            if key not in row:
                v = af.get(key)
                if v is None:
                    row[key] = ""
                    continue
                x = float(v[i])
                row[key] = "" if not math.isfinite(x) else round(x, 5)
        rows.append(row)
    return rows


def samples_csv(screenings) -> str:
    """Return the per-sample audit table of the screenings as CSV text."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=SAMPLE_COLUMNS, lineterminator="\n")
    w.writeheader()
    for s in screenings:
        for row in sample_table(s):
            w.writerow(row)
    return buf.getvalue()
