"""Runs: where route, forecast, physics and hazards meet.

``screen`` screens routes (``icing screen``), ``point`` diagnoses one column
(``icing profile``). Choices travel in options objects, not long parameter lists.
"""

from icing.runs.point import diagnose_point
from icing.runs.screen import ScreenOptions, screen_route, screen_routes

__all__ = ["ScreenOptions", "diagnose_point", "screen_route", "screen_routes"]
