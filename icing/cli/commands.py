"""The subcommands: screen, demo, profile, grid, airframes (each returns its exit code)."""

from __future__ import annotations

import json
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

from icing import codes
from icing.caution import CAUTION
from icing.cli.inputs import (
    _check_route_airframes,
    _check_suffix,
    _column_options,
    _condition,
    _departures,
    _fail_code,
    _forecast,
    _forecast_kwargs,
    _forecast_paths,
    _inputs,
    _latlon,
    _progress,
    _require_airframes,
)
from icing.cli.options import EXIT_OK
from icing.outputs.atomic import check_targets
from icing.outputs.table import departure_table, format_number, summary_table
from icing.outputs.write import output_targets, write_outputs

__all__ = ["cmd_screen", "cmd_demo", "cmd_profile", "cmd_grid", "cmd_airframes", "grid_table"]


def cmd_screen(args) -> int:
    """``icing screen``: screen routes against a forecast; exit 0, 3 when a condition is met."""
    from icing.route import load_routes
    from icing.runs.screen import ScreenOptions, screen_routes

    _check_suffix(args.output, {".geojson", ".json", ".gpkg", ".kml"}, "-o/--output")
    _check_suffix(args.plot, {".png", ".svg"}, "--plot")
    _check_suffix(args.map, {".png", ".svg"}, "--map")
    _check_suffix(args.report, {".html", ".htm"}, "--report")
    inputs = _inputs(args)
    check_targets(
        output_targets(
            out_geojson=args.output,
            samples=args.samples,
            plot=args.plot,
            map_=args.map,
            report=args.report,
        ),
        inputs,
    )
    condition = _condition(args)
    departures = _departures(args)
    airframe = None
    if args.airframe is not None:
        from icing.airframes import load_airframe

        airframe = load_airframe(args.airframe)
    routes = [
        r
        for path in args.routes
        for r in load_routes(path, altitude_ft=args.altitude_ft, flight_level=args.flight_level)
    ]
    if airframe is None:
        _require_airframes(routes)
        _check_route_airframes(routes)
    forecast = _forecast(args)
    opts = ScreenOptions(
        step_km=args.step_km,
        all_segments=args.all_segments,
        condition=condition,
        member_statistic=args.member_statistic,
        spread=args.spread,
    )
    screenings = []
    for t in departures:
        screenings += screen_routes(
            routes,
            forecast,
            airframe=airframe,
            tas_kt=args.tas_kt,
            departure=t,
            options=opts,
            column_options=_column_options(args),
            id_tag="" if len(departures) == 1 else t.strftime("%Y%m%dT%H%MZ-"),
            progress=_progress
            if len(routes) * len(departures) > 3 and sys.stderr.isatty()
            else None,
        )
    fc, written = write_outputs(
        screenings,
        out_geojson=args.output,
        plot=args.plot,
        map_=args.map,
        report=args.report,
        samples=args.samples,
        section_axis=args.section_axis,
        inputs=inputs,
    )
    summaries = fc["summaries"]
    window = len(departures) > 1
    if args.json:
        doc = {"summaries": summaries, "caution": CAUTION}
        print(json.dumps(doc, indent=1, allow_nan=False))
    else:
        print(
            summary_table(summaries)
            if not window
            else departure_table(summaries) + "\n\n" + summary_table(summaries)
        )
        for p in written:
            print(f"wrote {p}", file=sys.stderr)
    return _fail_code(summaries, window=window)


def cmd_demo(args) -> int:
    """``icing demo``: run the main job on the bundled demo scenario."""
    from icing.demo import run_demo

    out = Path(args.out)
    summaries, written = run_demo(out)
    print(summary_table(summaries))
    for p in written:
        print(f"wrote {p}")
    return EXIT_OK


