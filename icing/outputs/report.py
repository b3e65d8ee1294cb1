"""One self-contained HTML report of screened routes.

The file needs no network: styles are inline and the pictures are embedded as
``data:`` URIs (PNG, or SVG). It holds the caution at the top and the bottom,
a summary table (one row per route), per route the pictures, the candidate
altitudes and the segment list, then the assumptions and the provenance.
Every piece of text is escaped (``html.escape``); the file is written to a
temporary name and renamed, so a reader never sees half a report.
"""

from __future__ import annotations

import base64
import html
import math
import pathlib
import tempfile
from functools import partial

import numpy as np

from icing import codes
from icing.caution import CAUTION
from icing.errors import InputError
from icing.outputs.atomic import replace_atomically
from icing.outputs.names import OUTCOME_WORDS, SUMMARY_FIRST, label
from icing.outputs.plot import (
    GAP_LABEL,
    SEVERITY_COLOURS,
    check_output_path,
    hold_runs,
    plot_cross_section,
    plot_route_map,
)

__all__ = ["write_report", "SEGMENT_COLUMNS", "SUMMARY_COLUMNS", "plain_outcome"]

#: Segment properties shown in the segment table, in order (labels from ``names``).
SEGMENT_COLUMNS = (
    "segment_id",
    "kind",
    "severity",
    "ice_type",
    "sld",
    "from_waypoint",
    "to_waypoint",
    "start_km",
    "end_km",
    "start_time",
    "duration_min",
    "altitude_ft_min",
    "altitude_ft_max",
    "temperature_c_min",
    "lwc_g_m3_max",
    "mvd_um_max",
    "accretion_mm",
    "candidate_altitudes_ft",
    # ensembles and spreads only
    "severity_worst_member",
    "member_fraction",
    "members_covering",
)

#: Columns of the summary table: what a reader needs first, nothing wider than the page.
SUMMARY_COLUMNS = SUMMARY_FIRST + ("gap_km", "departure_time", "arrival_time")

_CANDIDATES_HEAD = (
    "Candidate altitudes with less icing \u2014 to check against official advisories; "
    "not advice to fly"
)


def _style():
    """Return the report's style sheet; the severity colours are the pictures' own."""
    sev = "".join(
        f".sev-{codes.SEVERITY[k]}{{background:{c};color:{'#fff' if k >= 3 else '#111'};"
        "font-weight:600;white-space:nowrap}"
        for k, c in SEVERITY_COLOURS.items()
    )
    return (
        "*{box-sizing:border-box}"
        "body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:1.2em auto;"
        "max-width:1340px;color:#1a1a1a;line-height:1.4;padding:0 16px;"
        "overflow-wrap:break-word}"
        ".caution{border:2px solid #222;background:#fff8d8;padding:.7em 1em;margin:1em 0;"
        "font-weight:600}"
        "table{border-collapse:collapse;margin:.6em 0 1.2em;font-size:.88em;max-width:100%}"
        "th,td{border:1px solid #999;padding:.25em .5em;text-align:left;vertical-align:top}"
        "th{background:#e8ecf1;font-weight:600}"
        "td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}"
        ".sev-none{background:#eef5ee}.sev-unknown,.gap{background:#e3e3e3;font-style:italic}"
        + sev
        + ".outcome{font-size:1.05em;padding:.5em .8em;border-left:6px solid #555;"
        "background:#f4f4f4}"
        ".outcome-met{border-color:#a8553a;background:#fbeee8}"
        ".outcome-not-met{border-color:#3d7a4a;background:#eef6ef}"
        ".outcome-incomplete{border-color:#777;background:#eeeeee}"
        "figure{margin:1em 0}figure img{max-width:100%;height:auto;border:1px solid #ccc}"
        "figcaption{font-size:.85em;color:#444}"
        "details{margin:.4em 0 .8em}summary{cursor:pointer;font-weight:600}"
        ".scroll{overflow-x:auto;max-width:100%}"
        "dl.kv{display:grid;grid-template-columns:minmax(8em,max-content) minmax(0,1fr);"
        "gap:.15em 1em;font-size:.88em}"
        "dl.kv dt{font-weight:600}dl.kv dd{margin:0;min-width:0}"
        "ul.plain li{margin:.2em 0}"
    )


