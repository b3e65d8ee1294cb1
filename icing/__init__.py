"""icing: in-flight icing hazard along a planned route, for a specific airframe.

The stable public API. Names are imported lazily (PEP 562) so that the command
line starts fast and a program that only needs the physics functions does not
load the readers.

CAUTION: every result is an estimate from a forecast, not an official forecast;
see :data:`icing.caution.CAUTION`.

Examples
--------
>>> import icing
>>> round(float(icing.calc.air_viscosity(273.15)) * 1e5, 3)
1.716

The physics lives in :mod:`icing.calc`. Its functions were also reachable from
the top level before 0.2; those names still work for one release and warn with
a :class:`DeprecationWarning` that names their new home.
"""

from __future__ import annotations

import warnings
from importlib import import_module

from icing._version import SCHEMA_VERSION, __version__

__all__ = [
    "__version__",
    "SCHEMA_VERSION",
    "CAUTION",
    "calc",
    # errors
    "IcingError",
    "InputError",
    "RouteError",
    "ForecastError",
    "AirframeError",
    "PlausibilityWarning",
    # routes, forecasts, airframes
    "load_route",
    "load_routes",
    "sample_route",
    "Route",
    "Waypoint",
    "RouteSamples",
    "load_forecast",
    "load_ensemble",
    "EnsembleForecast",
    "Forecast",
    "GridForecast",
    "ProfileForecast",
    "ColumnSet",
    "GAP_REASONS",
    "demo_forecast_path",
    "load_airframe",
    "list_airframes",
    "Airframe",
    "Collector",
    # runs and results
    "screen_route",
    "screen_routes",
    "diagnose_point",
    "grid_forecast",
    "GridOptions",
    "GridResult",
    "grid_feature_collection",
    "feature_collection",
    "RouteScreening",
    "Curtain",
    "candidate_altitudes",
    "annotate_segments",
    # outputs
    "plot_cross_section",
    "plot_route_map",
    "write_report",
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
    "load_ensemble": "forecast",
    "EnsembleForecast": "forecast",
    "Forecast": "forecast",
    "GridForecast": "forecast",
    "ProfileForecast": "forecast",
    "ColumnSet": "forecast",
    "GAP_REASONS": "forecast",
    "demo_forecast_path": "forecast",
    "load_airframe": "airframes",
    "list_airframes": "airframes",
    "Airframe": "calc",
    "Collector": "calc",
    "screen_route": "runs",
    "screen_routes": "runs",
    "diagnose_point": "runs",
    "grid_forecast": "runs",
    "GridOptions": "runs",
    "GridResult": "hazards",
    "grid_feature_collection": "hazards",
    "feature_collection": "hazards",
    "RouteScreening": "hazards",
    "Curtain": "hazards",
    "candidate_altitudes": "hazards",
    "annotate_segments": "hazards",
    "plot_cross_section": "outputs.plot",
    "plot_route_map": "outputs.plot",
    "write_report": "outputs.report",
}

#: Physics names reachable from the top level before 0.2: they now live in
#: :mod:`icing.calc` and warn when reached from here (to be removed in 0.3).
_MOVED_TO_CALC = frozenset(
    {
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
        "cylinder_collision_efficiency",
        "recovery_temperature",
        "freezing_fraction",
        "airframe_icing",
        "AirframeIcing",
        "stagnation_efficiency",
        "spectrum_collection",
    }
)


def __getattr__(name: str):
    if name == "calc":
        return import_module(".calc", __name__)
    if name in _MOVED_TO_CALC:
        warnings.warn(
            f"icing.{name} moved to icing.calc.{name}; the top-level name will be removed in 0.3",
            DeprecationWarning,
            stacklevel=2,
        )
        return getattr(import_module(".calc", __name__), name)
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module 'icing' has no attribute {name!r}")
    value = getattr(import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
