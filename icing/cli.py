"""The ``icing`` command: a thin layer over the public API.

Exit codes: 0 screened (whatever the hazard), 3 when ``--fail-on`` or
``--fail-on-gap`` is met, 2 on bad input or usage, 1 on an internal error.
Output files are written to a temporary file beside the target and renamed, so
a failed run leaves nothing half-written.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path

from icing import codes
from icing._version import __version__
from icing.caution import CAUTION
from icing.errors import IcingError, InputError
from icing.outputs.table import format_number, summary_table
from icing.outputs.write import write_outputs

__all__ = ["main", "build_parser"]

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT, EXIT_FAIL_ON = 0, 1, 2, 3


def _latlon(args):
    if args.at:
        try:
            lat, lon = (float(x) for x in args.at.split(","))
        except ValueError:
            raise InputError(
                f"--at {args.at!r} is not LAT,LON",
                where="--at",
                fix="write e.g. --at=57.1,-24.3 (use = for negative values)",
            ) from None
    elif args.lat is not None and args.lon is not None:
        lat, lon = args.lat, args.lon
    else:
        raise InputError(
            "no position given", where="profile", fix="give --at LAT,LON or --lat and --lon"
        )
    if not (-90 <= lat <= 90 and -180 <= lon <= 360):
        raise InputError(
            f"position {lat},{lon} out of range",
            where="--at",
            fix="latitude -90..90, longitude -180..180",
        )
    return lat, lon


def _var_map(items):
    out = {}
    for item in items or []:
        if "=" not in item:
            raise InputError(
                f"--var {item!r} is not KEY=NAME",
                where="--var",
                fix="write e.g. --var temperature=TMP_P0_L100",
            )
        k, v = item.split("=", 1)
        out[k.strip()] = v.strip()
    return out


def _forecast(args):
    from icing.forecast.core import load_forecast

    kwargs = {}
    if getattr(args, "radius_km", None) is not None:
        kwargs["radius_km"] = args.radius_km
    if getattr(args, "time_tolerance", None) is not None:
        kwargs["time_tolerance_h"] = args.time_tolerance
    var_map = _var_map(getattr(args, "var", None))
    if var_map:
        kwargs["var_map"] = var_map
    paths = []
    for p in args.forecast:
        if any(ch in p for ch in "*?["):
            import glob

            found = sorted(glob.glob(p))
            if not found:
                raise InputError(
                    f"no file matches {p!r}", where="--forecast", fix="check the pattern"
                )
            paths.extend(found)
        else:
            paths.append(p)
    return load_forecast(paths, **kwargs)


def _column_options(args):
    from icing.calc.column import ColumnOptions

    if getattr(args, "air_mass", None):
        return ColumnOptions(air_mass=args.air_mass)
    return ColumnOptions()


def _check_suffix(path, allowed, flag):
    if path and Path(path).suffix.lower() not in allowed:
        raise InputError(
            f"{flag} {path!r} has an unsupported extension",
            where=flag,
            fix=f"use one of {', '.join(sorted(allowed))}",
        )


def _fail_code(summaries, args) -> int:
    if args.fail_on:
        level = codes.severity_code(args.fail_on)
        for s in summaries:
            w = s.get("worst_severity")
            if w is not None and codes.severity_code(w) >= level:
                return EXIT_FAIL_ON
    if args.fail_on_gap and any(
        s.get("gap_km", 0) > 0 or s.get("worst_severity") is None for s in summaries
    ):
        return EXIT_FAIL_ON
    return EXIT_OK


def _progress(done, total, name):
    """Draw a one-line progress bar on stderr (interactive terminals only)."""
    width = 30
    fill = int(width * done / total)
    end = "\n" if done == total else ""
    print(
        f"\rscreening [{'#' * fill}{'.' * (width - fill)}] {done}/{total} {name[:30]:<30}",
        end=end,
        file=sys.stderr,
        flush=True,
    )


def cmd_screen(args) -> int:
    from icing.airframes import load_airframe
    from icing.route import load_routes
    from icing.runs.screen import ScreenOptions, screen_routes

    _check_suffix(args.plot, {".png", ".svg"}, "--plot")
    _check_suffix(args.map, {".png", ".svg"}, "--map")
    _check_suffix(args.report, {".html", ".htm"}, "--report")
    from icing.route import parse_time

    depart = parse_time(args.depart, where="--depart") if args.depart else None
    airframe = load_airframe(args.airframe)
    routes = [r for path in args.routes for r in load_routes(path)]
    forecast = _forecast(args)
    opts = ScreenOptions(step_km=args.step_km, all_segments=args.all_segments)
    screenings = screen_routes(
        routes,
        forecast,
        airframe=airframe,
        tas_kt=args.tas_kt,
        departure=depart,
        options=opts,
        column_options=_column_options(args),
        progress=_progress if len(routes) > 3 and sys.stderr.isatty() else None,
    )
    out = args.output
    fc, written = write_outputs(
        screenings,
        out_geojson=out,
        plot=args.plot,
        map_=args.map,
        report=args.report,
        samples=args.samples,
    )
    summaries = fc["summaries"]
    if args.json:
        print(json.dumps({"summaries": summaries, "caution": CAUTION}, indent=1, allow_nan=False))
    else:
        print(summary_table(summaries))
        for p in written:
            print(f"wrote {p}", file=sys.stderr)
    return _fail_code(summaries, args)


def cmd_demo(args) -> int:
    from icing.demo import run_demo

    out = Path(args.out)
    summaries, written = run_demo(out)
    print(summary_table(summaries))
    for p in written:
        print(f"wrote {p}")
    return EXIT_OK


def cmd_profile(args) -> int:
    from icing.runs.point import diagnose_point

    lat, lon = _latlon(args)
    forecast = _forecast(args)
    import numpy as np

    from icing.route import parse_time

    t = parse_time(args.time, where="--time") if args.time else None
    tt = None if t is None else np.datetime64(t.replace(tzinfo=None), "ms")  # UTC
    result = diagnose_point(
        forecast, lat, lon, tt, airframe=args.airframe, column_options=_column_options(args)
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


def cmd_airframes(args) -> int:
    from icing.airframes import airframes_to_json, format_airframes, list_airframes

    frames = list_airframes()
    if args.json:
        print(json.dumps(airframes_to_json(frames), indent=1))
    else:
        print(format_airframes(frames))
    return EXIT_OK


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser of the ``icing`` command."""
    p = argparse.ArgumentParser(
        prog="icing",
        description="Estimate the in-flight icing hazard along a route for an airframe, as "
        "GeoJSON. " + CAUTION,
    )
    p.add_argument("--version", action="version", version=f"icing {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    def forecast_args(sp):
        sp.add_argument(
            "--forecast",
            "-f",
            nargs="+",
            required=True,
            metavar="FILE",
            help="forecast file(s): profile JSON/CSV or CF-NetCDF; several files "
            "(lead times, or a glob) form one forecast",
        )
        sp.add_argument(
            "--radius-km",
            type=float,
            default=None,
            help="coverage radius around profile soundings (default 50 km)",
        )
        sp.add_argument(
            "--time-tolerance",
            type=float,
            default=None,
            metavar="HOURS",
            help="how far outside the forecast valid times a sample may lie (default 3 h)",
        )
        sp.add_argument(
            "--var",
            action="append",
            metavar="KEY=NAME",
            help="map a quantity to a NetCDF variable name, e.g. "
            "--var temperature=TMP (repeatable)",
        )
        sp.add_argument(
            "--air-mass",
            default=None,
            help="CCN air mass for droplet number: maritime (default, conservative) "
            "or continental",
        )

    d = sub.add_parser("demo", help="screen the bundled demo scenario and write its outputs")
    d.add_argument("--out", default="icing-demo", help="output folder (default ./icing-demo)")
    d.set_defaults(func=cmd_demo)

    s = sub.add_parser("screen", help="screen route(s) against a forecast")
    s.add_argument("routes", nargs="+", metavar="ROUTE", help="route file(s): GeoJSON, CSV or GPX")
    forecast_args(s)
    s.add_argument(
        "--airframe",
        "-a",
        default="light-piston",
        help="airframe preset name or TOML file (see `icing airframes`)",
    )
    s.add_argument(
        "--depart",
        default=None,
        metavar="ISO8601",
        help="departure time (with zone), overrides the route's",
    )
    s.add_argument("--tas-kt", type=float, default=None, help="true airspeed [kt]")
    s.add_argument("--step-km", type=float, default=1.0, help="largest sample spacing [km]")
    s.add_argument(
        "-o",
        "--output",
        default=None,
        metavar="OUT.geojson",
        help="GeoJSON output (and OUT.summary.json beside it)",
    )
    s.add_argument("--plot", default=None, metavar="OUT.png|svg", help="cross-section picture")
    s.add_argument("--map", default=None, metavar="OUT.png|svg", help="plan-view picture")
    s.add_argument("--report", default=None, metavar="OUT.html", help="self-contained HTML report")
    s.add_argument("--samples", default=None, metavar="OUT.csv", help="per-sample audit table")
    s.add_argument("--all-segments", action="store_true", help="also write no-icing segments")
    s.add_argument("--json", action="store_true", help="print the summaries as JSON")
    s.add_argument(
        "--fail-on",
        choices=codes.SEVERITY[1:],
        default=None,
        help="exit 3 when a route reaches this severity",
    )
    s.add_argument(
        "--fail-on-gap", action="store_true", help="exit 3 when a route has any coverage gap"
    )
    s.set_defaults(func=cmd_screen)

    pr = sub.add_parser("profile", help="the forecast column at one point, level by level")
    forecast_args(pr)
    pr.add_argument(
        "--at",
        default=None,
        metavar="LAT,LON",
        help="position; use --at=-33.9,151.2 for negative values",
    )
    pr.add_argument("--lat", type=float, default=None)
    pr.add_argument("--lon", type=float, default=None)
    pr.add_argument("--time", default=None, metavar="ISO8601", help="valid time (with zone)")
    pr.add_argument("--airframe", "-a", default=None, help="airframe preset or TOML file")
    pr.add_argument("--json", action="store_true", help="print one JSON object")
    pr.set_defaults(func=cmd_profile)

    a = sub.add_parser("airframes", help="list the airframe presets and their collectors")
    a.add_argument("--json", action="store_true")
    a.set_defaults(func=cmd_airframes)

    from icing.service.commands import add_service_commands  # serve, serve-key

    add_service_commands(sub)
    return p


def main(argv=None) -> int:
    """Run the ``icing`` command; return its exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except InputError as err:
        print(f"icing: error: {err.one_line()}", file=sys.stderr)
        return EXIT_INPUT
    except FileNotFoundError as err:
        print(
            f"icing: error: {err.filename}: file not found (fix: check the path)", file=sys.stderr
        )
        return EXIT_INPUT
    except OSError as err:  # unreadable input, unwritable output folder, full disk
        print(
            f"icing: error: {err.filename or ''}: {err.strerror or err} "
            "(fix: check the file's permissions and the free space)",
            file=sys.stderr,
        )
        return EXIT_INPUT
    except IcingError as err:
        print(f"icing: error: {err}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        return 130
    except Exception as err:  # an internal error: say so, in one line, and exit 1
        if os.environ.get("ICING_DEBUG"):
            raise
        print(
            f"icing: internal error: {type(err).__name__}: {err} "
            "(set ICING_DEBUG=1 for the traceback; please report it)",
            file=sys.stderr,
        )
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
