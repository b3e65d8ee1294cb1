"""Runs: where route, forecast, physics and hazards meet.

``screen`` screens routes (``icing screen``), ``point`` diagnoses one column
(``icing profile``), ``grid`` grids a whole forecast by altitude band (``icing grid``).
Choices travel in options objects, not long parameter lists.
"""

from icing.runs.grid import GridOptions, grid_forecast
from icing.runs.point import diagnose_point
from icing.runs.screen import ScreenOptions, screen_route, screen_routes

__all__ = [
    "GridOptions",
    "ScreenOptions",
    "diagnose_point",
    "grid_forecast",
    "screen_route",
    "screen_routes",
]
