"""The one output writer of a run, shared by ``icing screen`` and ``icing demo``.

Every output of a run is written together or not at all
(:func:`icing.outputs.atomic.write_together`): each is complete in a temporary file
first, and only when all are complete are they renamed into place. No output may be an
input of the run (the route, forecast and airframe files) or another output of it (the
summary beside ``-o``, the styles beside a GeoPackage, one picture per route).
"""

from __future__ import annotations

import json
from functools import partial
from pathlib import Path

from icing.hazards.segments import feature_collection
from icing.outputs.atomic import write_together
from icing.outputs.table import samples_csv

__all__ = [
    "write_outputs",
    "output_targets",
    "write_grid_outputs",
    "grid_output_targets",
    "member_fraction_path",
]


def _sibling_json(path: Path) -> Path:
    return path.with_name(path.stem + ".summary.json")


def _text(text):
    return lambda tmp: tmp.write_text(text, encoding="utf-8")


def _forecast_inputs(screenings):
    """Return the forecast files named in the screenings' provenance."""
    out = []
    for s in screenings:
        files = (getattr(s, "provenance", None) or {}).get("files") or []
        out += [(f, "forecast file") for f in ([files] if isinstance(files, str) else files)]
    return out


def write_outputs(
    screenings,
    *,
    out_geojson=None,
    plot=None,
    map_=None,
    report=None,
    samples=None,
    section_axis="msl",
    inputs=(),
):
    """Write the outputs of a run, all together or none (see the module docstring).

    ``out_geojson`` may name a GeoJSON (``.geojson``/``.json``), GeoPackage
    (``.gpkg``, with ``.qml`` and ``.sld`` styles beside it) or KML (``.kml``) file;
    the route summaries always go into ``OUT.summary.json`` beside it. ``inputs``
    lists the run's input files (paths, or ``(path, what)`` pairs); the forecast files
    of the screenings' provenance are added. An output at an input's path or at
    another output's path is refused (:class:`icing.errors.InputError`) before
    anything is written.

    Returns the FeatureCollection dict and the paths written. With several routes,
    ``plot`` names a pattern: ``STEM-<route>.SUFFIX`` per route (and the departure
    time when a route is screened at several departures).
    """
    fc = feature_collection(screenings)
    files = []
    if out_geojson:
        files += _main_output(screenings, fc, Path(out_geojson))
    if samples:
        files.append((Path(samples), _text(samples_csv(screenings)), "--samples"))
    files += _pictures(screenings, plot, map_, report, section_axis)
    given = [(p, "input file") if isinstance(p, (str, Path)) else tuple(p) for p in inputs]
    written = write_together(files, inputs=given + _forecast_inputs(screenings))
    return fc, written


def output_targets(*, out_geojson=None, samples=None, plot=None, map_=None, report=None):
    """Return ``(path, role)`` of the files a run with these options writes.

    Checked before the work starts (:func:`icing.outputs.atomic.check_targets`), so a
    run that would overwrite an input stops at once; with several routes the pictures
    get one name per route, checked again when they are written.
    """
    out = []
    if out_geojson:
        p = Path(out_geojson)
        out += [(p, "-o")] + [(q, role) for q, role in _beside(p)]
    for path, role in ((samples, "--samples"), (plot, "--plot"), (map_, "--map")):
        if path:
            out.append((Path(path), role))
    if report:
        out.append((Path(report), "--report"))
    return out


def _beside(p):
    """Return the files written beside the -o file: its summary, and a GeoPackage's styles."""
    out = [(_sibling_json(p), "the summary beside -o")]
    if p.suffix.lower() == ".gpkg":
        out += [(p.with_suffix(".qml"), "the QGIS style beside -o")]
        out += [(p.with_suffix(".sld"), "the SLD style beside -o")]
    return out


def _main_output(screenings, fc, p):
    """Return the -o file (GeoJSON, KML or GeoPackage) and the files beside it."""
    kind = p.suffix.lower()
    side = {k: v for k, v in fc.items() if k not in ("type", "features")}
    texts = [_text(json.dumps(side, indent=1, allow_nan=False))]
    if kind == ".gpkg":
        from icing.outputs.gis import geopackage_writer, qml_text, sld_text

        main = geopackage_writer(screenings, fc)
        texts += [_text(qml_text()), _text(sld_text())]
    elif kind == ".kml":
        from icing.outputs.gis import kml_text

        main = _text(kml_text(screenings))
    else:
        main = _text(json.dumps(fc, indent=1, allow_nan=False))
    return [(p, main, "-o")] + [
        (q, write, role) for (q, role), write in zip(_beside(p), texts, strict=True)
    ]


def _pictures(screenings, plot, map_, report, section_axis):
    """Return the pictures and the report: (target, writer of a temporary file, role)."""
    out = []
    if plot:
        from icing.outputs.plot import plot_cross_section

        plot = Path(plot)
        draw = partial(plot_cross_section, axis=section_axis)
        for s, target in zip(screenings, _plot_names(screenings, plot), strict=True):
            out.append((target, partial(_draw, draw, s), "--plot"))
    if map_:
        from icing.outputs.plot import plot_route_map

        out.append((Path(map_), partial(_draw, plot_route_map, screenings), "--map"))
    if report:
        from icing.outputs.report import write_report

        draw = partial(write_report, section_axis=section_axis)
        out.append((Path(report), partial(_draw, draw, screenings), "--report"))
    return out


