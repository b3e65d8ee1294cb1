"""Forecasts: the readers of forecast files and the columns they give at route samples.

Every reader yields the same internal structure; route screening, ``profile``
and the grid mode read only that. :func:`load_forecast` picks the reader by the
file's content and returns a :class:`Forecast` whose :meth:`Forecast.columns_at`
brings whole columns to the samples.
"""

from icing.forecast.core import (
    GAP_REASONS,
    ColumnSet,
    Forecast,
    GridForecast,
    ProfileForecast,
    demo_forecast_path,
    load_forecast,
)

__all__ = [
    "GAP_REASONS",
    "ColumnSet",
    "Forecast",
    "GridForecast",
    "ProfileForecast",
    "demo_forecast_path",
    "load_forecast",
]
