"""The computations behind ``/v1/screen`` and ``/v1/profile``, run in a worker.

A job is a plain dict (picklable, built by the server from a validated request
and the catalogue; it never holds a path taken from a request). :func:`run_job`
returns ``(status, body, media_type)``: the JSON body is made here, in the
worker, so the server's event loop only passes bytes on. It never raises: bad
input becomes a 422 naming the field and the fix, an unreadable forecast a 503,
anything else a 500 whose one-line detail carries the request id while the
traceback goes to the server's log.

Warnings raised while working (a route whose altitudes look like feet, waypoint
times implying an implausible ground speed, ...) are returned to the client in
``warnings``; they are caught per job, which is safe because a worker runs one
job at a time.
"""

from __future__ import annotations

import json
import logging
import warnings
from collections import OrderedDict
from pathlib import Path

from icing.caution import CAUTION
from icing.errors import ForecastError, IcingWarning, InputError
from icing.service.catalog import scrub_paths
from icing.service.checks import estimate_samples

__all__ = ["ForecastStore", "run_job", "problem_body"]

log = logging.getLogger("icing.service")

JSON = "application/json"
GEOJSON = "application/geo+json"
# command-line flags named in the library's fixes, and the request field that does the same
_FLAGS = {
    "--depart": "depart",
    "--airframe": "airframe",
    "--tas-kt": "true_airspeed_kt",
    "--member-statistic": "member_statistic",
}


def problem_body(detail: str, field: str | None = None) -> bytes:
    """JSON body of an error: a one-line ``detail`` and the ``field`` it concerns."""
    detail = " ".join(str(detail).split())
    for flag, name in _FLAGS.items():
        detail = detail.replace(flag, name)
    return json.dumps({"detail": detail, "field": field}).encode()


class ForecastStore:
    """Forecasts opened once and kept while their files are unchanged (least recently used out).

    Parameters
    ----------
    max_open : int
        Forecasts kept open at once.
    """

    def __init__(self, max_open: int = 16):
        self.max_open = max(1, int(max_open))
        self._open: OrderedDict = OrderedDict()

    def get(self, ref: dict):
        """Return the forecast of a catalogue reference (``id``, ``paths``, ``signature``)."""
        from icing.forecast import load_forecast

        hit = self._open.get(ref["id"])
        if hit is not None and hit[0] == ref["signature"]:
            self._open.move_to_end(ref["id"])
            return hit[1]
        self._open.pop(ref["id"], None)
        forecast = load_forecast(list(ref["paths"]))
        self._open[ref["id"]] = (ref["signature"], forecast)
        while len(self._open) > self.max_open:
            self._open.popitem(last=False)
        return forecast


class JobError(Exception):
    """A job cannot give a result: HTTP status, one-line detail and the field."""

    def __init__(self, status: int, detail: str, field: str | None = None):
        super().__init__(detail)
        self.status, self.detail, self.field = status, detail, field


def _public_provenance(prov: dict, ref: dict) -> dict:
    prov = dict(prov)
    prov["forecast"] = ref["id"]
    prov["files"] = [Path(p).name for p in ref["paths"]]
    return prov


def _input_error(err: InputError, field: str) -> JobError:
    where = f"{field}: {err.where}" if err.where else field
    text = f"{where}: {err.message}" + (f" (fix: {err.fix})" if err.fix else "")
    return JobError(422, text, field)


def _forecast(store, ref):
    try:
        return store.get(ref)
    except InputError as err:
        log.warning("forecast %s could not be opened: %s", ref["id"], err.one_line())
        raise JobError(
            503,
            f"forecast {ref['id']!r} could not be opened: "
            f"{scrub_paths(err.message, ref['paths'])} "
            "(fix: retry later, or choose another forecast from GET /v1/forecasts)",
            "forecast",
        ) from None