def _e(value):
    return html.escape(str(value), quote=True)


def _fmt(value, *, unknown="\u2014"):
    """Plain text for a table cell."""
    if value is None:
        return unknown
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        if not math.isfinite(value):
            return unknown
        return f"{value:.3g}" if abs(value) < 1 else f"{value:,.1f}".rstrip("0").rstrip(".")
    if isinstance(value, (list, tuple)):
        return ", ".join(_fmt(v) for v in value) if value else "\u2014"
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_fmt(v)}" for k, v in value.items())
    if isinstance(value, np.generic):
        return _fmt(value.item())
    if isinstance(value, np.ndarray):
        return _fmt(value.tolist())
    return _user_words(str(value))


def _user_words(text):
    """Say plainly what internal wording means to a reader."""
    return text.replace("from memory", "not yet checked against its published source")


def _cell(value, *, tag="td", cls=None, unknown="\u2014"):
    numeric = isinstance(value, (int, float)) and not isinstance(value, bool)
    classes = " ".join(c for c in (cls, "num" if numeric else None) if c)
    attr = f' class="{_e(classes)}"' if classes else ""
    return f"<{tag}{attr}>{_e(_fmt(value, unknown=unknown))}</{tag}>"


def _kv(mapping, *, gid=None):
    """Render a (nested) mapping as a definition list; nested mappings nest."""
    if not mapping:
        return "<p>\u2014</p>"
    attr = f' id="{_e(gid)}"' if gid else ""
    rows = []
    for k, v in mapping.items():
        inner = _kv(v) if isinstance(v, dict) and v else _e(_fmt(v))
        rows.append(f"<dt>{_e(k)}</dt><dd>{inner}</dd>")
    return f'<dl class="kv"{attr}>' + "".join(rows) + "</dl>"


def _scalar(value):
    return value is None or isinstance(value, (str, int, float, bool))


def _severity_class(value):
    return f"sev-{value}" if value in codes.SEVERITY else "sev-unknown"


def _summary_value(summ, key, s):
    if key == "route":
        return s.route_name, None
    if key == "airframe":
        return s.airframe_name, None
    v = summ.get(key)
    partly = (summ.get("gap_km") or 0) > 0 or (summ.get("gap_minutes") or 0) > 0
    if key == "worst_severity":
        # over the screened part only when some of the route could not be screened
        return (f"{v} + gaps" if partly and v is not None else v), _severity_class(v)
    if key == "outcome":
        return OUTCOME_WORDS.get(v, v), f"outcome-cell-{v}" if v else None
    if key == "sld" and v is not None:
        return ", ".join(x for x in v if x != "none") or "none", None
    if key in ("departure_time", "arrival_time") and isinstance(v, str):
        return v.replace("T", " ").replace("Z", ""), None
    return v, None


def _summary_table(items):
    head = "".join(_cell(label(k), tag="th") for k in SUMMARY_COLUMNS)
    rows = []
    for s in items:
        summ = getattr(s, "summary", None) or {}
        cells = []
        for k in SUMMARY_COLUMNS:
            v, cls = _summary_value(summ, k, s)
            cells.append(_cell(v, cls=cls, unknown="unknown"))
        rows.append("<tr>" + "".join(cells) + "</tr>")
    return (
        '<table id="summary"><caption>Summary per route (details under each route)</caption>'
        "<thead><tr>" + head + "</tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
    )