def cmd_profile(args) -> int:
    """``icing profile``: one forecast column, level by level."""
    from icing.runs.point import diagnose_point

    lat, lon = _latlon(args)
    forecast = _forecast(args)
    import numpy as np

    from icing.route import parse_time

    t = parse_time(args.time, where="--time") if args.time else None
    tt = None if t is None else np.datetime64(t.replace(tzinfo=None), "ms")  # UTC
    result = diagnose_point(
        forecast,
        lat,
        lon,
        tt,
        airframe=args.airframe,
        column_options=_column_options(args),
        tas_kt=args.tas_kt,
    )
    result.update(
        lat=lat,
        lon=lon,
        caution=CAUTION,
        provenance=forecast.describe(),
        assumptions=_column_options(args).describe(),
    )
    if args.json:
        print(json.dumps(result, indent=1, allow_nan=False, default=str))
        return EXIT_OK
    if not result["covered"]:
        print(f"coverage gap at {lat},{lon}: {result['gap_reason']} (icing unknown, not absent)")
        print(CAUTION)
        return EXIT_OK
    head = [
        "p hPa",
        "z m",
        "T C",
        "RH %",
        "cloud",
        "LWC g/m3",
        "MVD um",
        "SLD",
        "E",
        "mm/h",
        "ice",
        "severity",
    ]
    rows = []
    for lv in result["levels"]:
        rows.append(
            [
                format_number(lv["pressure_hpa"], 0),
                format_number(lv["height_m"], 0),
                format_number(lv["temperature_c"], 1),
                format_number(lv["relative_humidity_pct"], 0),
                "yes" if lv["cloud"] else "",
                format_number(lv["lwc_g_m3"], 3),
                format_number(lv["mvd_um"], 1),
                lv["sld"] if lv["sld"] != "none" else "",
                format_number(lv["collection_efficiency"], 2),
                format_number(lv["accretion_rate_mm_h"], 1),
                lv["ice_type"] if lv["ice_type"] not in (None, "none") else "",
                ("below ground" if lv["below_ground"] else (lv["severity"] or "")),
            ]
        )
    widths = [max(len(str(r[i])) for r in rows + [head]) for i in range(len(head))]
    print("  ".join(h.rjust(w) for h, w in zip(head, widths, strict=True)))
    for r in reversed(rows):
        print("  ".join(str(c).rjust(w) for c, w in zip(r, widths, strict=True)))
    for w in result.get("warnings", []):
        print(f"warning: {w}")
    print(CAUTION)
    return EXIT_OK


def cmd_grid(args) -> int:
    """``icing grid``: the hazard over a whole forecast, by altitude band."""
    from icing.runs.grid import plain_pages

    with plain_pages():  # the whole grid's arrays, from the run to the outputs
        return _grid(args)


def _grid(args) -> int:
    from icing.airframes import load_airframe
    from icing.hazards.bands import parse_bands
    from icing.hazards.ensemble import MemberStatistic
    from icing.hazards.gridded import grid_features
    from icing.outputs.write import grid_output_targets, write_grid_outputs
    from icing.runs.grid import GridOptions, grid_forecast, start_workers

    _check_suffix(args.output, {".geojson", ".json"}, "-o/--output")
    _check_suffix(args.netcdf, {".nc"}, "--netcdf")
    bands = parse_bands(args.bands_ft)
    MemberStatistic.parse(args.member_statistic)  # refused before any file is read
    inputs = [(p, "forecast file") for p in _forecast_paths(args)]
    if Path(args.airframe).is_file():
        inputs.append((args.airframe, "airframe file"))
    targets = grid_output_targets(out_geojson=args.output, netcdf=args.netcdf, maps=args.maps)
    check_targets(targets, inputs)
    airframe = load_airframe(args.airframe)
    times = None
    if args.time:
        import numpy as np

        from icing.route import parse_time

        t = parse_time(args.time, where="--time")
        times = [np.datetime64(t.replace(tzinfo=None), "ms")]  # UTC
    elif args.all_times:
        times = "all"
    if args.scheduler is None and (args.workers is None or args.workers > 1):
        start_workers()  # the workers' server starts while the forecast is opened
    forecast = _forecast(args)
    bar = sys.stderr.isatty()
    result = grid_forecast(
        forecast,
        airframe=airframe,
        options=GridOptions(
            bands=bands,
            times=times,
            workers=args.workers,
            scheduler=args.scheduler,
            member_statistic=args.member_statistic,
            spread=args.spread,
        ),
        column_options=_column_options(args),
        load_options=_forecast_kwargs(args),
        progress=_counter("gridding", "blocks") if bar else None,
    )
    # the polygons are built in a thread while the NetCDF is written (GEOS and the
    # netCDF library both work outside the interpreter lock for most of it)
    with ThreadPoolExecutor(max_workers=1) as pool:
        features = pool.submit(
            grid_features, result, progress=_counter("outlining", "maps") if bar else None
        )
        fractions = None
        if result.members > 1:
            from icing.hazards.gridded import member_fraction_features

            fractions = pool.submit(
                member_fraction_features,
                result,
                progress=_counter("outlining member fractions", "maps") if bar else None,
            ).result
        fc, written = write_grid_outputs(
            result,
            out_geojson=args.output,
            netcdf=args.netcdf,
            maps=args.maps,
            inputs=inputs,
            features=features.result,
            fractions=fractions,
        )
    print(grid_table(result))
    print(CAUTION)
    for p in written if len(written) <= 12 else written[:2]:
        print(f"wrote {p}", file=sys.stderr)
    if len(written) > 12:
        print(f"wrote {len(written) - 2} maps in {args.maps}", file=sys.stderr)
    return EXIT_OK