def _routes(job):
    from icing.airframes import load_airframe
    from icing.route.readers import read_geojson_routes

    limits = job["limits"]
    try:
        routes = read_geojson_routes(json.dumps(job["route"]), path=None)
    except InputError as err:
        raise _input_error(err, "route") from None
    if len(routes) > limits["max_routes"]:
        raise JobError(
            422,
            f"route: {len(routes)} routes in one request, at most {limits['max_routes']} "
            "(fix: send the routes in several requests)",
            "route",
        )
    airframe = load_airframe(job["airframe"])
    samples = sum(
        estimate_samples(
            r, step_km=limits["step_km"], default_tas_kt=float(airframe.true_airspeed_kt)
        )
        for r in routes
    )
    if samples > limits["max_samples"]:
        raise JobError(
            422,
            f"route: about {samples} samples along the route(s), at most "
            f"{limits['max_samples']} (one per km, 20 s of flight and 100 ft of climb; "
            "fix: split the route, or shorten its holds and waypoint time spans)",
            "route",
        )
    return routes, airframe


def _screen(job, store) -> dict:
    from icing.hazards import feature_collection
    from icing.hazards.outcome import Condition
    from icing.route import parse_time
    from icing.runs import ScreenOptions, screen_routes
    from icing.service.outcome import verdict

    routes, airframe = _routes(job)
    depart = None
    if job.get("depart"):
        try:
            depart = parse_time(job["depart"], where="depart")
        except InputError as err:
            raise _input_error(err, "depart") from None
    forecast = _forecast(store, job["forecast"])
    try:
        screenings = screen_routes(
            routes,
            forecast,
            airframe=airframe,
            departure=depart,
            options=ScreenOptions(
                step_km=job["limits"]["step_km"],
                condition=Condition(
                    fail_on=job.get("fail_on"), accept_gaps=bool(job.get("accept_gaps"))
                ),
                member_statistic=job.get("member_statistic") or "median",
            ),
        )
    except InputError as err:
        raise _input_error(err, _field_of(err)) from None
    fc = feature_collection(screenings)
    fc["provenance"] = _public_provenance(fc["provenance"], job["forecast"])
    fc["outcome"] = verdict(
        fc["summaries"], fail_on=job.get("fail_on"), accept_gaps=bool(job.get("accept_gaps"))
    )
    return fc


def _field_of(err: InputError) -> str:
    """Return the request field a screening's input error concerns."""
    if err.where == "--member-statistic":
        return "member_statistic"
    return "depart" if "depart" in str(err.fix or "") else "route"


def _profiled_member(job, forecast):
    """Return the forecast to profile and its member (None), or refuse in one line (422).

    An ensemble has one column per member: the request names the member by its index
    in ``GET /v1/forecasts``; a single forecast has no members to name.
    """
    member = job.get("member")
    fid = job["forecast"]["id"]
    if not hasattr(forecast, "member_columns_at"):
        if member is None:
            return forecast, None
        raise JobError(
            422,
            f"member: forecast {fid!r} is a single forecast, not an ensemble (fix: drop member)",
            "member",
        )
    count = len(forecast.members)
    if member is None or not 0 <= int(member) < count:
        what = "names no member" if member is None else f"has no member {member}"
        raise JobError(
            422,
            f"member: forecast {fid!r} is an ensemble of {count} members and the request "
            f"{what} (fix: give member, an index 0..{count - 1} from its members in "
            "GET /v1/forecasts; POST /v1/screen screens every member)",
            "member",
        )
    one = forecast.members[int(member)]
    return one.forecast, {"index": int(member), "label": one.label, "members": count}


def _profile(job, store) -> dict:
    import numpy as np

    from icing.airframes import load_airframe
    from icing.calc.column import ColumnOptions
    from icing.hazards.segments import _iso
    from icing.runs import diagnose_point

    airframe = load_airframe(job["airframe"])
    forecast = _forecast(store, job["forecast"])
    t = None if job.get("time") is None else np.datetime64(job["time"].rstrip("Z"), "ms")
    if t is None:
        t = np.asarray(forecast.valid_times)[0]
    options = ColumnOptions()
    column, member = _profiled_member(job, forecast)
    result = diagnose_point(column, job["lat"], job["lon"], t, airframe=airframe)
    if member is not None:
        result["member"] = member
    result.update(
        lat=job["lat"],
        lon=job["lon"],
        time=_iso(t),
        forecast=job["forecast"]["id"],
        caution=CAUTION,
        provenance=_public_provenance(forecast.describe(), job["forecast"]),
        assumptions=options.describe(),
    )
    return result