def _segment_table(screening, index):
    props = [f.get("properties", f) for f in (getattr(screening, "segments", None) or [])]
    if not props:
        return "<p>No hazard segments along this route.</p>"
    cols = [k for k in SEGMENT_COLUMNS if any(k in p for p in props)]
    head = "".join(_cell(label(k), tag="th") for k in cols)
    rows = []
    for p in props:
        gap = p.get("kind") == "coverage-gap"
        cells = []
        for k in cols:
            v = p.get(k)
            if k == "severity" and gap:
                v = GAP_LABEL
            if k == "candidate_altitudes_ft" and v is None:
                v = p.get("ice_free_altitudes_ft")
            cls = _severity_class(v) if k == "severity" and not gap else None
            cells.append(_cell(v, cls=cls))
        row_attr = ' class="gap"' if gap else ""
        rows.append(f"<tr{row_attr}>" + "".join(cells) + "</tr>")
    return (
        f'<details><summary>Segments ({len(props)})</summary><div class="scroll">'
        f'<table class="segments" id="segments-{index}"><caption>Segments</caption>'
        f"<thead><tr>{head}</tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
        "</div></details>"
    )


def _candidates(screening):
    rows = []
    for f in getattr(screening, "segments", None) or []:
        p = f.get("properties", f)
        opts = p.get("vertical_options")
        if p.get("kind") != "icing" or not opts:
            continue
        for side in ("above", "below"):
            o = opts.get(side)
            if not o:
                rows.append([p.get("segment_id"), side, None, None, None, "none in range"])
                continue
            alt = o.get("altitude_ft")
            if o.get("flight_level") is not None:
                alt = f"{alt} ft (FL{int(o['flight_level']):03d})"
            rows.append(
                [
                    p.get("segment_id"),
                    side,
                    alt,
                    o.get("worst_severity"),
                    o.get("transit_severity"),
                    o.get("note"),
                ]
            )
    if not rows:
        return ""
    head = "".join(
        _cell(h, tag="th")
        for h in ("segment", "side", "altitude", "on the stretch", "while changing level", "note")
    )
    body = "".join("<tr>" + "".join(_cell(v) for v in r) + "</tr>" for r in rows)
    return (
        f"<details><summary>{_e(_CANDIDATES_HEAD)}</summary>"
        f'<div class="scroll"><table class="candidates"><thead><tr>{head}'
        f"</tr></thead><tbody>{body}</tbody></table></div></details>"
    )


def plain_outcome(summary) -> str:
    """One plain-language line on a route's outcome, for people.

    >>> plain_outcome({"outcome": "met", "outcome_reason": "moderate icing for 9 min"})
    'Condition met: moderate icing for 9 min.'
    """
    outcome = summary.get("outcome")
    reason = summary.get("outcome_reason") or ""
    if outcome is None:
        worst = summary.get("worst_severity")
        found = "unknown (nothing could be screened)" if worst is None else worst
        line = f"Worst icing on the route: {found}"
        minutes = summary.get("minutes_in_icing")
        if minutes:
            line += f", {minutes:g} min in icing"
        gap = summary.get("gap_km") or 0
        if gap:
            line += f"; {gap:g} km could not be screened (icing unknown there)"
        return line + "."
    return f"{OUTCOME_WORDS[outcome][0].upper()}{OUTCOME_WORDS[outcome][1:]}: {reason}."


def _holds(screening):
    """Return the holds (hovers, loiters) of a route, in words."""
    samples = getattr(screening, "samples", None)
    items = []
    for a, b, minutes in hold_runs(samples):
        t0 = np.datetime64(samples.time[a], "m").item().strftime("%H:%M")
        t1 = np.datetime64(samples.time[b - 1], "m").item().strftime("%H:%M")
        alt = screening.at_flight["altitude_ft"][a]
        items.append(
            f"<li>hold {minutes:.0f} min at {_e(samples.from_waypoint[a])}, {t0}\u2013{t1} UTC "
            f"({_e(_fmt(alt))} ft MSL)</li>"
        )
    if not items:
        return ""
    return '<p>Holds:</p><ul class="plain holds">' + "".join(items) + "</ul>"


