"""A grid run's result over the whole forecast, and its polygons as GeoJSON features.

:class:`GridResult` holds the products of :mod:`icing.hazards.bands` for every valid
time and band on the forecast's own grid, arrays shaped (time, band, y, x).
:func:`grid_features` turns the classes into one feature per (valid time, band,
severity, SLD class) and one per kind of coverage gap
(:func:`icing.hazards.areas.class_polygons`); :func:`grid_feature_collection` adds the
provenance, the assumptions and the caution as foreign members (RFC 7946, section 6.1).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from icing import codes
from icing._version import __version__
from icing.caution import CAUTION
from icing.hazards.areas import class_polygons
from icing.hazards.bands import COVERAGE_BELOW_GROUND, Bands

__all__ = [
    "GridResult",
    "grid_features",
    "grid_feature_collection",
    "class_codes",
    "GAP_CLASSES",
    "PRODUCTS",
    "MEMBER_PRODUCTS",
]

#: The products, their dtypes and what each holds (written into every output).
PRODUCTS = {
    "severity": "int8: worst severity in the band (codes 0..4); -1 where not covered",
    "sld": "int8: worst SLD class in the band (0 none, 1 freezing drizzle, 2 freezing rain); "
    "-1 where not covered",
    "coverage": "int8: 0 complete, 1 partial (part of the band above the ground could not be "
    "diagnosed: the severity is that of the rest, at least), 2 gap, 3 below ground",
    "lwc": "float32 [kg m-3]: cloud liquid water content at the band's worst altitude",
    "mvd": "float32 [m]: median volume diameter of the cloud drops there (NaN where none)",
    "accretion_rate": "float32 [m s-1]: ice accretion rate on the airframe's worst collector "
    "there",
}

#: What an ensemble's cells hold beyond a single forecast's, or in another sense.
MEMBER_PRODUCTS = {
    "severity": "int8: the stated statistic's word (member_statistic) among the members "
    "with data in the band (each member's word the worst in the band); -1 where no member "
    "has data",
    "sld, lwc, mvd, accretion_rate": "the statistic's member's, at its band's worst altitude",
    "coverage": "int8: 0 every member covers the whole band above its ground, 1 partial "
    "(some member lacks part or all of it: members_covering says how many have data), 2 no "
    "member has data, 3 below every member's ground",
    "severity_worst_member": "int8: the worst member's word; -1 where no member has data",
    "members_covering": "int16: members with data in the band (0: a coverage gap)",
    "member_fraction_<word>": "float32 0..1: fraction of the members with data at that word "
    "or worse (trace, light, moderate, severe); NaN where no member has data",
}

#: Class codes of the cells that are not covered, and the gap reason each stands for.
GAP_CLASSES = {100: "missing-values", 101: "below-ground"}


def class_codes(severity, sld, coverage):
    """One code per cell: ``3 severity + sld`` where there is icing, 0 none, gaps 100/101."""
    sev = np.asarray(severity, np.int16)
    out = np.where(sev >= codes.SEV_TRACE, 3 * sev + np.maximum(sld, 0), 0).astype(np.int16)
    gap = sev == codes.GAP
    below = np.asarray(coverage) == COVERAGE_BELOW_GROUND
    return np.where(gap, np.where(below, 101, 100), out).astype(np.int16)


@dataclass(frozen=True, eq=False)
class GridResult:
    """The products of a grid run, arrays shaped (time, band, y, x) on the forecast's grid."""

    airframe: str
    """Name of the airframe."""
    bands: Bands
    """The altitude bands."""
    times: np.ndarray
    """Valid times gridded (datetime64[ms], UTC)."""
    x: np.ndarray
    """x coordinate: longitude [deg] or projection x [m]."""
    y: np.ndarray
    """y coordinate: latitude [deg] or projection y [m]."""
    crs: object | None
    """pyproj CRS of projected grids; None for latitude-longitude grids."""
    grid_mapping: dict | None
    """CF grid_mapping attributes of projected grids."""
    periodic: bool
    """The longitudes go all the way round."""
    severity: np.ndarray
    """int8 severity codes; ``codes.GAP`` where not covered."""
    sld: np.ndarray
    """int8 SLD classes; ``codes.GAP`` where not covered."""
    coverage: np.ndarray
    """int8 :data:`icing.hazards.bands.COVERAGE` codes."""
    lwc: np.ndarray
    """float32 cloud liquid at the band's worst altitude. [kg m-3]"""
    mvd: np.ndarray
    """float32 cloud-drop median volume diameter there. [m]"""
    accretion_rate: np.ndarray
    """float32 accretion rate on the worst collector there. [m s-1]"""
    provenance: dict
    """Forecast files, grid, times and variables used; tool version."""
    assumptions: dict
    """Column and collector physics, the bands and how they are read, the products."""
    scratch: object = field(default=None, repr=False)
    """Keeps the folder of disk-backed arrays alive while the result lives (or None)."""
    members: int = 1
    """Number of members (1: a single forecast; the member fields below are then None)."""
    member_labels: tuple = ()
    """The members' names, in member order."""
    member_statistic: str | None = None
    """The statistic whose word is ``severity`` (``"median"``, ``"worst"``, ``"pNN"``)."""
    severity_worst_member: np.ndarray | None = None
    """int8 worst member's word; ``codes.GAP`` where no member has data."""
    members_covering: np.ndarray | None = None
    """int16 members with data in the band (0 where none has)."""
    member_fraction: dict | None = None
    """``{word: float32 array}``: fraction of the members with data at that word or worse
    (NaN where no member has data)."""

    def time_text(self, t) -> str:
        """ISO 8601 UTC text of valid time ``t`` (an index)."""
        return str(np.datetime_as_string(np.datetime64(self.times[t], "s"), unit="s")) + "Z"


