"""Result containers of a route screening, shared by hazards, plots and reports.

Frozen dataclasses, built once with everything in them and never edited: the
pipeline (:mod:`icing.runs.screen`) computes the parts, then builds one
:class:`RouteScreening`; the GeoJSON writer, the pictures, the avoidance search
and the HTML report only read them. Arrays are copies that own their memory, so
a screening never keeps a larger working array of the pipeline alive. Units are
in the field names or documented on each field.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

__all__ = ["Curtain", "RouteScreening", "owned"]


def owned(a):
    """Return ``a`` as an array that owns its memory (a copy when it is a view).

    Results keep only what they need: a view of a slice would keep the whole
    working array of the pipeline (every candidate column and curtain row) alive.
    """
    a = np.asarray(a)
    return a.copy() if a.base is not None else a


@dataclass(frozen=True)
class Curtain:
    """The diagnosis on a (sample, altitude) grid along the route.

    Every array owns its memory (see :func:`owned`).
    """

    distance_km: np.ndarray
    """(n,) distance of each sample along the route. [km]"""
    altitudes_m: np.ndarray
    """(a,) altitudes of the curtain rows, ascending, MSL (or pressure altitude
    for routes flown on flight levels: see ``altitude_reference``). [m]"""
    altitude_reference: str
    """``"msl"`` or ``"pressure"``: what ``altitudes_m`` measures."""
    severity: np.ndarray
    """(n, a) int severity code (``icing.codes``) for the airframe; ``codes.GAP``
    (-1) where the forecast gives no usable data, and also below the ground."""
    below_ground: np.ndarray
    """(n, a) bool: rows under the terrain (drawn as ground, never as "no icing")."""
    temperature_c: np.ndarray
    """(n, a) air temperature, NaN where unknown. [degC]"""
    cloud: np.ndarray
    """(n, a) bool: liquid-bearing cloud present."""
    sld_class: np.ndarray
    """(n, a) int SLD class code (``codes.SLD_*``)."""
    ice_type: np.ndarray
    """(n, a) int ice type code (``codes.ICE_*``)."""
    accretion_rate_mm_h: np.ndarray
    """(n, a) stagnation thickness rate on the worst collector. [mm/h]"""
    ground_m: np.ndarray
    """(n,) surface elevation MSL under each sample (NaN where unknown). [m]"""
    members: int = 1
    """Number of members (ensembles and spreads; 1 for a single forecast). With
    several, ``severity`` and the other fields are the statistic's member's."""
    member_statistic: str | None = None
    """The statistic whose word is ``severity`` (``"median"`` ...), None for one member."""
    member_fraction: dict | None = None
    """``{word: (n, a) array}``: fraction of the members with data at that word or
    worse (NaN where no member has data); None for a single forecast."""
    severity_worst_member: np.ndarray | None = None
    """(n, a) the worst member's severity code (GAP where no member has data)."""

    def __post_init__(self):
        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, np.ndarray):
                object.__setattr__(self, f.name, owned(value))
            elif isinstance(value, dict):
                object.__setattr__(self, f.name, _owned_tree(value))


@dataclass(frozen=True)
class RouteScreening:
    """Everything known about one screened route, built once.

    ``segments`` are GeoJSON Feature dicts with their candidate altitudes
    already in them and ``summary`` is complete at construction; nothing is
    added or changed afterwards (functions that derive a new view, such as
    :func:`icing.hazards.avoidance.annotate_segments`, return a new screening).
    """

    route_name: str
    """Name of the route (written into every output)."""
    airframe_name: str
    """Name of the airframe screened (preset name or the user file's ``name``)."""
    samples: Any
    """The samples along the track (:class:`icing.route.RouteSamples`)."""
    at_flight: dict
    """Per-sample arrays (n,) at the planned altitude: ``covered`` (bool),
    ``severity`` (codes, GAP in gaps), ``temperature_c``, ``relative_humidity_pct``,
    ``lwc_g_m3``, ``basis``, ``droplet_number_cm3``, ``mvd_um``, ``sld_class``,
    ``sld_lwc_g_m3``, ``sld_mvd_um``, ``glaciation``, ``collection_efficiency``,
    ``beta0``, ``freezing_fraction``, ``ice_type``, ``accretion_rate_mm_h``,
    ``accretion_mm`` (ice added during the sample's own time), ``worst_collector``
    (name), ``altitude_ft`` (in the route's reference), ``altitude_msl_m``,
    ``distance_km``; each array owns its memory."""
    curtain: Curtain
    """The diagnosis on the altitude curtain (cross-section, avoidance search)."""
    segments: tuple
    """GeoJSON Feature dicts of the hazard segments, in route order."""
    summary: dict
    """The route summary (worst severity, minutes in icing, accretion, gaps,
    candidate altitudes, caution, ...), JSON-ready."""
    waypoints: tuple
    """(name, distance along the route [km]) per waypoint."""
    provenance: dict = field(default_factory=dict)
    """Forecast files, issue and valid times used, tool version."""
    assumptions: dict = field(default_factory=dict)
    """Model choices and constants of the run (column physics, screening, airframe)."""
    ceiling_m: float | None = None
    """Airframe ceiling used for the altitude search. [m]"""
    max_agl_m: float | None = None
    """Height limit above the ground (drones). [m]"""
    candidates: tuple = ()
    """One candidate-altitude result (dict) per icing segment, in segment order
    (:func:`icing.hazards.avoidance.candidate_altitudes` plus ``segment_id``)."""

    def __post_init__(self):
        object.__setattr__(self, "segments", tuple(self.segments))
        object.__setattr__(self, "waypoints", tuple(self.waypoints))
        object.__setattr__(self, "candidates", tuple(self.candidates))
        at = self.at_flight
        if isinstance(at, dict):
            object.__setattr__(self, "at_flight", _owned_tree(at))

    def to_geojson(self) -> dict:
        """Return this route's hazard segments as a GeoJSON FeatureCollection dict."""
        from icing.hazards.segments import feature_collection

        return feature_collection([self])

    @property
    def __geo_interface__(self) -> dict:
        return self.to_geojson()


def _owned_tree(mapping):
    """Copy a dict of arrays (nested dicts too) so that each array owns its memory."""
    out = {}
    for k, v in mapping.items():
        if isinstance(v, np.ndarray):
            out[k] = owned(v)
        elif isinstance(v, dict):
            out[k] = _owned_tree(v)
        else:
            out[k] = v
    return out