def _picture(draw, screening, fmt, tmpdir, name, dpi):
    out = pathlib.Path(tmpdir) / f"{name}.{fmt}"
    draw(screening, out, dpi=dpi)
    mime = "image/png" if fmt == "png" else "image/svg+xml"
    data = base64.b64encode(out.read_bytes()).decode("ascii")
    return f"data:{mime};base64,{data}"


def write_report(
    screenings,
    path,
    *,
    caution=CAUTION,
    assumptions=None,
    provenance=None,
    pictures=True,
    picture_format="png",
    title=None,
    dpi=110,
    section_axis="msl",
):
    """Write one self-contained HTML report of the screened routes.

    Parameters
    ----------
    screenings : RouteScreening or sequence of RouteScreening
    path : str or pathlib.Path
        Output file (``.html``); written to a temporary file and renamed.
    caution : str
        The caution shown at the top and at the bottom.
    assumptions : dict, optional
        Run-wide assumptions (air mass, sub-adiabatic factor, coverage radius,
        model choices); each route's own ``screening.assumptions`` are shown too
        where they differ from these.
    provenance : dict, optional
        Run-wide provenance (forecast files, issue and valid times, tool version);
        each route's own ``screening.provenance`` likewise.
    pictures : bool
        Embed the cross-section of every route and one map of all routes.
    picture_format : {"png", "svg"}
        Format of the embedded pictures (as ``data:`` URIs).
    title : str, optional
    dpi : float
        Resolution of embedded PNG pictures. [1/in]
    section_axis : {"msl", "agl"}
        Vertical axis of the cross-sections (see :func:`plot_cross_section`).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        When the suffix is not ``.html``, the folder does not exist or the picture
        format is unknown.
    """
    path, _ = check_output_path(path, ("html", "htm"), what="report")
    if picture_format not in ("png", "svg"):
        raise InputError(
            f"picture format {picture_format!r} not supported",
            where="write_report(picture_format=...)",
            fix="use 'png' or 'svg'",
        )
    items = list(screenings) if isinstance(screenings, (list, tuple)) else [screenings]
    head = title or "Icing screening: " + ", ".join(dict.fromkeys(s.route_name for s in items))

    def shared(attr, given):
        own = [getattr(s, attr, None) or {} for s in items]
        if given is not None:
            return dict(given), own
        if not own:
            return {}, own
        # what every route shares is the run's; each route keeps what is its own
        run = {k: v for k, v in own[0].items() if all(k in o and o[k] == v for o in own)}
        return run, [{k: v for k, v in o.items() if k not in run} for o in own]

    run_assumptions, route_assumptions = shared("assumptions", assumptions)
    run_provenance, route_provenance = shared("provenance", provenance)
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_e(head)}</title><style>{_style()}</style></head><body>",
        f'<div class="caution" id="caution-top" role="note">{_e(caution)}</div>',
        f"<h1>{_e(head)}</h1>",
        _summary_table(items),
    ]
    pic = {"format": picture_format, "dpi": dpi, "axis": section_axis} if pictures else None
    with tempfile.TemporaryDirectory(prefix="icing-report-") as tmp:
        if pic and items:
            uri = _picture(plot_route_map, items, picture_format, tmp, "map", dpi)
            parts.append(
                f'<figure id="map"><img src="{uri}" alt="{_e("plan view of " + head)}">'
                f"<figcaption>Plan view: hazard segments by severity; dashed grey = "
                f"{_e(GAP_LABEL)}; circles = holds; dotted outline = forecast area."
                "</figcaption></figure>"
            )
        for i, s in enumerate(items, start=1):
            own = (route_assumptions[i - 1], route_provenance[i - 1])
            parts.append(_route_section(s, i, pic, tmp, own))
    parts += [
        "<h2>What this estimate assumes</h2>",
        _assumptions_for_users(run_assumptions),
        "<details><summary>Assumptions in full (technical)</summary>",
        _kv(run_assumptions, gid="assumptions"),
        "</details>",
        "<details><summary>Provenance (forecast files, times, tool)</summary>",
        _kv(run_provenance, gid="provenance"),
        "</details>",
        f'<div class="caution" id="caution-bottom" role="note">{_e(caution)}</div>',
        "</body></html>",
    ]
    text = "\n".join(p for p in parts if p)
    return replace_atomically(path, lambda tmp: tmp.write_text(text, encoding="utf-8"))


