"""Request and response models of the HTTP API: the OpenAPI document is built from them.

Field descriptions and examples are what a client in another language reads,
so they say units, time zones and what ``null`` means. Responses carry more
members than are listed (``additionalProperties``): clients must ignore what
they do not know, and the service adds members only by extension.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import AwareDatetime, BaseModel, ConfigDict, Field

from icing.airframes import list_airframes
from icing.codes import SEVERITY

__all__ = [
    "AIRFRAME_NAMES",
    "AirframesResponse",
    "ForecastInfo",
    "ForecastsResponse",
    "HealthResponse",
    "Problem",
    "ProfileRequest",
    "ProfileResponse",
    "ROUTE_EXAMPLE",
    "ScreenRequest",
]

#: The preset airframes a request may name (files are never taken from a request).
AIRFRAME_NAMES = tuple(a.name for a in list_airframes())
AirframeName = Literal[AIRFRAME_NAMES]  # type: ignore[valid-type]
SeverityWord = Literal[SEVERITY[1:]]  # type: ignore[valid-type]

ROUTE_EXAMPLE = {
    "type": "Feature",
    "properties": {
        "name": "Skerrow regional dispatch ODRIX-GORPE",
        "departure_time": "2027-01-14T09:00:00Z",
        "true_airspeed_kt": 250,
        "altitude_reference": "msl",
        "waypoint_names": ["ODRIX", "QELTA", "MYRSK", "TUVAK", "BRAXO", "FENNU", "GORPE"],
    },
    "geometry": {
        "type": "LineString",
        "coordinates": [
            [-26.0, 56.5, 914.4],
            [-24.9, 56.95, 2743.2],
            [-23.7, 57.45, 3657.6],
            [-22.55, 57.95, 4267.2],
            [-21.4, 58.55, 3657.6],
            [-20.6, 58.95, 2438.4],
            [-20.2, 59.2, 1219.2],
        ],
    },
}

_POINTS_EXAMPLE = {
    "type": "FeatureCollection",
    "properties": {
        "name": "Skerrow crossing",
        "departure_time": "2027-01-14T13:00:00Z",
        "true_airspeed_kt": 280,
        "altitude_reference": "pressure",
    },
    "features": [
        {
            "type": "Feature",
            "geometry": {"type": "Point", "coordinates": [-29.0, 57.3]},
            "properties": {"name": "ZULPA", "flight_level": 110},
        },
        {
            "type": "Feature",
            "geometry": {"type": "Point", "coordinates": [-24.0, 57.0]},
            "properties": {"name": "ESKOR", "flight_level": 150, "hold_min": 8},
        },
    ],
}

_ROUTE_DOC = (
    "The route(s), as in a GeoJSON route file (RFC 7946): a LineString Feature with "
    "[lon, lat, alt_m] positions (metres above mean sea level unless properties."
    'altitude_reference is "agl" or "pressure"), a FeatureCollection of Point waypoints in '
    "flight order (one route), or a FeatureCollection of LineString Features (one route "
    "each). Route properties: name, departure_time (ISO 8601 with a zone), "
    "true_airspeed_kt, altitude_reference, ground_elevation_m, and for LineStrings lists "
    "parallel to the positions: times, hold_min, waypoint_names; altitude_ft or "
    "flight_level for 2-D positions. Point properties: name, time, altitude_ft, "
    "flight_level, hold_min, tas_kt."
)


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid")


class Problem(BaseModel):
    """An error: one line saying what is wrong and how to fix it."""

    detail: str = Field(
        description="One line: the field, what is wrong and the fix.",
        examples=["forecast: no forecast 'gfs-old' (fix: use an id from GET /v1/forecasts)"],
    )
    field: str | None = Field(
        default=None,
        description="The request field the error concerns (null when none).",
        examples=["forecast"],
    )


class ScreenRequest(_Model):
    """Screen one route, or several, against a catalogue forecast for an airframe."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "route": ROUTE_EXAMPLE,
                    "forecast": "skerrow-demo.nc",
                    "airframe": "twin-turboprop",
                    "fail_on": "moderate",
                }
            ]
        },
    )
    route: dict[str, Any] = Field(
        description=_ROUTE_DOC,
        examples=[ROUTE_EXAMPLE, _POINTS_EXAMPLE],
        json_schema_extra={
            "required": ["type"],
            "properties": {
                "type": {"enum": ["Feature", "FeatureCollection", "LineString", "MultiLineString"]}
            },
        },
    )
    forecast: str = Field(
        min_length=1,
        max_length=200,
        description="Forecast id from GET /v1/forecasts (never a path).",
        examples=["skerrow-demo.nc"],
    )
    airframe: AirframeName = Field(
        description="Airframe preset name (GET /v1/airframes lists them with their collectors).",
        examples=["twin-turboprop"],
    )
    depart: AwareDatetime | None = Field(
        default=None,
        description="Departure time, ISO 8601 with a zone; overrides the route's "
        "departure_time. Times without a zone are refused.",
        examples=["2027-01-14T09:00:00Z"],
    )
    fail_on: SeverityWord | None = Field(
        default=None,
        description="Severity at which a route's outcome is 'met'. Fails closed: a route "
        "with any coverage gap meets it too, unless accept_gaps is true.",
        examples=["moderate"],
    )
    accept_gaps: bool = Field(
        default=False,
        description="Coverage gaps do not meet fail_on (for callers who screen gaps by other "
        "means); such routes are 'incomplete'.",
    )
    member_statistic: str | None = Field(
        default=None,
        pattern=r"^(median|worst|p(5[0-9]|[6-9][0-9]|100))$",
        description="Ensemble forecasts (members in GET /v1/forecasts): the statistic whose "
        "word is each segment's severity: median (default: the word at least half of the "
        "members reach), worst (any member), or pNN with NN 50-100 (the word at least "
        "100 - NN % of the members reach). The worst member's word and the fraction of "
        "members at each word or worse are always given beside it. Ignored for a single "
        "forecast.",
        examples=["median"],
    )


