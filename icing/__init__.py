"""icing: in-flight icing hazard along a planned route, for a specific airframe.

The stable public API. Names are imported lazily (PEP 562) so that the command
line starts fast and a program that only needs the physics functions does not
load the readers.

CAUTION: every result is an estimate from a forecast, not an official forecast;
see :data:`icing.caution.CAUTION`.

Examples
--------
>>> import icing
>>> round(float(icing.air_viscosity(273.15)) * 1e5, 3)
1.716
"""

from __future__ import annotations

from importlib import import_module

from ._version import SCHEMA_VERSION, __version__

__all__ = [
    "__version__",
    "SCHEMA_VERSION",
    "CAUTION",
    # errors
    "IcingError",
    "InputError",
    "RouteError",
    "ForecastError",
    "AirframeError",
    "PlausibilityWarning",
    # pipeline and I/O
    "load_route",
    "load_routes",
    "sample_route",
    "Route",
    "Waypoint",
    "RouteSamples",
    "load_forecast",
    "Forecast",
    "GridForecast",
    "ProfileForecast",
    "ColumnSet",
    "GAP_REASONS",
    "demo_forecast_path",
    "load_airframe",
    "list_airframes",
    "screen_route",
    "screen_routes",
    "feature_collection",
    "RouteScreening",
    "Curtain",
    "candidate_altitudes",
    "annotate_segments",
    "plot_cross_section",
    "plot_route_map",
    "write_report",
    # column physics
    "diagnose_columns",
    "ColumnOptions",
    "ColumnDiagnosis",
    "moist_adiabat_temperature",
    "terminal_velocity",
    "air_viscosity",
    "kohler_critical",
    "twomey_activation",
    "median_volume_diameter",
    "marshall_palmer",
    "spectrum_bins",
    "AIR_MASSES",
    "air_mass",
    "diagnose_sld",
    "appendix_o_class",
    # collector physics
    "cylinder_collision_efficiency",
    "recovery_temperature",
    "freezing_fraction",
    "airframe_icing",
    "AirframeIcing",
    "stagnation_efficiency",
    "spectrum_collection",
    "Airframe",
    "Collector",
]

_WHERE = {
    "CAUTION": "caution",
    "IcingError": "errors",
    "InputError": "errors",
    "RouteError": "errors",
    "ForecastError": "errors",
    "AirframeError": "errors",
    "PlausibilityWarning": "errors",
    "load_route": "route",
    "load_routes": "route",
    "sample_route": "route",
    "Route": "route",
    "Waypoint": "route",
    "RouteSamples": "route",
    "load_forecast": "forecast",
    "Forecast": "forecast",
    "GridForecast": "forecast",
    "ProfileForecast": "forecast",
    "ColumnSet": "forecast",
    "GAP_REASONS": "forecast",
    "demo_forecast_path": "forecast",
    "load_airframe": "airframes",
    "list_airframes": "airframes",
    "screen_route": "pipeline",
    "screen_routes": "pipeline",
    "feature_collection": "hazards",
    "RouteScreening": "results",
    "Curtain": "results",
    "candidate_altitudes": "avoidance",
    "annotate_segments": "avoidance",
    "plot_cross_section": "plot",
    "plot_route_map": "plot",
    "write_report": "report",
    "diagnose_columns": "column",
    "ColumnOptions": "column",
    "ColumnDiagnosis": "column",
    "moist_adiabat_temperature": "thermo",
    "terminal_velocity": "droplets",
    "air_viscosity": "thermo",
    "kohler_critical": "droplets",
    "twomey_activation": "droplets",
    "median_volume_diameter": "droplets",
    "marshall_palmer": "droplets",
    "spectrum_bins": "droplets",
    "AIR_MASSES": "droplets",
    "air_mass": "droplets",
    "diagnose_sld": "sld",
    "appendix_o_class": "sld",
    "cylinder_collision_efficiency": "collection",
    "recovery_temperature": "accretion",
    "freezing_fraction": "accretion",
    "airframe_icing": "accretion",
    "AirframeIcing": "accretion",
    "stagnation_efficiency": "collection",
    "spectrum_collection": "collection",
    "Airframe": "airframes",
    "Collector": "airframes",
}


def __getattr__(name: str):
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module 'icing' has no attribute {name!r}")
    value = getattr(import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