def _route_section(s, i, pic, tmp, own):
    """One route: outcome line, holds, cross-section, then the details, collapsed."""
    summ = getattr(s, "summary", None) or {}
    outcome = summ.get("outcome")
    cls = f"outcome outcome-{outcome}" if outcome else "outcome"
    parts = [
        f'<section id="route-{i}"><h2>{_e(s.route_name)}</h2>',
        f'<p class="{cls}" id="outcome-{i}">{_e(plain_outcome(summ))}</p>',
        f"<p>Airframe: {_e(s.airframe_name)}"
        + (f"; departs {_e(_when(summ.get('departure_time')))}" if summ else "")
        + (f", arrives {_e(_when(summ.get('arrival_time')))}" if summ else "")
        + "</p>",
        _holds(s),
        _members_paragraph(summ, ((s.assumptions or {}).get("members") or {}).get("kind")),
    ]
    if pic:
        draw = partial(plot_cross_section, axis=pic["axis"])
        uri = _picture(draw, s, pic["format"], tmp, f"xs{i}", pic["dpi"])
        parts.append(
            f'<figure class="cross-section"><img src="{uri}" '
            f'alt="{_e("cross-section of " + s.route_name)}"><figcaption>Severity '
            "along the route against altitude, with isotherms, cloud outline, SLD, "
            "coverage gaps, ground, planned flight path, holds and candidate altitudes."
            + (
                " Below it, the fraction of the members at light or worse and at moderate "
                "or worse: the darker, the more forecasts agree."
                if summ.get("members")
                else ""
            )
            + "</figcaption></figure>"
        )
    parts.append(_candidates(s))
    parts.append(_segment_table(s, i))
    extra = {
        label(k): v
        for k, v in summ.items()
        # candidate altitudes have their own table; the caution is shown top and bottom
        if k not in ("caution", "candidate_altitudes_wording", "route", "airframe")
        and not k.startswith("candidate_altitudes")
    }
    if extra:
        parts.append(
            "<details><summary>Route summary in full</summary>" + _kv(extra) + "</details>"
        )
    if own[0]:
        parts.append(_assumptions_for_users(own[0], generic=False, gid=f"assumptions-plain-{i}"))
        parts.append(
            "<details><summary>Assumptions for this route</summary>" + _kv(own[0]) + "</details>"
        )
    if own[1]:
        parts.append(
            "<details><summary>Provenance for this route</summary>" + _kv(own[1]) + "</details>"
        )
    parts.append("</section>")
    return "\n".join(p for p in parts if p)


#: What the members of a run are, in words.
_MEMBER_KINDS = {
    "ensemble": "forecasts of an ensemble",
    "spread": "variants of the diagnosis's uncertain choices on one forecast",
}


def _members_paragraph(summ, kind=None):
    """How many members and which statistic, the fractions in plain words, each member."""
    members = summ.get("members")
    if not members:
        return ""
    stat = summ.get("member_statistic")
    what = _MEMBER_KINDS.get(kind, "forecasts")
    lines = [
        f"Screened with {members} members ({what}); "
        f"the severity shown is the {stat} member's word, with the worst member's beside "
        "it. A fraction is a share of the members: 0.75 at moderate means 3 of 4 forecasts "
        "put moderate or severe icing at that place. It is not a calibrated probability.",
    ]
    if summ.get("member_fraction_words"):
        lines.append(
            f"On this route: {summ['member_fraction_words']}; worst member: "
            f"{summ.get('severity_worst_member') or 'unknown'}."
        )
    if summ.get("member_gap_km"):
        lines.append(
            f"{_num(summ['member_gap_km'])} km where at least one member has no data (a "
            "coverage gap: unknown, not 'no icing')."
        )
    rows = "".join(
        "<tr>"
        + _cell(m.get("member"))
        + _cell(m.get("worst_severity"), cls=_severity_class(m.get("worst_severity")))
        + _cell(m.get("gap_km"))
        + _cell("; ".join(f"{g['start_km']}-{g['end_km']} km: {g['reason']}" for g in m["gaps"]))
        + "</tr>"
        for m in summ.get("member_coverage") or []
    )
    head = "".join(
        _cell(h, tag="th") for h in ("member", "worst icing", "no data [km]", "where, why")
    )
    return (
        '<div class="members">'
        + "".join(f"<p>{_e(t)}</p>" for t in lines)
        + '<details><summary>Each member</summary><div class="scroll"><table '
        f'class="members"><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table></div>'
        "</details></div>"
    )


