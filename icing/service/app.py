"""The FastAPI application of ``icing serve``: endpoints under ``/v1``.

The endpoints validate the request, look the forecast up in the catalogue by id,
and hand a job to the worker pool (:mod:`icing.service.pool`); the workers call
the library (:func:`icing.runs.screen_routes`, :func:`icing.runs.diagnose_point`,
:func:`icing.hazards.feature_collection`) and return the JSON body. Errors are
one line (``detail``) naming the field and the fix, never a stack trace.
"""

from __future__ import annotations

import asyncio
import json
import logging
from contextlib import asynccontextmanager
from datetime import UTC
from importlib import resources

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.openapi.utils import get_openapi
from fastapi.responses import JSONResponse, Response
from starlette.exceptions import HTTPException as StarletteHTTPException

from icing._version import SCHEMA_VERSION, __version__
from icing.caution import CAUTION
from icing.service.catalog import Catalogue
from icing.service.checks import count_positions
from icing.service.config import ServiceConfig
from icing.service.keys import KeyRing
from icing.service.middleware import AccessLog, Gate
from icing.service.models import (
    AirframesResponse,
    ForecastsResponse,
    HealthResponse,
    Problem,
    ProfileRequest,
    ProfileResponse,
    ScreenRequest,
)
from icing.service.pool import FILE_LOCK, Busy, JobPool, RunTimeout, WorkerLost
from icing.service.ratelimit import RateLimiter

__all__ = ["create_app"]

log = logging.getLogger("icing.service")


class GeoJSONResponse(Response):
    """A GeoJSON body (RFC 7946 media type)."""

    media_type = "application/geo+json"


def _problem(status: int, detail: str, field=None, headers=None) -> JSONResponse:
    return JSONResponse(
        {"detail": " ".join(str(detail).split()), "field": field},
        status_code=status,
        headers=headers,
    )


_ERRORS = {
    400: "The body is not a JSON object.",
    401: "Missing or unknown API key (only when the server requires keys).",
    404: "No forecast with that id in the catalogue.",
    413: "The body is larger than the limit (max_body_bytes in /v1/health).",
    422: "A field is missing or wrong: detail names it and the fix.",
    429: "Rate limit reached: retry after the Retry-After seconds.",
    503: "Busy, past the run-time limit, or the forecast cannot be opened now; retry later.",
}


def _errors(*codes) -> dict:
    return {c: {"model": Problem, "description": _ERRORS[c]} for c in codes}


def _hazards_schema() -> dict:
    text = (resources.files("icing") / "data" / "schemas" / "hazards-v1.json").read_text("utf-8")
    schema = json.loads(text)
    for key in ("$schema", "$id"):
        schema.pop(key, None)
    return schema


_FIX = {
    "route": "give a GeoJSON LineString Feature or a FeatureCollection of Point waypoints",
    "forecast": "use an id from GET /v1/forecasts",
    "airframe": "use a name from GET /v1/airframes",
    "depart": "give ISO 8601 with a zone, e.g. 2027-01-14T09:00:00Z",
    "time": "give ISO 8601 with a zone, e.g. 2027-01-14T12:00:00Z",
    "fail_on": "use trace, light, moderate or severe",
    "lat": "give degrees north, -90..90",
    "lon": "give degrees east, -180..180",
    "accept_gaps": "give true or false",
    "member_statistic": "give median, worst, or pNN with NN from 50 to 100",
    "member": "give a member index from the forecast's members in GET /v1/forecasts",
}


def _validation_problem(exc: RequestValidationError) -> JSONResponse:
    errors = exc.errors()
    first = errors[0] if errors else {"loc": ("body",), "msg": "invalid request"}
    loc = [str(p) for p in first.get("loc", ()) if p != "body"]
    if first.get("type") == "json_invalid" or not loc:
        return _problem(400, "body: not a JSON object (fix: send a JSON object)", "body")
    field = loc[0] if loc else "body"
    msg = str(first.get("msg", "invalid")).split("\n")[0]
    if first.get("type") == "extra_forbidden":
        fix = "remove it; see the request schema in /openapi.json"
    else:
        fix = _FIX.get(field, "see the request schema in /openapi.json")
    more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
    return _problem(422, f"{'.'.join(loc) or 'body'}: {msg} (fix: {fix}){more}", field)


