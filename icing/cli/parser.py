"""The ``icing`` argument parser and ``main``, the command's entry point."""

from __future__ import annotations

import argparse
import os
import sys

from icing import codes
from icing._version import __version__
from icing.caution import CAUTION
from icing.cli.commands import cmd_airframes, cmd_demo, cmd_grid, cmd_profile, cmd_screen
from icing.cli.options import (
    _ALTITUDE_FT,
    _FLIGHT_LEVEL,
    _RADIUS,
    _STEP,
    _TAS,
    _TOLERANCE,
    _WORKERS,
    EXIT_INPUT,
    EXIT_INTERNAL,
    _bounded,
    _Parser,
)
from icing.errors import IcingError, InputError

__all__ = ["build_parser", "main"]


def _screen_parser(sub, forecast_args):
    """Add the ``screen`` subcommand and its options."""
    s = sub.add_parser(
        "screen",
        help="screen route(s) against a forecast",
        description="Screen routes against a forecast for a named airframe. Exit codes: 0 "
        "screened, 3 when a route meets the --fail-on condition (the routes are named on "
        "stderr), 2 bad input, 1 internal error.",
    )
    s.add_argument("routes", nargs="+", metavar="ROUTE", help="route file(s): GeoJSON, CSV or GPX")
    forecast_args(s)
    s.add_argument(
        "--airframe",
        "-a",
        default=None,
        help="airframe preset name or TOML file (see `icing airframes`); required unless "
        "every route names its own 'airframe' (there is no default airframe)",
    )
    s.add_argument(
        "--depart",
        default=None,
        metavar="ISO8601",
        help="departure time (with zone), overrides the route's",
    )
    s.add_argument(
        "--time",
        default=None,
        metavar="ISO8601",
        help="radiosonde files without an observation time: the launch time (with zone)",
    )
    s.add_argument(
        "--depart-window",
        default=None,
        metavar="START/END/STEP",
        help="screen each departure from START to END every STEP (e.g. "
        "2027-01-14T06:00Z/2027-01-14T18:00Z/1h) and tabulate the outcomes; with --fail-on, "
        "exit 3 when a route has no departure clear of the condition",
    )
    s.add_argument("--tas-kt", type=_TAS, default=None, help="true airspeed [kt], 1..700")
    s.add_argument(
        "--step-km", type=_STEP, default=1.0, help="largest sample spacing [km], 0.01..100"
    )
    alt = s.add_mutually_exclusive_group()
    alt.add_argument(
        "--altitude-ft",
        type=_ALTITUDE_FT,
        default=None,
        metavar="N",
        help="altitude of routes drawn without altitudes [ft, MSL unless the route says agl]",
    )
    alt.add_argument(
        "--flight-level",
        type=_FLIGHT_LEVEL,
        default=None,
        metavar="N",
        help="flight level of routes drawn without altitudes (FL100: 10,000 ft pressure altitude)",
    )
    _member_args(s)
    _output_args(s)
    _condition_args(s)
    s.set_defaults(func=cmd_screen)


def _grid_parser(sub, forecast_args):
    """Add the ``grid`` subcommand and its options."""
    g = sub.add_parser(
        "grid",
        help="the icing hazard over the whole forecast, by altitude band (GIS overlays)",
        description="Grid the icing hazard over a whole gridded forecast for a named airframe, "
        "by altitude band: GeoJSON polygons (-o), CF NetCDF (--netcdf), PNG maps (--maps). Exit "
        "codes: 0 done, 2 bad input, 1 internal error.",
    )
    forecast_args(g)
    g.add_argument(
        "--airframe", "-a", required=True, help="airframe preset name or TOML file (required)"
    )
    g.add_argument(
        "--bands-ft",
        default="0:20000:2000",
        metavar="START:STOP:STEP|A,B,...",
        help="altitude bands [ft MSL] (default 0:20000:2000; at most 100 bands)",
    )
    when = g.add_mutually_exclusive_group()
    when.add_argument(
        "--time", default=None, metavar="ISO8601", help="the valid time (default: the first)"
    )
    when.add_argument("--all-times", action="store_true", help="every valid time of the forecast")
    g.add_argument(
        "-o", "--output", required=True, metavar="OUT.geojson", help="icing and gap polygons"
    )
    g.add_argument(
        "--netcdf", default=None, metavar="OUT.nc", help="CF-1.8 NetCDF of the products"
    )
    g.add_argument("--maps", default=None, metavar="DIR", help="one PNG map per band and time")
    g.add_argument(
        "--scheduler",
        default=None,
        metavar="ADDRESS",
        help="run the blocks on this dask.distributed scheduler (tcp://HOST:PORT; needs the "
        "grid extra; its workers must see the forecast files at the same paths)",
    )
    g.add_argument(
        "--workers",
        type=_WORKERS,
        default=None,
        metavar="N",
        help="worker processes (default: one per core; 1 runs in this process)",
    )
    _member_args(g)
    g.set_defaults(func=cmd_grid)