def _num(value):
    """Return a number as people write it (6 not 6.0; 1,000 not 1000.0); text as it is."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return f"{value:,.0f}" if float(value).is_integer() else f"{value:,g}"
    return "unknown" if value is None else str(value)


def _when(iso):
    """Return an ISO 8601 UTC time as people read it ("2027-01-14 09:00 UTC")."""
    if not isinstance(iso, str) or len(iso) < 16:
        return "unknown"
    return f"{iso[:10]} {iso[11:16]} UTC"


def _unchecked(mapping, path=()):
    """Return every assumption whose text says it was not checked against its published source."""
    out = []
    for k, v in (mapping or {}).items():
        if isinstance(v, dict):
            out += _unchecked(v, path + (str(k),))
        elif isinstance(v, str) and "from memory" in v:
            out.append((" \u203a ".join(path + (str(k),)), v))
    return out


def _assumptions_for_users(a, *, generic=True, gid="assumptions-plain"):
    """Return the main assumptions, in sentences a pilot or dispatcher reads.

    ``generic`` adds the sentences that hold for every run (the method in brief).
    """
    if not a:
        return "" if not generic else "<p>\u2014</p>"
    col, af, cov = a.get("column") or {}, a.get("airframe") or {}, a.get("coverage") or {}
    scr = a.get("screening") or {}
    items = []
    air = col.get("air_mass")
    if isinstance(air, dict):
        items.append(
            f"Droplets are sized for {air.get('name')} air ({air.get('description')}): "
            "fewer, larger drops, the cautious choice for icing."
        )
    if af:
        items.append(
            f"Airframe {af.get('name')}: {af.get('ice_protection')} ice protection; it is taken "
            f"to carry {_num(af.get('ice_tolerance_mm'))} mm of ice on its "
            f"{af.get('reference')}; cruise {_num(af.get('true_airspeed_kt'))} kt unless the "
            "route says otherwise."
        )
    if cov:
        items.append(
            f"A point counts as covered by the forecast within {_num(cov.get('radius_km'))} km "
            f"and {_num(cov.get('time_tolerance_h'))} h of forecast data; elsewhere it is a "
            "coverage gap (icing unknown there, never 'no icing')."
        )
    if scr:
        items.append(
            f"The route is sampled every {_num(scr.get('sample_step_km'))} km; candidate "
            f"altitudes every {_num(scr.get('candidate_altitude_step_ft'))} ft."
        )
    if generic:
        items.append(
            "Cloud liquid is the larger of the forecast model's cloud water and an estimate "
            "from the cloud base; severity comes from the catch rate on the airframe's most "
            "exposed part, its ice protection and its ice tolerance, raised where large drops "
            "are found."
        )
    unchecked = _unchecked(a)
    if unchecked:
        items.append(
            "Not yet checked against their published source (treat with care): "
            + "; ".join(f"{where} ({_user_words(v)})" for where, v in unchecked)
            + "."
        )
    return (
        '<ul class="plain" id="assumptions-plain">'
        + "".join(f"<li>{_e(t)}</li>" for t in items)
        + "</ul>"
    )
