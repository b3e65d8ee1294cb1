"""From diagnosed columns to hazards: read-off at the flight altitude, segments, avoidance.

Results are built once and not edited afterwards; the outputs layer formats them.
"""

from icing.hazards.avoidance import CANDIDATE_WORDING, annotate_segments, candidate_altitudes
from icing.hazards.readoff import icing_at, read_off
from icing.hazards.results import Curtain, RouteScreening
from icing.hazards.segments import build_segments, feature_collection, route_summary

__all__ = [
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