def _counter(what, unit):
    """Return a progress callback drawing ``what [####....] done/total unit`` on stderr."""

    def draw(done, total):
        width = 30
        fill = int(width * done / max(total, 1))
        end = "\n" if done == total else ""
        bar = "#" * fill + "." * (width - fill)
        print(f"\r{what} [{bar}] {done}/{total} {unit}", end=end, file=sys.stderr, flush=True)

    return draw


def grid_table(result) -> str:
    """One line per valid time and band: the worst severity and the share of cells by kind.

    An ensemble's table names its members and statistic first, and adds the share of
    cells where any member ices ("any member").
    """
    import numpy as np

    ens = result.members > 1
    head = f"{'valid time':<21} {'band [ft MSL]':<16} {'worst':<9} {'icing':>7} "
    head += f"{'severe':>7} {'SLD':>7} {'gap':>7} {'below ground':>13}"
    head += f" {'any member':>11}" if ens else ""
    rows = [head]
    if ens:
        rows.insert(
            0,
            f"{result.members} members; severity, icing, severe and SLD are the "
            f"{result.member_statistic} member's; 'any member': cells where at least one "
            "member ices",
        )
    nt, nb = result.severity.shape[:2]
    for t in range(nt):
        for b in range(nb):
            sev = np.asarray(result.severity[t, b])
            cov = np.asarray(result.coverage[t, b])
            n = max(sev.size, 1)
            worst = int(sev.max()) if (sev >= 0).any() else codes.GAP
            word = codes.SEVERITY[worst] if worst >= 0 else "unknown"

            def pct(mask, n=n):
                return f"{100.0 * np.count_nonzero(mask) / n:6.1f}%"

            rows.append(
                f"{result.time_text(t):<21} {result.bands.label(b):<16} {word:<9} "
                f"{pct(sev >= 1)} {pct(sev == 4)} {pct(np.asarray(result.sld[t, b]) > 0)} "
                f"{pct((sev == codes.GAP) & (cov != 3))} {pct(cov == 3):>13}"
                + (
                    f" {pct(np.asarray(result.severity_worst_member[t, b]) >= 1):>11}"
                    if ens
                    else ""
                )
            )
    return "\n".join(rows)


def cmd_airframes(args) -> int:
    """``icing airframes``: the presets and their collectors."""
    from icing.airframes import airframes_to_json, format_airframes, list_airframes

    frames = list_airframes()
    if args.json:
        print(json.dumps(airframes_to_json(frames), indent=1))
    else:
        print(format_airframes(frames))
    return EXIT_OK
