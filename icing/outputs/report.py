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

import numpy as np

from icing.caution import CAUTION
from icing.errors import InputError
from icing.outputs.atomic import replace_atomically
from icing.outputs.plot import (
    GAP_LABEL,
    check_output_path,
    plot_cross_section,
    plot_route_map,
)

__all__ = ["write_report", "SEGMENT_COLUMNS"]

#: Segment properties shown in the segment table, in order, with their headings.
SEGMENT_COLUMNS = (
    ("segment_id", "segment"),
    ("kind", "kind"),
    ("severity", "severity"),
    ("ice_type", "ice type"),
    ("sld", "SLD"),
    ("from_waypoint", "from"),
    ("to_waypoint", "to"),
    ("start_km", "start [km]"),
    ("end_km", "end [km]"),
    ("start_time", "start time"),
    ("end_time", "end time"),
    ("duration_min", "duration [min]"),
    ("altitude_ft_min", "alt. min [ft]"),
    ("altitude_ft_max", "alt. max [ft]"),
    ("temperature_c_min", "T min [\u00b0C]"),
    ("temperature_c_max", "T max [\u00b0C]"),
    ("lwc_g_m3_max", "LWC max [g/m\u00b3]"),
    ("mvd_um_max", "MVD max [\u00b5m]"),
    ("sld_lwc_g_m3_max", "SLD LWC max [g/m\u00b3]"),
    ("sld_mvd_um_max", "SLD MVD max [\u00b5m]"),
    ("collector", "collector"),
    ("collection_efficiency_max", "E max"),
    ("accretion_rate_mm_h_max", "rate max [mm/h]"),
    ("accretion_mm", "ice added [mm]"),
    ("basis", "liquid from"),
    ("ice_free_altitudes_ft", "candidate ice-free altitudes [ft]"),
)

#: Summary keys not shown as columns (the caution is shown top and bottom).
_NOT_COLUMNS = ("route", "airframe", "caution", "candidate_altitudes_wording")

_CANDIDATES_HEAD = (
    "Candidate altitudes with less icing \u2014 to check against official advisories; "
    "not advice to fly"
)