def _utc_iso(value, field: str) -> str | None:
    """Return an aware datetime as a naive UTC ISO string (else refuse with a 422)."""
    if value is None:
        return None
    try:
        return value.astimezone(UTC).replace(tzinfo=None).isoformat()
    except (OverflowError, ValueError):
        raise _Refused(422, f"{field}: time out of range (fix: {_FIX[field]})", field) from None


class _Refused(Exception):
    def __init__(self, status, detail, field=None, headers=None):
        super().__init__(detail)
        self.status, self.detail, self.field, self.headers = status, detail, field, headers


async def _refresh(catalogue) -> None:
    """Rescan the catalogue folder when a scan is due (off the event loop)."""
    if catalogue.due():
        await asyncio.to_thread(catalogue.refresh)


async def _entry(state, forecast_id: str):
    """Return the catalogue entry of a forecast id, or refuse with a 404 or 503."""
    await _refresh(state.catalogue)
    entry = state.catalogue.get(forecast_id)
    if entry is None:
        raise _Refused(
            404,
            f"forecast: no forecast {forecast_id!r} (fix: {_FIX['forecast']})",
            "forecast",
        )
    if not entry.available:
        reason = entry.info.get("reason", "")
        raise _Refused(503, f"forecast: {forecast_id!r} is unavailable: {reason}", "forecast")
    return entry


async def _run(state, config: ServiceConfig, request: Request, job: dict) -> Response:
    """Hand a job to the pool; answer its result, or a 503 / 500 in one line."""
    job.update(
        request_id=request.state.request_id,
        catalog_dir=str(config.catalog),
        limits=config.limits(),
    )
    try:
        status, body, media = await state.pool.run(job)
    except Busy as err:
        retry = str(int(err.retry_after_s))
        return _problem(503, err.detail, None, headers={"Retry-After": retry})
    except RunTimeout:
        return _problem(
            503,
            f"the computation ran past the limit of {config.run_timeout_s:g} s and was "
            "stopped (fix: send shorter or fewer routes)",
            "route" if job["kind"] == "screen" else None,
        )
    except WorkerLost:
        return _problem(
            500,
            f"the computation ended abruptly (request {job['request_id']}); the service "
            "goes on (fix: report it with the request id)",
        )
    return Response(body, status_code=status, media_type=media)


def _catalogue_routes(app: FastAPI, config: ServiceConfig) -> None:
    """Health, airframes and forecasts."""
    state = app.state

    @app.get(
        "/v1/health",
        response_model=HealthResponse,
        tags=["service"],
        summary="Is the service up; its limits",
    )
    async def health():
        await _refresh(state.catalogue)
        available = sum(e.available for e in state.catalogue.entries())
        return {
            "status": "ok" if available else "degraded",
            "version": __version__,
            "schema_version": SCHEMA_VERSION,
            "forecasts_available": available,
            "auth": state.keyring is not None,
            "limits": config.limits(),
            "workers": state.pool.stats(),
        }

    @app.get(
        "/v1/airframes",
        response_model=AirframesResponse,
        responses=_errors(401, 429),
        tags=["catalogue"],
        summary="The airframe presets a request may name",
    )
    async def airframes():
        return {"airframes": state.airframes}

    @app.get(
        "/v1/forecasts",
        response_model=ForecastsResponse,
        responses=_errors(401, 429),
        tags=["catalogue"],
        summary="The forecasts of the catalogue: ids, valid times, domains",
    )
    async def forecasts():
        await _refresh(state.catalogue)
        return {"forecasts": [e.info for e in state.catalogue.entries()]}