def grid_features(result: GridResult, *, progress=None) -> list:
    """GeoJSON features of a grid run: icing areas and coverage gaps per time and band.

    One feature per (valid time, band, severity, SLD class) with icing (trace or
    worse) and one per (valid time, band, gap reason), each a Polygon or MultiPolygon
    in longitude and latitude. ``progress(done, total)`` is called after each slice.
    """
    out = []
    nt, nb = result.severity.shape[:2]
    for t in range(nt):
        for b in range(nb):
            cls = class_codes(result.severity[t, b], result.sld[t, b], result.coverage[t, b])
            wanted = [c for c in np.unique(cls) if c != 0]
            polys = class_polygons(
                cls, result.x, result.y, crs=result.crs, periodic=result.periodic, wanted=wanted
            )
            out += [_feature(result, t, b, c, polys[c]) for c in sorted(polys)]
            if progress is not None:
                progress(t * nb + b + 1, nt * nb)
    return out


def _feature(result, t, b, c, geom):
    """One Feature of class ``c`` at time ``t`` in band ``b``."""
    import shapely

    lo, hi = result.bands.bounds_ft(b)
    if c in GAP_CLASSES:
        props = {"kind": "coverage-gap", "severity": None, "sld": None}
        props["gap_reason"] = GAP_CLASSES[c]
    else:
        props = {
            "kind": "icing",
            "severity": codes.SEVERITY[c // 3],
            "sld": codes.SLD_CLASSES[c % 3],
        }
    props.update(
        altitude_ft_min=lo,
        altitude_ft_max=hi,
        altitude_reference="msl",
        valid_time=result.time_text(t),
        airframe=result.airframe,
        caution=CAUTION,
    )
    if geom.geom_type == "Polygon":  # one geometry type per layer for GIS readers
        geom = shapely.multipolygons([geom])
    return {"type": "Feature", "geometry": shapely.geometry.mapping(geom), "properties": props}


def grid_feature_collection(result: GridResult, features=None) -> dict:
    """Return the RFC 7946 FeatureCollection of a grid run, with its provenance and caution."""
    if features is None:
        features = grid_features(result)
    return {
        "type": "FeatureCollection",
        "features": [_plain(f) for f in features],
        "product": "icing grid",
        "airframe": result.airframe,
        "valid_times": [result.time_text(t) for t in range(len(result.times))],
        "bands_ft": [list(result.bands.bounds_ft(b)) for b in range(result.bands.count)],
        "provenance": {**result.provenance, "tool": f"icing {__version__}"},
        "assumptions": result.assumptions,
        "caution": CAUTION,
    }


def _plain(feature):
    """Coordinates as plain nested lists (shapely's mapping gives tuples)."""

    def walk(c):
        return [walk(x) for x in c] if isinstance(c, (list, tuple)) else c

    g = feature["geometry"]
    return {**feature, "geometry": {"type": g["type"], "coordinates": walk(g["coordinates"])}}
