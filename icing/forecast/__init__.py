"""Forecasts: the readers of forecast files and the columns they give at route samples.

The modules follow the data flow. Files are recognised by content and read
(:mod:`~icing.forecast.load`) by a reader per format: profile JSON/CSV
(:mod:`~icing.forecast.profiles` -> :mod:`~icing.forecast.table`), CF and
data-service NetCDF (:mod:`~icing.forecast.netcdf`). Gridded readers share the
variable discovery (:mod:`~icing.forecast.discovery`), the units
(:mod:`~icing.forecast.units`) and the build of the one internal structure
(:mod:`~icing.forecast.build` -> :mod:`~icing.forecast.dataset`: an xarray Dataset
in SI with lazy :mod:`~icing.forecast.fields`). The forecasts read it:
:class:`GridForecast` (:mod:`~icing.forecast.grid`: locate, read tiles through a
lock-safe :mod:`~icing.forecast.tiles` cache, interpolate with
:mod:`~icing.forecast.interp`) and :class:`ProfileForecast`
(:mod:`~icing.forecast.points`), and :class:`EnsembleForecast`
(:mod:`~icing.forecast.ensemble`: members from a member dimension or from several
files); :mod:`~icing.forecast.assemble` turns the
interpolated values into the column physics' inputs, a :class:`ColumnSet`
(:mod:`~icing.forecast.columns`).
"""

from icing.forecast.columns import GAP_REASONS, ColumnSet, Forecast
from icing.forecast.ensemble import EnsembleForecast, EnsembleMember
from icing.forecast.grid import GridForecast
from icing.forecast.load import demo_forecast_path, load_ensemble, load_forecast
from icing.forecast.points import ProfileForecast

__all__ = [
    "GAP_REASONS",
    "ColumnSet",
    "EnsembleForecast",
    "EnsembleMember",
    "Forecast",
    "GridForecast",
    "ProfileForecast",
    "demo_forecast_path",
    "load_ensemble",
    "load_forecast",
]