_STYLE = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:1.5em auto;max-width:78em;
color:#1a1a1a;line-height:1.4;padding:0 1em}
.caution{border:2px solid #222;background:#fff8d8;padding:.7em 1em;margin:1em 0;font-weight:600}
table{border-collapse:collapse;margin:.6em 0 1.4em;font-size:.86em}
th,td{border:1px solid #999;padding:.25em .5em;text-align:left;vertical-align:top}
th{background:#eeeeee}
td.num{text-align:right;font-variant-numeric:tabular-nums}
.sev-severe{font-weight:700;text-decoration:underline}.sev-moderate{font-weight:700}
.gap{background:#e3e3e3;font-style:italic}
figure{margin:1em 0}figure img{max-width:100%;height:auto;border:1px solid #ccc}
figcaption{font-size:.85em;color:#444}
dl.kv{display:grid;grid-template-columns:max-content auto;gap:.15em 1em;font-size:.9em}
dl.kv dt{font-weight:600}dl.kv dd{margin:0}
"""


def _e(value):
    return html.escape(str(value), quote=True)


def _fmt(value):
    """Plain text for a table cell."""
    if value is None:
        return "\u2014"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        if not math.isfinite(value):
            return "\u2014"
        return f"{value:.3g}" if abs(value) < 1 else f"{value:,.1f}".rstrip("0").rstrip(".")
    if isinstance(value, (list, tuple)):
        return ", ".join(_fmt(v) for v in value) if value else "\u2014"
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_fmt(v)}" for k, v in value.items())
    if isinstance(value, np.generic):
        return _fmt(value.item())
    if isinstance(value, np.ndarray):
        return _fmt(value.tolist())
    return str(value)


def _cell(value, *, tag="td", cls=None):
    numeric = isinstance(value, (int, float)) and not isinstance(value, bool)
    classes = " ".join(c for c in (cls, "num" if numeric else None) if c)
    attr = f' class="{_e(classes)}"' if classes else ""
    return f"<{tag}{attr}>{_e(_fmt(value))}</{tag}>"


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


def _summary_table(items):
    keys = []
    for s in items:
        for k, v in (getattr(s, "summary", None) or {}).items():
            if k not in _NOT_COLUMNS and _scalar(v) and k not in keys:
                keys.append(k)
    head = "".join(_cell(h.replace("_", " "), tag="th") for h in ["route", "airframe"] + keys)
    rows = []
    for s in items:
        summ = getattr(s, "summary", None) or {}
        cells = [_cell(s.route_name), _cell(s.airframe_name)]
        for k in keys:
            v = summ.get(k)
            cls = f"sev-{v}" if k.startswith("worst") and isinstance(v, str) else None
            cells.append(_cell(v, cls=cls))
        rows.append("<tr>" + "".join(cells) + "</tr>")
    return (
        '<table id="summary"><caption>Summary per route</caption><thead><tr>'
        + head
        + "</tr></thead><tbody>"
        + "".join(rows)
        + "</tbody></table>"
    )


def _segment_table(screening, index):
    props = [f.get("properties", f) for f in (getattr(screening, "segments", None) or [])]
    if not props:
        return "<p>No hazard segments along this route.</p>"
    cols = [(k, h) for k, h in SEGMENT_COLUMNS if any(k in p for p in props)]
    head = "".join(_cell(h, tag="th") for _, h in cols)
    rows = []
    for p in props:
        gap = p.get("kind") == "coverage-gap"
        cells = []
        for k, _ in cols:
            v = p.get(k)
            if k == "severity" and gap:
                v = GAP_LABEL
            cls = f"sev-{v}" if k == "severity" and isinstance(v, str) else None
            cells.append(_cell(v, cls=cls))
        row_attr = ' class="gap"' if gap else ""
        rows.append(f"<tr{row_attr}>" + "".join(cells) + "</tr>")
    return (
        f'<table class="segments" id="segments-{index}"><caption>Segments</caption>'
        f"<thead><tr>{head}</tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
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
        f'<h3>{_e(_CANDIDATES_HEAD)}</h3><table class="candidates"><thead><tr>{head}'
        f"</tr></thead><tbody>{body}</tbody></table>"
    )


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
    head = title or "Icing screening: " + ", ".join(s.route_name for s in items)

    def shared(attr, given):
        own = [getattr(s, attr, None) or {} for s in items]
        if given is not None:
            return dict(given), own
        if own and all(o == own[0] for o in own):
            return dict(own[0]), [{} for _ in own]
        return {}, own

    run_assumptions, route_assumptions = shared("assumptions", assumptions)
    run_provenance, route_provenance = shared("provenance", provenance)

    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_e(head)}</title><style>{_STYLE}</style></head><body>",
        f'<div class="caution" id="caution-top" role="note">{_e(caution)}</div>',
        f"<h1>{_e(head)}</h1>",
        _summary_table(items),
    ]
    with tempfile.TemporaryDirectory(prefix="icing-report-") as tmp:
        if pictures and items:
            uri = _picture(plot_route_map, items, picture_format, tmp, "map", dpi)
            parts.append(
                f'<figure id="map"><img src="{uri}" alt="{_e("plan view of " + head)}">'
                f"<figcaption>Plan view: hazard segments by severity; dashed grey = "
                f"{_e(GAP_LABEL)}.</figcaption></figure>"
            )
        for i, s in enumerate(items, start=1):
            parts.append(f'<section id="route-{i}"><h2>{_e(s.route_name)}</h2>')
            parts.append(f"<p>Airframe: {_e(s.airframe_name)}</p>")
            if pictures:
                uri = _picture(plot_cross_section, s, picture_format, tmp, f"xs{i}", dpi)
                parts.append(
                    f'<figure class="cross-section"><img src="{uri}" '
                    f'alt="{_e("cross-section of " + s.route_name)}"><figcaption>Severity '
                    "along the route against altitude, with isotherms, cloud outline, SLD, "
                    "coverage gaps, ground, planned flight path and candidate altitudes."
                    "</figcaption></figure>"
                )
            parts.append(_candidates(s))
            parts.append(_segment_table(s, i))
            extra = {
                k: v
                for k, v in (s.summary or {}).items()
                # candidate altitudes have their own table
                if not _scalar(v) and not k.startswith("candidate_altitudes")
            }
            if extra:
                parts.append("<h3>Route summary details</h3>" + _kv(extra))
            if route_assumptions[i - 1]:
                parts.append("<h3>Assumptions for this route</h3>" + _kv(route_assumptions[i - 1]))
            if route_provenance[i - 1]:
                parts.append("<h3>Provenance for this route</h3>" + _kv(route_provenance[i - 1]))
            parts.append("</section>")
    parts += [
        "<h2>Assumptions</h2>",
        _kv(run_assumptions, gid="assumptions"),
        "<h2>Provenance</h2>",
        _kv(run_provenance, gid="provenance"),
        f'<div class="caution" id="caution-bottom" role="note">{_e(caution)}</div>',
        "</body></html>",
    ]
    text = "\n".join(p for p in parts if p)
    return replace_atomically(path, lambda tmp: tmp.write_text(text, encoding="utf-8"))