def _draw(draw, what, tmp):
    draw(what, tmp)


def _plot_names(screenings, plot):
    """One picture per route: ``STEM-<route>[-<departure>]``, never two at one name."""
    if len(screenings) == 1:
        return [plot]
    names = [s.route_name for s in screenings]
    out, used = [], set()
    for s in screenings:
        tag = _safe(s.route_name)
        if names.count(s.route_name) > 1:
            tag += "-" + s.summary.get("departure_time", "").replace(":", "")[:15]
        target, k = plot.with_name(f"{plot.stem}-{tag}{plot.suffix}"), 1
        while target in used:  # names that differ only in characters dropped by _safe
            k += 1
            target = plot.with_name(f"{plot.stem}-{tag}-{k}{plot.suffix}")
        used.add(target)
        out.append(target)
    return out


def _safe(name: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in name).strip("-") or "route"


def grid_output_targets(*, out_geojson, netcdf=None, maps=None):
    """Return ``(path, role)`` of the files a grid run writes that are known before it runs.

    The maps' own names depend on the valid times and bands; their folder must not
    be a file.
    """
    out = [(Path(out_geojson), "-o")]
    if netcdf:
        out.append((Path(netcdf), "--netcdf"))
    if maps and Path(maps).exists() and not Path(maps).is_dir():
        from icing.errors import InputError

        raise InputError(
            "--maps names a file, not a folder", path=maps, fix="give a folder for the maps"
        )
    return out


def grid_map_name(result, t, b) -> str:
    """File name of the map of band ``b`` at valid time ``t``: ``icing-<time>-<band>ft.png``."""

    def ft(v):
        return f"{'m' if v < 0 else ''}{abs(v):05.0f}"

    lo, hi = result.bands.bounds_ft(b)
    when = result.time_text(t).replace("-", "").replace(":", "")[:13] + "Z"
    return f"icing-{when}-{ft(lo)}-{ft(hi)}ft.png"


def member_fraction_path(out_geojson) -> Path:
    """Return the path of the member-fraction layer beside ``-o`` (an ensemble's grid).

    >>> member_fraction_path("out/grid.geojson").as_posix()
    'out/grid.member-fraction.geojson'
    """
    out = Path(out_geojson)
    return out.with_name(f"{out.stem}.member-fraction{out.suffix}")


def grid_member_map_name(result, t, b) -> str:
    """File name of an ensemble's fractions map: the severity map's, ending ``-members.png``."""
    return grid_map_name(result, t, b)[: -len(".png")] + "-members.png"


def write_grid_outputs(
    result, *, out_geojson, netcdf=None, maps=None, inputs=(), features=None, fractions=None
):
    """Write a grid run's GeoJSON, NetCDF and maps, all together or none.

    ``features`` are the polygons when already built
    (:func:`icing.hazards.gridded.grid_features`), or a function returning them (a
    future's ``result``: the NetCDF is then written first, while they are built);
    ``fractions`` an ensemble's member-fraction polygons, or such a function
    (:func:`icing.hazards.gridded.member_fraction_features`), written beside ``-o``
    (:func:`member_fraction_path`) with a fractions map beside each severity map.
    Returns the FeatureCollection and the paths written (in the order -o, the
    member-fraction layer, --netcdf, the maps); outputs at an input's path or at each
    other's are refused before anything is written.
    """
    from icing.hazards.gridded import grid_feature_collection, member_fraction_features

    built = {}

    def collection(tmp):
        fc = grid_feature_collection(result, features() if callable(features) else features)
        built["fc"] = fc
        # compact: a grid's polygons are large, and GIS readers do not need the indentation
        _text(json.dumps(fc, separators=(",", ":"), allow_nan=False))(tmp)

    def fraction_layer(tmp):
        polys = fractions() if callable(fractions) else fractions
        if polys is None:
            polys = member_fraction_features(result)
        layer = grid_feature_collection(result, polys, product="icing grid member fractions")
        _text(json.dumps(layer, separators=(",", ":"), allow_nan=False))(tmp)

    files = [(Path(out_geojson), collection, "-o")]
    if result.members > 1:
        role = "the member-fraction layer beside -o"
        files.append((member_fraction_path(out_geojson), fraction_layer, role))
    if netcdf:
        from icing.outputs.gridnc import write_grid_netcdf

        # first: polygons still being built are waited for after it
        files.insert(0, (Path(netcdf), partial(write_grid_netcdf, result), "--netcdf"))
    if maps:
        from icing.outputs.plot.gridmap import plot_grid_map

        nt, nb = result.severity.shape[:2]
        for t in range(nt):
            for b in range(nb):
                draw = partial(plot_grid_map, result, t, b)
                files.append((Path(maps) / grid_map_name(result, t, b), draw, "--maps"))
                if result.members > 1:
                    from icing.outputs.plot.gridmembers import plot_grid_member_map

                    draw = partial(plot_grid_member_map, result, t, b)
                    name = grid_member_map_name(result, t, b)
                    files.append((Path(maps) / name, draw, "--maps"))
    given = [(p, "input file") if isinstance(p, (str, Path)) else tuple(p) for p in inputs]
    files_in = [(f, "forecast file") for f in (result.provenance or {}).get("files") or []]
    written = write_together(files, inputs=given + files_in)
    if netcdf:  # said in the order -o, its companion layer, --netcdf, the maps
        written.insert(2 if result.members > 1 else 1, written.pop(0))
    return built["fc"], written
