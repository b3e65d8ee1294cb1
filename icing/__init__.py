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

from icing._version import SCHEMA_VERSION, __version__

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
    "screen_route": "runs",
    "screen_routes": "runs",
    "feature_collection": "hazards",
    "RouteScreening": "hazards",
    "Curtain": "hazards",
    "candidate_altitudes": "hazards",
    "annotate_segments": "hazards",
    "plot_cross_section": "outputs.plot",
    "plot_route_map": "outputs.plot",
    "write_report": "outputs.report",
    "diagnose_columns": "calc",
    "ColumnOptions": "calc",
    "ColumnDiagnosis": "calc",
    "moist_adiabat_temperature": "calc",
    "terminal_velocity": "calc",
    "air_viscosity": "calc",
    "kohler_critical": "calc",
    "twomey_activation": "calc",
    "median_volume_diameter": "calc",
    "marshall_palmer": "calc",
    "spectrum_bins": "calc",
    "AIR_MASSES": "calc",
    "air_mass": "calc",
    "diagnose_sld": "calc",
    "appendix_o_class": "calc",
    "cylinder_collision_efficiency": "calc",
    "recovery_temperature": "calc",
    "freezing_fraction": "calc",
    "airframe_icing": "calc",
    "AirframeIcing": "calc",
    "stagnation_efficiency": "calc",
    "spectrum_collection": "calc",
    "Airframe": "calc",
    "Collector": "calc",
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