def _member_args(s):
    """Ensembles and parametric spread."""
    from icing.runs.spread import SPREAD_CHOICES

    s.add_argument(
        "--ensemble",
        action="store_true",
        help="the forecast files are ensemble members: each file of one --forecast is a "
        "member (different models, or time-lagged runs valid at the same times), or each "
        "--forecast option is one member of several lead-time files",
    )
    s.add_argument(
        "--member-statistic",
        default="median",
        metavar="median|worst|pNN",
        help="ensembles and spreads: the statistic whose word is each segment's (grid: "
        "each cell's) severity (default median: the word at least half of the members reach; "
        "worst: any member; p90: at least 10 %% of them); the worst member's word is always "
        "given beside it",
    )
    s.add_argument(
        "--spread",
        nargs="?",
        const="all",
        default=None,
        metavar="CHOICES",
        help="repeat the diagnosis over stated ranges of its uncertain choices and report "
        f"them as members: all (default), or a comma list of {', '.join(SPREAD_CHOICES)}",
    )


def _output_args(s):
    s.add_argument(
        "-o",
        "--output",
        default=None,
        metavar="OUT.geojson|OUT.gpkg|OUT.kml",
        help="hazard segments: GeoJSON (and OUT.summary.json beside it), GeoPackage (layers "
        "'hazards' and 'routes', with OUT.qml and OUT.sld styles beside it) or KML "
        "(absolute altitudes)",
    )
    s.add_argument("--plot", default=None, metavar="OUT.png|svg", help="cross-section picture")
    s.add_argument(
        "--section-axis",
        choices=("msl", "agl"),
        default="msl",
        help="vertical axis of the cross-section: feet MSL (default) or height above the ground "
        "(drone work)",
    )
    s.add_argument("--map", default=None, metavar="OUT.png|svg", help="plan-view picture")
    s.add_argument("--report", default=None, metavar="OUT.html", help="self-contained HTML report")
    s.add_argument("--samples", default=None, metavar="OUT.csv", help="per-sample audit table")
    s.add_argument("--all-segments", action="store_true", help="also write no-icing segments")
    s.add_argument("--json", action="store_true", help="print the summaries as JSON")


def _condition_args(s):
    s.add_argument(
        "--fail-on",
        choices=codes.SEVERITY[1:],
        default=None,
        metavar="LEVEL",
        help="exit 3 when a route reaches this severity (trace, light, moderate, severe); a "
        "part of a route that could not be screened meets it too, unless --accept-gaps",
    )
    s.add_argument(
        "--fail-on-fraction",
        type=_bounded(0.01, 1.0, "", "a fraction of the members, from 1 % to all of them"),
        default=None,
        metavar="F",
        help="ensembles and spreads: --fail-on is met when at least this fraction of the "
        "members reach the level somewhere on the route (default: the member statistic's word)",
    )
    s.add_argument(
        "--accept-gaps",
        action="store_true",
        help="coverage gaps do not meet the condition (the route's outcome is 'incomplete')",
    )
    s.add_argument(
        "--fail-on-tolerance",
        action="store_true",
        help="exit 3 when the ice on a route reaches the airframe's ice tolerance",
    )
    s.add_argument(
        "--fail-on-gap", action="store_true", help="exit 3 when a route has any coverage gap"
    )


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser of the ``icing`` command."""
    p = _Parser(
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
            action="append",
            required=True,
            metavar="FILE",
            help="forecast file(s): GRIB1/GRIB2, CF or data-service NetCDF, WRF output, "
            "profile JSON/CSV, radiosonde soundings (Wyoming text/CSV, IGRA2); several files "
            "(lead times, or a glob) form one forecast; a file with an ensemble member "
            "dimension (GRIB number, NetCDF realization/member) is screened as an ensemble",
        )
        sp.add_argument(
            "--radius-km",
            type=_RADIUS,
            default=None,
            help="coverage radius around profile soundings (default 50 km)",
        )
        sp.add_argument(
            "--time-tolerance",
            type=_TOLERANCE,
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
            "--station",
            default=None,
            metavar="LAT,LON,ELEV_M",
            help="radiosonde files without a station block: position and elevation [m] "
            "(use --station=-33.9,151.2,10 for negative values)",
        )
        sp.add_argument(
            "--member",
            type=int,
            default=None,
            metavar="N",
            help="read one ensemble member of a file with several (GRIB number, NetCDF "
            "realization/member) instead of screening them all",
        )
        sp.add_argument(
            "--rh-convention",
            choices=("water", "ifs-mixed", "ncep-gfs", "ice"),
            default=None,
            help="what the file's relative humidity is relative to below 0 C, when the "
            "file does not say (default: from the file; unknown is read as over water)",
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

    _screen_parser(sub, forecast_args)

    pr = sub.add_parser("profile", help="the forecast column at one point, level by level")
    forecast_args(pr)
    pr.add_argument(
        "--at",
        default=None,
        metavar="LAT,LON",
        help="position; use --at=-33.9,151.2 for negative values",
    )
    pr.add_argument("--lat", type=_bounded(-90.0, 90.0, "degrees", "latitude"), default=None)
    pr.add_argument("--lon", type=_bounded(-180.0, 360.0, "degrees", "longitude"), default=None)
    pr.add_argument(
        "--time",
        default=None,
        metavar="ISO8601",
        help="valid time (with zone); also the launch time of a radiosonde file without one",
    )
    pr.add_argument("--airframe", "-a", default=None, help="airframe preset or TOML file")
    pr.add_argument(
        "--tas-kt",
        type=float,
        default=None,
        help="true airspeed at every level [kt] (default: the airframe's speed schedule)",
    )
    pr.add_argument("--json", action="store_true", help="print one JSON object")
    pr.set_defaults(func=cmd_profile)

    _grid_parser(sub, forecast_args)

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


if __name__ == "__main__":
    sys.exit(main())
