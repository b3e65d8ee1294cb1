"""Result containers of a route screening, shared by hazards, plots and reports.

Plain dataclasses of numpy arrays and dicts: the pipeline fills them, the
GeoJSON writer, the pictures, the avoidance search and the HTML report read
them. Units are in the field names or documented here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Curtain", "RouteScreening"]


@dataclass
class Curtain:
    """The diagnosis on a (sample, altitude) grid along the route.

    Attributes
    ----------
    distance_km : ndarray (n,)
        Distance of each sample along the route. [km]
    altitudes_m : ndarray (a,)
        Altitudes of the curtain rows, ascending, MSL (or pressure altitude for
        routes flown on flight levels: see ``altitude_reference``). [m]
    altitude_reference : str
        ``"msl"`` or ``"pressure"``.
    severity : ndarray (n, a) int
        Severity code (``icing.codes``) for the airframe; ``codes.GAP`` (-1) where
        the forecast gives no usable data, and also below the ground.
    below_ground : ndarray (n, a) bool
        Rows under the terrain (drawn as ground, never as "no icing").
    temperature_c : ndarray (n, a)
        Air temperature. [degC]
    cloud : ndarray (n, a) bool
        Liquid-bearing cloud present.
    sld_class : ndarray (n, a) int
        SLD class code (``codes.SLD_*``).
    ice_type : ndarray (n, a) int
        Ice type code (``codes.ICE_*``).
    accretion_rate_mm_h : ndarray (n, a)
        Stagnation thickness rate on the worst collector. [mm/h]
    ground_m : ndarray (n,)
        Surface elevation under each sample (NaN where unknown). [m]
    """

    distance_km: np.ndarray
    altitudes_m: np.ndarray
    altitude_reference: str
    severity: np.ndarray
    below_ground: np.ndarray
    temperature_c: np.ndarray
    cloud: np.ndarray
    sld_class: np.ndarray
    ice_type: np.ndarray
    accretion_rate_mm_h: np.ndarray
    ground_m: np.ndarray


@dataclass
class RouteScreening:
    """Everything known about one screened route.

    Attributes
    ----------
    route_name : str
    airframe_name : str
    samples : RouteSamples
        The samples along the track (``icing.route``).
    at_flight : dict of str -> ndarray (n,)
        Per-sample values at the planned altitude: ``covered`` (bool),
        ``severity`` (codes, GAP in gaps), ``temperature_c``, ``relative_humidity_pct``,
        ``lwc_g_m3``, ``basis``, ``droplet_number_cm3``, ``mvd_um``, ``sld_class``,
        ``sld_lwc_g_m3``, ``sld_mvd_um``, ``glaciation``, ``collection_efficiency``,
        ``beta0``, ``freezing_fraction``, ``ice_type``, ``accretion_rate_mm_h``,
        ``accretion_mm`` (ice added during the sample's own time), ``worst_collector``
        (name), ``altitude_ft``, ``distance_km``.
    curtain : Curtain
    segments : list of dict
        GeoJSON Features (DESIGN.md 3.4 properties).
    summary : dict
        The route summary (worst severity, minutes in icing, accretion, gaps, ...).
    waypoints : list of (str, float)
        Waypoint names and their distance along the route. [km]
    provenance : dict
    assumptions : dict
    ceiling_m : float or None
        Airframe ceiling used for the altitude search. [m]
    max_agl_m : float or None
        Height limit above the ground (drones). [m]
    """

    route_name: str
    airframe_name: str
    samples: Any
    at_flight: dict
    curtain: Curtain
    segments: list
    summary: dict
    waypoints: list
    provenance: dict = field(default_factory=dict)
    assumptions: dict = field(default_factory=dict)
    ceiling_m: float | None = None
    max_agl_m: float | None = None

    def to_geojson(self) -> dict:
        """Return this route's hazard segments as a GeoJSON FeatureCollection dict."""
        from icing.hazards.segments import feature_collection

        return feature_collection([self])

    @property
    def __geo_interface__(self) -> dict:
        return self.to_geojson()