class ProfileRequest(_Model):
    """One forecast column, level by level, for an airframe."""

    model_config = ConfigDict(
        extra="forbid",
        json_schema_extra={
            "examples": [
                {
                    "forecast": "skerrow-demo.nc",
                    "lat": 57.0,
                    "lon": -24.5,
                    "time": "2027-01-14T12:00:00Z",
                    "airframe": "light-piston",
                }
            ]
        },
    )
    forecast: str = Field(
        min_length=1,
        max_length=200,
        description="Forecast id from GET /v1/forecasts.",
        examples=["skerrow-demo.nc"],
    )
    lat: float = Field(
        ge=-90, le=90, allow_inf_nan=False, description="Latitude [deg N].", examples=[57.0]
    )
    lon: float = Field(
        ge=-180,
        le=180,
        allow_inf_nan=False,
        description="Longitude [deg E], -180..180.",
        examples=[-24.5],
    )
    time: AwareDatetime | None = Field(
        default=None,
        description="Valid time, ISO 8601 with a zone; default the forecast's first valid time.",
        examples=["2027-01-14T12:00:00Z"],
    )
    airframe: AirframeName = Field(description="Airframe preset name.", examples=["light-piston"])
    member: int | None = Field(
        default=None,
        ge=0,
        le=199,
        description="Ensemble forecasts only, and required for them: the member whose column "
        "is shown, by its index in the forecast's members (GET /v1/forecasts). An ensemble "
        "has one column per member, never a blend of them.",
    )  # no example: the documented forecast is a single one, which refuses a member


class HealthResponse(BaseModel):
    """The server is up; what it serves and its limits."""

    model_config = ConfigDict(extra="allow")
    status: Literal["ok", "degraded"] = Field(
        description="'degraded' when no forecast is available."
    )
    version: str = Field(description="Tool version.", examples=["0.2.0"])
    schema_version: str = Field(description="Output schema version.", examples=["1.0"])
    forecasts_available: int = Field(description="Forecasts that can be used now.")
    auth: bool = Field(description="True when an API key is required (Authorization: Bearer).")
    limits: dict[str, Any] = Field(
        description="The request limits in force (body bytes, routes, samples, run time, "
        "rate per key).",
    )
    workers: dict[str, Any] = Field(description="Worker pool: mode, size, busy, waiting.")