def _screening_routes(app: FastAPI, config: ServiceConfig) -> None:
    """Screenings and profiles: each runs as a job in the pool."""
    state = app.state

    @app.post(
        "/v1/screen",
        response_class=GeoJSONResponse,
        responses={
            200: {
                "description": "The RFC 7946 FeatureCollection of hazard segments; the route "
                "summaries (each with outcome and outcome_reason), provenance, assumptions, "
                "outcome, warnings and the caution are foreign members.",
                "content": {"application/geo+json": {"schema": state.hazards_schema}},
            },
            **_errors(400, 401, 404, 413, 422, 429, 503),
        },
        tags=["screening"],
        summary="Screen route(s) against a forecast for an airframe",
    )
    async def screen(body: ScreenRequest, request: Request):
        entry = await _entry(state, body.forecast)
        positions = count_positions(body.route)
        if positions > config.max_positions:
            raise _Refused(
                422,
                f"route: {positions} positions, at most {config.max_positions} "
                "(fix: send the routes in several requests)",
                "route",
            )
        job = {
            "kind": "screen",
            "forecast": entry.ref(),
            "route": body.route,
            "airframe": body.airframe,
            "depart": _utc_iso(body.depart, "depart"),
            "fail_on": body.fail_on,
            "accept_gaps": body.accept_gaps,
            "member_statistic": body.member_statistic,
        }
        if job["depart"] is not None:
            job["depart"] += "Z"
        return await _run(state, config, request, job)

    @app.post(
        "/v1/profile",
        response_model=ProfileResponse,
        responses=_errors(400, 401, 404, 413, 422, 429, 503),
        tags=["screening"],
        summary="One forecast column, level by level, for an airframe",
    )
    async def profile(body: ProfileRequest, request: Request):
        entry = await _entry(state, body.forecast)
        job = {
            "kind": "profile",
            "forecast": entry.ref(),
            "lat": body.lat,
            "lon": body.lon,
            "time": _utc_iso(body.time, "time"),
            "airframe": body.airframe,
            "member": body.member,
        }
        return await _run(state, config, request, job)


def _handlers(app: FastAPI) -> None:
    @app.exception_handler(_Refused)
    async def refused(request, exc: _Refused):
        return _problem(exc.status, exc.detail, exc.field, exc.headers)

    @app.exception_handler(RequestValidationError)
    async def invalid(request, exc: RequestValidationError):
        return _validation_problem(exc)

    @app.exception_handler(StarletteHTTPException)
    async def http_error(request, exc: StarletteHTTPException):
        return _problem(exc.status_code, str(exc.detail), None, getattr(exc, "headers", None))

    @app.exception_handler(Exception)
    async def internal(request, exc: Exception):
        rid = getattr(request.state, "request_id", "-")
        log.exception("request %s: internal error", rid)
        return _problem(500, f"internal error (request {rid}; the server log has the details)")


_DESCRIPTION = """\
Estimates of the in-flight icing hazard along planned routes, for a named airframe,
against the forecasts of this server's catalogue.

**{caution}**

* Name forecasts by the `id` of `GET /v1/forecasts` and airframes by the `name` of
  `GET /v1/airframes`; the server never takes a file path from a request.
* `POST /v1/screen` returns the RFC 7946 FeatureCollection of hazard segments
  (`application/geo+json`); its foreign members carry each route's summary with
  `outcome` (`met` | `not-met` | `incomplete`) against `fail_on`, failing closed: a
  coverage gap meets the condition unless `accept_gaps` is true.
* Errors: a JSON object with a one-line `detail` naming the field and the fix.
  400 not JSON, 401 key, 404 unknown forecast, 413 body too large, 422 a field,
  429 rate limit (`Retry-After`), 503 busy or past the run-time limit.
* Limits in force: {limits}.
"""