def _finish(payload: dict, job: dict, caught) -> bytes:
    notes = []
    for w in caught:
        if issubclass(w.category, IcingWarning) and str(w.message) not in notes:
            notes.append(str(w.message))
    payload["warnings"] = notes
    payload.setdefault("caution", CAUTION)
    text = json.dumps(payload, allow_nan=False, default=str, separators=(",", ":"))
    paths = job.get("forecast", {}).get("paths", ())
    return scrub_paths(text, paths, job.get("catalog_dir"), quoted=True).encode()


def run_job(job: dict, store: ForecastStore) -> tuple[int, bytes, str]:
    """Run one job; return ``(HTTP status, body, media type)``; never raises."""
    kind = job.get("kind")
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            if kind == "screen":
                payload, media = _screen(job, store), GEOJSON
            elif kind == "profile":
                payload, media = _profile(job, store), JSON
            elif kind == "open":  # warm-up: open the forecasts before the first request
                payload, media = _warm(job, store), JSON
            elif kind == "sleep":  # for the tests of timeouts and crashes only
                payload, media = _sleep(job), JSON
            else:
                raise JobError(400, f"unknown job kind {kind!r}")
        return 200, _finish(payload, job, caught), media
    except JobError as err:
        return err.status, problem_body(err.detail, err.field), JSON
    except ForecastError as err:  # a forecast that breaks while being read
        log.warning("forecast %s failed while reading: %s", job["forecast"]["id"], err.one_line())
        detail = f"forecast {job['forecast']['id']!r} could not be read (fix: retry later)"
        return 503, problem_body(detail, "forecast"), JSON
    except InputError as err:
        return 422, problem_body(_input_error(err, "request").detail, None), JSON
    except Exception:
        rid = job.get("request_id", "-")
        log.exception("request %s: internal error in a %s job", rid, kind)
        detail = f"internal error while computing (request {rid}; the server log has the details)"
        return 500, problem_body(detail), JSON


def _warm(job, store) -> dict:
    """Open each forecast and diagnose one column of it (loads what a first request would).

    An ensemble diagnoses one column of its first member after reading every member's
    column at that point (what a screening reads). A forecast that cannot be opened or
    read is logged with its own reason and the others are still opened.
    """
    opened, failed = 0, []
    for ref in job["refs"]:
        try:
            _warm_one(store.get(ref), job["airframe"])
            opened += 1
        except InputError as err:
            log.warning("warm-up: forecast %s not opened: %s", ref["id"], err.one_line())
            failed.append(ref["id"])
    return {"opened": opened, "failed": failed}


def _warm_one(forecast, airframe):
    import numpy as np

    from icing.runs import diagnose_point

    lon0, lat0, lon1, lat1 = forecast.bounds
    lon = (lon0 + lon1) / 2 if lon0 <= lon1 else ((lon0 + lon1 + 360) / 2 + 180) % 360 - 180
    lat = (lat0 + lat1) / 2
    if hasattr(forecast, "member_columns_at"):
        t = np.asarray(forecast.valid_times)[:1]
        forecast.member_columns_at(np.array([lat]), np.array([lon]), t)
        forecast = forecast.members[0].forecast
    diagnose_point(forecast, lat, lon, airframe=airframe)


def _sleep(job):
    """Test job: sleep, or end the worker process abruptly (``crash``)."""
    import os
    import time

    if job.get("crash"):
        os._exit(70)
    time.sleep(float(job.get("seconds", 0.0)))
    return {"slept": job.get("seconds", 0.0)}
