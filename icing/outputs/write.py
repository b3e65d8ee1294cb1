"""The one output writer of a run, shared by ``icing screen`` and ``icing demo``.

Each output is complete in memory (or in a temporary file) first and is then
renamed into place (:mod:`icing.outputs.atomic`).
"""

from __future__ import annotations

import json
from functools import partial
from pathlib import Path

from icing.hazards.segments import feature_collection
from icing.outputs.atomic import atomic_write
from icing.outputs.table import samples_csv

__all__ = ["write_outputs"]


def _sibling_json(path: Path) -> Path:
    return path.with_name(path.stem + ".summary.json")


def write_outputs(
    screenings,
    *,
    out_geojson=None,
    plot=None,
    map_=None,
    report=None,
    samples=None,
    section_axis="msl",
):
    """Write the outputs of a run; each is complete in memory first, then written atomically.

    ``out_geojson`` may name a GeoJSON (``.geojson``/``.json``), GeoPackage
    (``.gpkg``, with ``.qml`` and ``.sld`` styles beside it) or KML (``.kml``) file;
    the route summaries always go into ``OUT.summary.json`` beside it.

    Returns the FeatureCollection dict and the paths written. With several routes,
    ``plot`` names a pattern: ``STEM-<route>.SUFFIX`` per route (and the departure
    time when a route is screened at several departures).
    """
    fc = feature_collection(screenings)
    pending, gis = [], []
    if out_geojson:
        p = Path(out_geojson)
        kind = p.suffix.lower()
        if kind == ".kml":
            from icing.outputs.gis import kml_text

            pending.append((p, kml_text(screenings)))
        elif kind == ".gpkg":
            gis.append(p)
        else:
            pending.append((p, json.dumps(fc, indent=1, allow_nan=False)))
        side = {k: v for k, v in fc.items() if k not in ("type", "features")}
        pending.append((_sibling_json(p), json.dumps(side, indent=1, allow_nan=False)))
    if samples:
        pending.append((Path(samples), samples_csv(screenings)))
    for p, text in pending:
        atomic_write(p, text)
    written = [p for p, _ in pending]
    for p in gis:
        from icing.outputs.gis import write_geopackage

        written += write_geopackage(screenings, fc, p)
    pictures = []  # (function, what, target); their folders are made before any is drawn
    if plot:
        from icing.outputs.plot import plot_cross_section

        plot = Path(plot)
        names = [s.route_name for s in screenings]
        for s in screenings:
            tag = _safe(s.route_name)
            if names.count(s.route_name) > 1:
                tag += "-" + s.summary.get("departure_time", "").replace(":", "")[:15]
            target = (
                plot if len(screenings) == 1 else plot.with_name(f"{plot.stem}-{tag}{plot.suffix}")
            )
            pictures.append((partial(plot_cross_section, axis=section_axis), s, target))
    if map_:
        from icing.outputs.plot import plot_route_map

        pictures.append((plot_route_map, screenings, Path(map_)))
    if report:
        from icing.outputs.report import write_report

        pictures.append(
            (partial(write_report, section_axis=section_axis), screenings, Path(report))
        )
    for _, _, target in pictures:
        target.parent.mkdir(parents=True, exist_ok=True)
    for fn, what, target in pictures:  # each writes atomically
        written.append(fn(what, target))
    return fc, written


def _safe(name: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in name).strip("-") or "route"
