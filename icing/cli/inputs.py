"""From parsed options to the library's inputs: forecasts, routes, conditions, departures."""

from __future__ import annotations

import sys
from pathlib import Path

from icing.cli.options import EXIT_FAIL_ON, EXIT_OK, MAX_FORECAST_FILES
from icing.errors import InputError

__all__ = ["departure_window"]


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