class AirframeInfo(BaseModel):
    """An airframe preset and its collectors (the parts that catch ice)."""

    model_config = ConfigDict(extra="allow")
    name: str = Field(examples=["twin-turboprop"])
    description: str | None = None
    true_airspeed_kt: float = Field(description="Cruise true airspeed [kt].")
    ceiling_ft: float | None = Field(default=None, description="Ceiling [ft].")
    ice_protection: str = Field(description="none | de-ice | anti-ice.")
    ice_tolerance_mm: float = Field(description="Ice the reference collector can carry [mm].")
    reference: str = Field(description="The collector that sets severity.")
    collectors: list[dict[str, Any]] = Field(description="Collectors and their dimensions (SI).")


class AirframesResponse(BaseModel):
    """The airframe presets a request may name."""

    airframes: list[AirframeInfo]


class ForecastInfo(BaseModel):
    """A catalogue forecast (valid times in UTC, domain as an RFC 7946 bbox)."""

    model_config = ConfigDict(extra="allow")
    id: str = Field(description="Stable id: name it in requests.", examples=["skerrow-demo.nc"])
    status: Literal["available", "unavailable"]
    kind: str | None = Field(
        default=None, description="grid | profiles | ensemble.", examples=["grid"]
    )
    issue_time: str | None = Field(default=None, examples=["2027-01-14T00:00:00Z"])
    valid_times: list[str] = Field(default_factory=list, examples=[["2027-01-14T06:00:00Z"]])
    valid_from: str | None = Field(default=None, examples=["2027-01-14T06:00:00Z"])
    valid_to: str | None = Field(default=None, examples=["2027-01-14T18:00:00Z"])
    time_tolerance_h: float | None = Field(
        default=None, description="How far outside the valid times a sample may lie [h]."
    )
    bounds: list[float] | None = Field(
        default=None,
        description="[lon_min, lat_min, lon_max, lat_max] [deg]; lon_min > lon_max across 180.",
        examples=[[-31.0, 53.5, -17.0, 60.5]],
    )
    reason: str | None = Field(default=None, description="Why an unavailable forecast is so.")
    members: list[dict[str, Any]] | None = Field(
        default=None,
        description="Ensembles only: the members, each {index, label} (GRIB number, NetCDF "
        "realization...). POST /v1/screen screens them all; POST /v1/profile shows one "
        "(its member field).",
        examples=[[{"index": 0, "label": "number 0 (control)"}]],
    )


class ForecastsResponse(BaseModel):
    """The catalogue."""

    forecasts: list[ForecastInfo]


class ProfileLevel(BaseModel):
    """One level of the column (null where unknown; never 0 for unknown)."""

    model_config = ConfigDict(extra="allow")
    pressure_hpa: float | None
    height_m: float | None
    temperature_c: float | None
    relative_humidity_pct: float | None
    cloud: bool
    lwc_g_m3: float | None
    basis: str
    mvd_um: float | None
    sld: str
    below_ground: bool
    collection_efficiency: float | None
    accretion_rate_mm_h: float | None
    ice_type: str | None
    severity: str | None


class ProfileResponse(BaseModel):
    """The column at one point; ``covered`` false means a coverage gap (icing unknown)."""

    model_config = ConfigDict(extra="allow")
    covered: bool
    gap_reason: str = Field(description="Why the point is a coverage gap ('' when covered).")
    levels: list[ProfileLevel] = Field(description="Levels from the ground up.")
    lat: float
    lon: float
    time: str = Field(description="Valid time used (UTC).")
    forecast: str
    airframe: str | None = None
    caution: str
    warnings: list[str]
    provenance: dict[str, Any]
    assumptions: dict[str, Any]
