"""From diagnosed columns to hazards: read-off, segments, avoidance, grid bands and polygons.

Results are built once and not edited afterwards; the outputs layer formats them.
"""

from icing.hazards.avoidance import CANDIDATE_WORDING, annotate_segments, candidate_altitudes
from icing.hazards.bands import Bands, band_products, parse_bands
from icing.hazards.gridded import GridResult, grid_feature_collection, grid_features
from icing.hazards.readoff import icing_at, read_off
from icing.hazards.results import Curtain, RouteScreening
from icing.hazards.segments import build_segments, feature_collection, route_summary

__all__ = [
    "Bands",
    "GridResult",
    "band_products",
    "grid_feature_collection",
    "grid_features",
    "parse_bands",
    "CANDIDATE_WORDING",
    "Curtain",
    "RouteScreening",
    "annotate_segments",
    "build_segments",
    "candidate_altitudes",
    "feature_collection",
    "icing_at",
    "read_off",
    "route_summary",
]
