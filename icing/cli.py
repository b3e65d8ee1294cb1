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
from icing.outputs.atomic import check_targets
from icing.outputs.table import departure_table, format_number, summary_table
from icing.outputs.write import output_targets, write_outputs

__all__ = ["main", "build_parser", "departure_window"]

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT, EXIT_FAIL_ON = 0, 1, 2, 3

#: The most forecast files of one run: more than the lead times of any model run at
#: hourly steps for a week (168); each file is opened and indexed.
MAX_FORECAST_FILES = 1000


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line with the fix (``--help`` is full)."""

    def error(self, message):
        """Print ``prog: error: message (fix: ...)`` on one line and exit 2."""
        text = " ".join(f"{self.prog}: error: {message} (fix: {self._fix(message)})".split())
        self.exit(EXIT_INPUT, text + "\n")

    def _fix(self, message):
        import difflib
        import re

        helps = f"see `{self.prog} --help`"
        unknown = re.match(r"unrecognized arguments: (\S+)", message)
        if unknown:
            word = unknown.group(1).split("=")[0].lstrip("-")
            names = {o.lstrip("-"): o for o in _option_strings(self) if o.startswith("--")}
            close = [names[c] for c in difflib.get_close_matches(word, sorted(names), n=1)]
            if self.prog == "icing":  # options belong to the commands
                helps = "see `icing COMMAND --help`"
            return (f"did you mean {close[0]}? " if close else "remove it; ") + helps
        choice = re.search(r"invalid choice: '([^']*)'", message)
        if choice:
            known = re.findall(r"'([^']*)'", message.split("choose from", 1)[-1])
            close = difflib.get_close_matches(choice.group(1), known, n=1)
            return (f"did you mean {close[0]}? " if close else "") + helps
        if "arguments are required" in message:
            example = {
                "icing screen": "icing screen ROUTE.geojson --forecast FILE --airframe NAME",
                "icing profile": "icing profile --forecast FILE --at=LAT,LON",
            }.get(self.prog, "icing screen ROUTE.geojson --forecast FILE --airframe NAME")
            return f"give them, e.g. `{example}`; {helps}"
        if "expected one argument" in message or "expected at least one" in message:
            return f"give the option its value (negative numbers as --opt=-1); {helps}"
        return helps


def _option_strings(parser):
    """Return every option string of a parser and of its subcommands."""
    out = set()
    for action in parser._actions:
        out.update(action.option_strings)
        if isinstance(action, argparse._SubParsersAction):
            for sub in action.choices.values():
                out |= _option_strings(sub)
    return out


def _bounded(low, high, unit, reason):
    """Return an argparse type: a finite number within [low, high], else a one-line error."""

    def number(text):
        import math

        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
        if not math.isfinite(value) or not low <= value <= high:
            raise argparse.ArgumentTypeError(
                f"{text} is outside {low:g}..{high:g} {unit} ({reason})"
            )
        return value

    return number


_TAS = _bounded(
    1.0, 700.0, "kt", "below 1 kt a 1 km leg takes half an hour; above 700 kt is supersonic"
)
_STEP = _bounded(0.01, 100.0, "km", "finer than 10 m resolves nothing; coarser skips cloud layers")
_RADIUS = _bounded(0.1, 500.0, "km", "a sounding represents tens of kilometres, not a continent")
_TOLERANCE = _bounded(0.0, 72.0, "h", "a forecast older than three days is no forecast for now")
_ALTITUDE_FT = _bounded(-1000.0, 65600.0, "ft", "from below the sea to 20 km")


def _workers(text):
    """Return ``--workers``: a whole number 1..256, else a one-line error."""
    value = _bounded(1, 256, "processes", "one per core is enough; more only wait")(text)
    if value != int(value):
        raise argparse.ArgumentTypeError(f"{text} is not a whole number of processes")
    return int(value)


_WORKERS = _workers
_FLIGHT_LEVEL = _bounded(-20.0, 656.0, "", "FL656 is 20 km; a flight level is hundreds of feet")


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
    from icing.forecast import load_forecast

    kwargs = _forecast_kwargs(args)
    if getattr(args, "ensemble", False):
        return load_forecast(_ensemble_members(args), ensemble=True, **kwargs)
    return load_forecast(_forecast_paths(args), **kwargs)


def _forecast_kwargs(args):
    """``load_forecast`` keyword arguments from the forecast options."""
    kwargs = {}
    if getattr(args, "radius_km", None) is not None:
        kwargs["radius_km"] = args.radius_km
    if getattr(args, "time_tolerance", None) is not None:
        kwargs["time_tolerance_h"] = args.time_tolerance
    var_map = _var_map(getattr(args, "var", None))
    if var_map:
        kwargs["var_map"] = var_map
    site = _sounding_site(args)
    if site is not None:
        kwargs["sounding_site"] = site
    for option in ("member", "rh_convention"):  # gridded files: ensemble member, RH convention
        if getattr(args, option, None) is not None:
            kwargs[option] = getattr(args, option)
    return kwargs


def _ensemble_members(args):
    """Return the members of ``--ensemble``: each file of one option, or each option.

    ``--forecast a.grib2 b.nc c.grib2 --ensemble``: three members. ``--forecast a1 a2
    --forecast b1 b2 --ensemble``: two members of two lead-time files each.
    """
    groups = [_expanded(group) for group in args.forecast]
    if len(groups) == 1:
        return [[p] for p in groups[0]]
    return groups


def _expanded(patterns):
    """Return the files of one ``--forecast`` option, globs expanded in sorted order."""
    paths = []
    for p in patterns:
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
    return paths


def _forecast_paths(args):
    """Return the forecast files given, globs expanded; at most :data:`MAX_FORECAST_FILES`."""
    paths = [p for group in args.forecast for p in _expanded(group)]
    if len(paths) > MAX_FORECAST_FILES:
        raise InputError(
            f"{len(paths)} forecast files, above the limit of {MAX_FORECAST_FILES}",
            where="--forecast",
            fix="give the files of one run (a narrower pattern)",
        )
    return paths


def _sounding_site(args):
    """--station LAT,LON,ELEV_M and --time for sounding files that do not give them."""
    from dataclasses import replace

    from icing.forecast.soundings import SoundingSite, parse_station
    from icing.forecast.table import parse_time

    station, time = getattr(args, "station", None), getattr(args, "time", None)
    if station is None and time is None:
        return None
    site = parse_station(station) if station is not None else SoundingSite()
    return replace(site, time=parse_time(time, where="--time")) if time else site


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


def _condition(args):
    from icing.hazards.outcome import Condition

    if args.accept_gaps and not (args.fail_on or args.fail_on_tolerance):
        raise InputError(
            "--accept-gaps without a condition",
            where="--accept-gaps",
            fix="give --fail-on LEVEL or --fail-on-tolerance with it",
        )
    if args.fail_on_fraction is not None and not args.fail_on:
        raise InputError(
            "--fail-on-fraction without --fail-on",
            where="--fail-on-fraction",
            fix="give --fail-on LEVEL with it",
        )
    return Condition(
        fail_on=args.fail_on,
        fail_on_tolerance=args.fail_on_tolerance,
        fail_on_gap=args.fail_on_gap,
        accept_gaps=args.accept_gaps,
        fail_on_fraction=args.fail_on_fraction,
    )


def _fail_code(summaries, window=False) -> int:
    """Exit 3 (and name the routes on stderr) when a route's outcome is "met".

    With a departure window, a route fails when none of its departures is clear of
    the condition ("not-met", or "incomplete" with gaps accepted).
    """
    if window:
        ok = {s["route"] for s in summaries if s.get("outcome") in ("not-met", "incomplete")}
        failed = [s for s in summaries if s.get("outcome") == "met" and s["route"] not in ok]
        failed = list({s["route"]: s for s in failed}.values())
        what = "no departure in the window is clear of the condition"
    else:
        failed = [s for s in summaries if s.get("outcome") == "met"]
        what = "condition met"
    if not failed:
        return EXIT_OK
    print(
        f"icing: {what} for {len(failed)} of {len(set(s['route'] for s in summaries))} route(s):",
        file=sys.stderr,
    )
    for s in failed:
        reason = "" if window else f": {s.get('outcome_reason')}"
        print(f"  {s['route']}{reason}", file=sys.stderr)
    return EXIT_FAIL_ON


def _progress(done, total, name):
    """Draw a one-line progress bar on stderr (interactive terminals only)."""
    width = 30
    fill = int(width * done / total)
    end = "\n" if done == total else ""
    print(
        f"\r{'screening'} [{'#' * fill}{'.' * (width - fill)}] {done}/{total} {name[:30]:<30}",
        end=end,
        file=sys.stderr,
        flush=True,
    )


def _departures(args):
    """Return the departures to screen: ``--depart``, each step of ``--depart-window``, or None."""
    from icing.route import parse_time

    if args.depart and args.depart_window:
        raise InputError(
            "--depart and --depart-window both given",
            where="--depart-window",
            fix="give one of them",
        )
    if args.depart:
        return [parse_time(args.depart, where="--depart")]
    if not args.depart_window:
        return [None]
    return departure_window(args.depart_window)


def departure_window(text):
    """Parse ``START/END/STEP`` (ISO 8601 times; step like 30m, 1h, 1h30m or PT30M).

    >>> [t.strftime("%H:%M") for t in departure_window("2027-01-14T06:00Z/2027-01-14T08:00Z/1h")]
    ['06:00', '07:00', '08:00']
    """
    import re
    from datetime import timedelta

    from icing.route import parse_time

    fix = "write e.g. --depart-window 2027-01-14T06:00Z/2027-01-14T18:00Z/1h"
    parts = text.split("/")
    if len(parts) != 3:
        raise InputError(
            f"--depart-window {text!r} is not START/END/STEP", where="--depart-window", fix=fix
        )
    start = parse_time(parts[0], where="--depart-window start")
    end = parse_time(parts[1], where="--depart-window end")
    m = re.fullmatch(r"(?:PT)?(?:(\d+)\s*h)?\s*(?:(\d+)\s*m(?:in)?)?", parts[2].strip(), re.I)
    step = timedelta(hours=int(m.group(1) or 0), minutes=int(m.group(2) or 0)) if m else None
    if not step or end < start:
        raise InputError(
            f"--depart-window {text!r}: the step must be positive and END not before START",
            where="--depart-window",
            fix=fix,
        )
    count = int((end - start) / step) + 1
    if count > 96:
        raise InputError(
            f"--depart-window gives {count} departures (at most 96)",
            where="--depart-window",
            fix="use a longer step or a shorter window",
        )
    return [start + i * step for i in range(count)]


def cmd_screen(args) -> int:
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


def _inputs(args):
    """Return the run's input files, each with what it is: outputs never overwrite them."""
    out = [(p, "route file") for p in args.routes]
    out += [(p, "forecast file") for p in _forecast_paths(args)]
    if args.airframe is not None and Path(args.airframe).is_file():
        out.append((args.airframe, "airframe file"))
    return out