async def _warm_up(catalogue, pool) -> None:
    """Have every worker open the catalogue's forecasts, so first requests are not slowed."""
    refs = [e.ref() for e in catalogue.entries() if e.available]
    if not refs:
        return
    job = {"kind": "open", "refs": refs, "airframe": "light-piston"}
    jobs = [pool.run(dict(job)) for _ in range(max(1, pool.size))]
    results = await asyncio.gather(*jobs, return_exceptions=True)
    failed = [r for r in results if isinstance(r, Exception) or r[0] != 200]
    if failed:
        log.warning("warm-up: %d worker(s) could not open every forecast", len(failed))


def create_app(config: ServiceConfig) -> FastAPI:
    """Build the application for a configuration (the pool starts with the app)."""
    from icing.airframes import airframes_to_json, list_airframes

    keyring = KeyRing(config.api_keys) if config.api_keys else None
    pool = JobPool(
        config.workers,
        run_timeout_s=config.run_timeout_s,
        queue_limit=config.queue_limit,
        queue_timeout_s=config.queue_timeout_s,
        max_open=config.max_open,
    )
    # one thread at a time reads forecast files in this process (inline computations too)
    catalogue = Catalogue(config.catalog, min_interval_s=config.rescan_s, file_lock=FILE_LOCK)

    @asynccontextmanager
    async def lifespan(app):
        await asyncio.to_thread(catalogue.refresh, force=True)
        await pool.start()
        warm = asyncio.create_task(_warm_up(catalogue, pool)) if config.warm_up else None
        try:
            yield
        finally:
            if warm is not None:
                warm.cancel()
            await pool.close()

    app = FastAPI(
        title="icing",
        version=__version__,
        lifespan=lifespan,
        docs_url=None,
        redoc_url=None,
        openapi_url="/openapi.json",
    )
    app.state.catalogue = catalogue
    app.state.pool = pool
    app.state.keyring = keyring
    app.state.config = config
    app.state.airframes = airframes_to_json(list_airframes())
    app.state.hazards_schema = _hazards_schema()
    _catalogue_routes(app, config)
    _screening_routes(app, config)
    _handlers(app)
    app.openapi = lambda: _openapi(app, config)
    limiter = RateLimiter(rate_per_s=config.rate_per_s, burst=config.burst)
    app.add_middleware(
        Gate, keyring=keyring, limiter=limiter, max_body_bytes=config.max_body_bytes
    )
    if config.cors_origins:
        from fastapi.middleware.cors import CORSMiddleware

        app.add_middleware(
            CORSMiddleware,
            allow_origins=list(config.cors_origins),
            allow_methods=["GET", "POST"],
            allow_headers=["Authorization", "Content-Type"],
            expose_headers=["Retry-After", "X-Request-ID"],
            max_age=600,
        )
    app.add_middleware(AccessLog)
    return app


def _openapi(app: FastAPI, config: ServiceConfig) -> dict:
    if app.openapi_schema:
        return app.openapi_schema
    limits = ", ".join(f"{k} {v:g}" for k, v in config.limits().items())
    doc = get_openapi(
        title=app.title,
        version=app.version,
        description=_DESCRIPTION.format(caution=CAUTION, limits=limits),
        routes=app.routes,
    )
    for ops in doc.get("paths", {}).values():
        for op in ops.values():
            for status, response in op.get("responses", {}).items():
                content = response.get("content", {})
                if status != "200" and "application/geo+json" in content:
                    # errors are plain JSON whatever the endpoint's result type
                    content["application/json"] = content.pop("application/geo+json")
    if config.api_keys:
        doc.setdefault("components", {})["securitySchemes"] = {
            "bearer": {
                "type": "http",
                "scheme": "bearer",
                "description": "An API key from the operator (icing serve-key add).",
            }
        }
        for path, ops in doc.get("paths", {}).items():
            if path != "/v1/health":
                for op in ops.values():
                    op["security"] = [{"bearer": []}]
    app.openapi_schema = doc
    return doc
