"""Pictures of a route screening: vertical cross-section and plan-view map.

Both are drawn with matplotlib's object API (``matplotlib.figure.Figure``; no
pyplot, no global figure state) and written as PNG or SVG by the file's
suffix. Nothing is fetched from the network. The shared style (colours,
hatches, the caution box) lives in :mod:`icing.outputs.plot.style`; each picture
draws one layer per function (:mod:`~icing.outputs.plot.section`,
:mod:`~icing.outputs.plot.routemap`).
"""

from icing.outputs.plot.routemap import plot_route_map
from icing.outputs.plot.section import plot_cross_section
from icing.outputs.plot.style import (
    GAP_LABEL,
    SEVERITY_COLOURS,
    SEVERITY_HATCHES,
    check_output_path,
    hold_runs,
)

__all__ = [
    "SEVERITY_COLOURS",
    "SEVERITY_HATCHES",
    "GAP_LABEL",
    "check_output_path",
    "hold_runs",
    "plot_cross_section",
    "plot_route_map",
]