def _check_route_airframes(routes):
    """Load the airframe each route names; an unknown one is blamed on its route file."""
    from icing.airframes import load_airframe
    from icing.errors import AirframeError

    for r in routes:
        try:
            load_airframe(r.airframe)
        except AirframeError as err:
            if err.path is not None:  # the airframe file itself is at fault
                raise
            raise AirframeError(
                err.message,
                path=r.source,
                where=f"route {r.name!r}: airframe",
                fix=err.fix,
            ) from None


def _require_airframes(routes):
    """Refuse routes that name no airframe when ``--airframe`` is not given (exit 2)."""
    missing = [r.name for r in routes if not getattr(r, "airframe", None)]
    if missing:
        from icing.airframes import list_airframes

        names = ", ".join(a.name for a in list_airframes())
        raise InputError(
            f"no airframe for route(s) {', '.join(repr(m) for m in missing)}",
            where="--airframe",
            fix=f"give --airframe NAME or FILE.toml (presets: {names}), or an 'airframe' "
            "property in each route",
        )


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
    from icing.airframes import load_airframe
    from icing.hazards.bands import parse_bands
    from icing.hazards.gridded import grid_features
    from icing.outputs.write import grid_output_targets, write_grid_outputs
    from icing.runs.grid import GridOptions, grid_forecast

    _check_suffix(args.output, {".geojson", ".json"}, "-o/--output")
    _check_suffix(args.netcdf, {".nc"}, "--netcdf")
    bands = parse_bands(args.bands_ft)
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
    forecast = _forecast(args)
    bar = sys.stderr.isatty()
    result = grid_forecast(
        forecast,
        airframe=airframe,
        options=GridOptions(
            bands=bands, times=times, workers=args.workers, scheduler=args.scheduler
        ),
        column_options=_column_options(args),
        load_options=_forecast_kwargs(args),
        progress=_counter("gridding", "blocks") if bar else None,
    )
    features = grid_features(result, progress=_counter("outlining", "maps") if bar else None)
    fc, written = write_grid_outputs(
        result,
        out_geojson=args.output,
        netcdf=args.netcdf,
        maps=args.maps,
        inputs=inputs,
        features=features,
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
    """One line per valid time and band: the worst severity and the share of cells by kind."""
    import numpy as np

    head = f"{'valid time':<21} {'band [ft MSL]':<16} {'worst':<9} {'icing':>7} "
    head += f"{'severe':>7} {'SLD':>7} {'gap':>7} {'below ground':>13}"
    rows = [head]
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
            )
    return "\n".join(rows)


def cmd_airframes(args) -> int:
    from icing.airframes import airframes_to_json, format_airframes, list_airframes

    frames = list_airframes()
    if args.json:
        print(json.dumps(airframes_to_json(frames), indent=1))
    else:
        print(format_airframes(frames))
    return EXIT_OK


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
        help="ensembles and spreads: the statistic whose word is each segment's severity "
        "(default median: the word at least half of the members reach; worst: any member; "
        "p90: at least 10 %% of them); the worst member's word is always given beside it",
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


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
