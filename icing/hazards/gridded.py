"""A grid run's result over the whole forecast, and its polygons as GeoJSON features.

:class:`GridResult` holds the products of :mod:`icing.hazards.bands` for every valid
time and band on the forecast's own grid, arrays shaped (time, band, y, x).
:func:`grid_features` turns the classes into one feature per (valid time, band,
severity, SLD class) and one per kind of coverage gap
(:func:`icing.hazards.areas.class_polygons`); :func:`grid_feature_collection` adds the
provenance, the assumptions and the caution as foreign members (RFC 7946, section 6.1).
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from icing import codes
from icing._version import __version__
from icing.caution import CAUTION
from icing.hazards.areas import class_polygons
from icing.hazards.bands import COVERAGE_BELOW_GROUND, Bands
from icing.hazards.ensemble import (
    FRACTION_BAND_LABELS,
    FRACTION_MEANING,
    SHOWN_FRACTION_WORDS,
    fraction_band,
)

__all__ = [
    "GridResult",
    "grid_features",
    "grid_feature_collection",
    "member_properties",
    "member_fraction_features",
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
    lonlat: tuple | None = field(default=None, repr=False)
    """(longitude, latitude) of the cell centres, (y, x) [deg], of a projected grid when
    computed ahead (the run does it while its workers start), else None."""

    def time_text(self, t) -> str:
        """ISO 8601 UTC text of valid time ``t`` (an index)."""
        return str(np.datetime_as_string(np.datetime64(self.times[t], "s"), unit="s")) + "Z"


def grid_features(result: GridResult, *, progress=None) -> list:
    """GeoJSON features of a grid run: icing areas and coverage gaps per time and band.

    One feature per (valid time, band, severity, SLD class) with icing (trace or
    worse) and one per (valid time, band, gap reason), each a Polygon or MultiPolygon
    in longitude and latitude. ``progress(done, total)`` is called after each slice.
    An ensemble's features carry its member properties (:func:`member_properties`).
    """
    nt, nb = result.severity.shape[:2]
    slices = [(t, b) for t in range(nt) for b in range(nb)]
    out = []
    with ThreadPoolExecutor(_threads(len(slices))) as pool:
        for done, feats in enumerate(pool.map(lambda tb: _slice_features(result, *tb), slices), 1):
            out += feats
            if progress is not None:
                progress(done, len(slices))
    return out


def _threads(n):
    """Threads for ``n`` slices: the polygons are built mostly outside the interpreter lock."""
    return max(1, min(n, os.cpu_count() or 1, 4))


def _slice_features(result, t, b):
    """Return the features of one (time, band) slice, in class order."""
    cls = class_codes(result.severity[t, b], result.sld[t, b], result.coverage[t, b])
    wanted = [c for c in np.unique(cls) if c != 0]
    polys = class_polygons(
        cls, result.x, result.y, crs=result.crs, periodic=result.periodic, wanted=wanted
    )
    out = []
    for c in sorted(polys):
        f = _feature(result, t, b, c, polys[c])
        if result.members > 1:
            f["properties"].update(member_properties(result, t, b, cls == c))
        out.append(f)
    return out


def member_properties(result: GridResult, t, b, cells) -> dict:
    """Return an ensemble's properties of a polygon over its ``cells`` (bool (y, x)) at (t, b).

    ``members`` (how many), ``members_covering`` (the fewest members with data in
    its cells), ``member_statistic``, ``severity_worst_member`` (the worst member's
    word in its cells) and ``member_fraction`` (per word, the largest fraction in its
    cells: a polygon is never shown milder than its worst cell, as a route segment
    gives the largest over its samples); null where no member has data.
    """
    cells = np.asarray(cells, bool)
    covering = np.asarray(result.members_covering[t, b])[cells]
    worst = int(np.asarray(result.severity_worst_member[t, b])[cells].max(initial=codes.GAP))
    fractions = {}
    for word, frac in result.member_fraction.items():
        f = np.asarray(frac[t, b])[cells]
        f = f[np.isfinite(f)]
        fractions[word] = round(float(f.max()), 4) if f.size else None
    known = any(v is not None for v in fractions.values())
    return {
        "members": int(result.members),
        "members_covering": int(covering.min()) if covering.size else 0,
        "member_statistic": result.member_statistic,
        "severity_worst_member": codes.SEVERITY[worst] if worst >= 0 else None,
        "member_fraction": fractions if known else None,
    }


def member_fraction_features(result: GridResult, *, progress=None) -> list:
    """Polygons of an ensemble's member fractions (the ``member-fraction`` layer).

    Per (valid time, band, threshold) of :data:`SHOWN_FRACTION_WORDS` (light and
    moderate), one feature per class of the fraction of members at that word or
    worse (:func:`icing.hazards.ensemble.fraction_band`: up to 1/4, 1/4 - 1/2,
    1/2 - 3/4, over 3/4, all members; a fraction of 0 is no feature), with
    ``kind`` "member-fraction", ``threshold``, ``fraction_class`` (1..5),
    ``fraction_class_label``, ``member_fraction_max`` (the largest in its cells) and
    the member properties; and per (valid time, band) the coverage-gap features of
    the main layer (no member has data, or the band under every member's ground), so
    that the layer tells "no member" from "unknown" on its own.
    """
    out = []
    nt, nb = result.severity.shape[:2]
    for t in range(nt):
        for b in range(nb):
            gap = class_codes(result.severity[t, b], result.sld[t, b], result.coverage[t, b])
            for i, word in enumerate(SHOWN_FRACTION_WORDS):
                out += _fraction_slice(result, t, b, word, gap, gaps_too=i == 0)
            if progress is not None:
                progress(t * nb + b + 1, nt * nb)
    return out


def _fraction_slice(result, t, b, word, gap, *, gaps_too):
    """Return the fraction features of one threshold at (t, b) (and the gaps with the first)."""
    frac = np.asarray(result.member_fraction[word][t, b], float)
    cls = np.where(gap >= 100, gap, fraction_band(frac)).astype(np.int16)
    wanted = [c for c in np.unique(cls) if 1 <= c <= 5 or (gaps_too and c >= 100)]
    polys = class_polygons(
        cls, result.x, result.y, crs=result.crs, periodic=result.periodic, wanted=wanted
    )
    out = []
    for c in sorted(polys):
        props = None
        if c < 100:
            props = {
                "kind": "member-fraction",
                "threshold": word,
                "fraction_class": int(c),
                "fraction_class_label": FRACTION_BAND_LABELS[c],
                "member_fraction_max": round(float(np.nanmax(frac[cls == c])), 4),
            }
        f = _feature(result, t, b, c, polys[c], props)
        f["properties"].update(member_properties(result, t, b, cls == c))
        out.append(f)
    return out


def _feature(result, t, b, c, geom, props=None):
    """One Feature of class ``c`` at time ``t`` in band ``b`` (or of the ``props`` given)."""
    import shapely

    lo, hi = result.bands.bounds_ft(b)
    if props is not None:
        props = dict(props)
    elif c in GAP_CLASSES:
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


def grid_feature_collection(result: GridResult, features=None, *, product="icing grid") -> dict:
    """Return the RFC 7946 FeatureCollection of a grid run, with its provenance and caution.

    ``product`` names the layer (``"icing grid member fractions"`` for the features of
    :func:`member_fraction_features`). An ensemble's collection also carries
    ``members``, ``member_labels``, ``member_statistic`` and the fractions' meaning.
    """
    if features is None:
        features = grid_features(result)
    extra = {}
    if result.members > 1:
        extra = {
            "members": int(result.members),
            "member_labels": list(result.member_labels),
            "member_statistic": result.member_statistic,
            "member_fraction_meaning": FRACTION_MEANING,
        }
    return {
        "type": "FeatureCollection",
        "features": [_plain(f) for f in features],
        "product": product,
        **extra,
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
