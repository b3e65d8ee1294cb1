"""Samples -> hazard segments -> GeoJSON FeatureCollection and route summaries.

Contiguous samples with the same kind, severity, SLD class and ice type merge
into one segment, so a short severe stretch is never hidden inside a longer
light one. Every sample's time belongs to exactly one segment (``dt_s`` of
:class:`icing.route.RouteSamples`), so durations and accretion add up without
double counting. Coverage gaps are their own segments with null physics; they
are never written or summarised as "no icing".

Geometry follows RFC 7946: ``[lon, lat, alt_m]`` positions (WGS 84, at most 6
decimals, no ``crs`` member); a segment that crosses the antimeridian becomes a
MultiLineString cut at +/-180 degrees (RFC 7946 section 3.1.9).
"""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np

from icing import codes
from icing._version import SCHEMA_VERSION, __version__
from icing.caution import CAUTION, GAP_NOTE
from icing.constants import FT

__all__ = [
    "segment_samples",
    "build_segments",
    "route_summary",
    "feature_collection",
]

KIND_ICING, KIND_GAP, KIND_CLEAR = "icing", "coverage-gap", "no-icing"


def _kind(severity: np.ndarray, covered: np.ndarray) -> np.ndarray:
    kind = np.full(severity.shape, KIND_CLEAR, dtype=object)
    kind[severity >= codes.SEV_TRACE] = KIND_ICING
    kind[(~covered) | (severity == codes.GAP)] = KIND_GAP
    return kind


def segment_samples(at_flight: dict) -> list[tuple[int, int]]:
    """Split the samples into runs of equal (kind, severity, SLD class, ice type).

    Parameters
    ----------
    at_flight : dict
        Per-sample arrays with ``severity``, ``covered``, ``sld_class``, ``ice_type``.

    Returns
    -------
    list of (start, stop)
        Half-open sample index ranges, in order, covering every sample once.

    Examples
    --------
    >>> s = {"severity": np.array([0, 2, 2, 3, -1]), "covered": np.array([1, 1, 1, 1, 0], bool),
    ...      "sld_class": np.zeros(5, int), "ice_type": np.array([0, 1, 1, 1, 0])}
    >>> segment_samples(s)
    [(0, 1), (1, 3), (3, 4), (4, 5)]
    """
    sev = np.asarray(at_flight["severity"])
    n = sev.size
    if n == 0:
        return []
    kind = _kind(sev, np.asarray(at_flight["covered"], bool))
    icing = kind == KIND_ICING
    sld = np.where(icing, at_flight["sld_class"], 0)
    ice = np.where(icing, at_flight["ice_type"], 0)
    sev_k = np.where(icing, sev, 0)
    change = np.zeros(n, bool)
    change[1:] = (
        (kind[1:] != kind[:-1])
        | (sev_k[1:] != sev_k[:-1])
        | (sld[1:] != sld[:-1])
        | (ice[1:] != ice[:-1])
    )
    starts = np.flatnonzero(change).tolist()
    bounds = [0] + starts + [n]
    return [(a, b) for a, b in zip(bounds[:-1], bounds[1:], strict=True) if b > a]


def _round(x, nd=6):
    return None if x is None or not np.isfinite(x) else round(float(x), nd)


def _iso(t) -> str:
    ms = np.datetime64(t, "ms").astype("int64")
    return datetime.fromtimestamp(ms / 1000.0, tz=UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _geometry(lon, lat, alt) -> dict:
    """RFC 7946 LineString, or a MultiLineString cut at the antimeridian.

    Positions are rounded to 6 decimals (lon, lat) and 0.1 m; where a step between
    two positions crosses +/-180 degrees, the latitude and altitude at the cut are
    interpolated on the unwrapped longitude and the line is split there.
    """
    lon, lat, alt = (np.atleast_1d(np.asarray(a, float)) for a in (lon, lat, alt))
    if lon.size == 1:  # one sample: a degenerate but valid two-position line
        lon, lat, alt = (np.repeat(a, 2) for a in (lon, lat, alt))
    pos = np.column_stack([lon.round(6), lat.round(6), alt.round(1)])
    cross = np.flatnonzero(np.abs(np.diff(lon)) > 180.0)  # step cross -> cross + 1
    if not cross.size:
        return {"type": "LineString", "coordinates": pos.tolist()}
    l0 = lon[cross]
    l1 = lon[cross + 1] + np.where(lon[cross + 1] < l0, 360.0, -360.0)  # unwrapped
    edge = np.where(l1 > l0, 180.0, -180.0)
    f = (edge - l0) / (l1 - l0)
    la = (lat[cross] + f * (lat[cross + 1] - lat[cross])).round(6)
    al = (alt[cross] + f * (alt[cross + 1] - alt[cross])).round(1)
    pieces = np.split(pos, cross + 1)
    parts = []
    for i, piece in enumerate(pieces):
        head = [[-edge[i - 1], la[i - 1], al[i - 1]]] if i else []
        tail = [[edge[i], la[i], al[i]]] if i < cross.size else []
        parts.append(head + piece.tolist() + tail)
    return {"type": "MultiLineString", "coordinates": [p for p in parts if len(p) >= 2]}


def _stat(values, fn):
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    return float(fn(v)) if v.size else None


def build_segments(
    route_name: str,
    airframe_name: str,
    samples,
    at_flight: dict,
    *,
    all_segments: bool = False,
    id_prefix: str = "",
) -> list[dict]:
    """Merge samples into GeoJSON Feature dicts with the DESIGN.md 3.4 properties.

    Parameters
    ----------
    route_name, airframe_name : str
    samples : RouteSamples
    at_flight : dict
        Per-sample arrays at the planned altitude (see ``RouteScreening.at_flight``).
    all_segments : bool
        Also emit ``"no-icing"`` segments (default: icing and coverage gaps only).
    id_prefix : str
        Prefix of ``segment_id`` (keeps ids unique across routes of one run).

    Returns
    -------
    list of dict
        GeoJSON Features.
    """
    features = []
    n = len(samples.lat)
    sev_all = np.asarray(at_flight["severity"])
    kind_all = _kind(sev_all, np.asarray(at_flight["covered"], bool))
    per_col = at_flight.get("per_collector", {})
    dist_km = np.asarray(samples.distance_m) / 1000.0
    dt = np.asarray(samples.dt_s, float)
    alt_msl = np.asarray(at_flight["altitude_msl_m"], float)
    for k, (a, b) in enumerate(segment_samples(at_flight)):
        kind = kind_all[a]
        if kind == KIND_CLEAR and not all_segments:
            continue
        end = min(b, n - 1)  # the segment reaches the next segment's first sample
        idx = slice(a, end + 1)
        geom = _geometry(samples.lon[idx], samples.lat[idx], alt_msl[idx])
        sl = slice(a, b)
        props = {
            "route": route_name,
            "segment_id": f"{id_prefix}{k + 1:03d}",
            "from_waypoint": str(samples.from_waypoint[a]),
            "to_waypoint": str(samples.to_waypoint[b - 1]),
            "kind": kind,
            "severity": None,
            "ice_type": None,
            "sld": None,
            "basis": None,
            "start_km": _round(dist_km[a], 3),
            "end_km": _round(dist_km[end], 3),
            "start_time": _iso(samples.time[a]),
            "end_time": _iso(samples.time[end]),
            "duration_min": _round(dt[sl].sum() / 60.0, 2),
            "altitude_ft_min": _round(np.nanmin(alt_msl[sl]) / FT, 0),
            "altitude_ft_max": _round(np.nanmax(alt_msl[sl]) / FT, 0),
            "altitude_reference": samples.altitude_reference,
            "temperature_c_min": None,
            "temperature_c_max": None,
            "lwc_g_m3_max": None,
            "mvd_um_max": None,
            "sld_lwc_g_m3_max": None,
            "sld_mvd_um_max": None,
            "glaciation_likelihood_max": None,
            "collector": None,
            "collection_efficiency_max": None,
            "accretion_rate_mm_h_max": None,
            "accretion_mm": None,
            "ice_free_altitudes_ft": [],
            "airframe": airframe_name,
            "caution": CAUTION,
        }
        if kind == KIND_GAP:
            reasons = sorted({str(r) for r in np.asarray(at_flight["gap_reason"])[sl] if r})
            props["gap_reason"] = ", ".join(reasons) or "missing-values"
            props["note"] = GAP_NOTE
        if kind != KIND_GAP:
            props["temperature_c_min"] = _round(_stat(at_flight["temperature_c"][sl], np.min), 2)
            props["temperature_c_max"] = _round(_stat(at_flight["temperature_c"][sl], np.max), 2)
        if kind == KIND_ICING:
            sld = int(at_flight["sld_class"][a])
            basis = np.asarray(at_flight["basis"])[sl]
            basis_words = sorted({codes.BASIS[int(c)] for c in basis if c > 0})
            # the collector that caught the most ice on this stretch
            best, best_mm = None, -1.0
            for name, arrs in per_col.items():
                mm = float(np.nansum(np.asarray(arrs["accretion_rate_mm_h"])[sl] * dt[sl]) / 3600)
                if mm > best_mm:
                    best, best_mm = name, mm
            col = per_col.get(best, at_flight)
            props.update(
                severity=codes.SEVERITY[int(sev_all[a])],
                ice_type=codes.ICE_TYPES[int(at_flight["ice_type"][a])]
                if at_flight["ice_type"][a] > 0
                else None,
                sld=codes.SLD_CLASSES[sld],
                basis=" + ".join(basis_words) if basis_words else "diagnosed",
                lwc_g_m3_max=_round(_stat(at_flight["lwc_g_m3"][sl], np.max), 4),
                mvd_um_max=_round(_stat(at_flight["mvd_um"][sl], np.max), 2),
                glaciation_likelihood_max=_round(_stat(at_flight["glaciation"][sl], np.max), 3),
                collector=best,
                collection_efficiency_max=_round(
                    _stat(np.asarray(col["collection_efficiency"])[sl], np.max), 4
                ),
                accretion_rate_mm_h_max=_round(
                    _stat(np.asarray(col["accretion_rate_mm_h"])[sl], np.max), 3
                ),
                accretion_mm=_round(max(best_mm, 0.0), 3),
            )
            reasons = at_flight.get("severity_reasons")
            if reasons is not None:  # why the words are what they are, in sample order
                seen = [r for x in np.asarray(reasons)[sl] if x for r in str(x).split(" | ")]
                props["severity_reasons"] = list(dict.fromkeys(seen))
            if sld != codes.SLD_NONE:
                props["sld_lwc_g_m3_max"] = _round(_stat(at_flight["sld_lwc_g_m3"][sl], np.max), 4)
                props["sld_mvd_um_max"] = _round(_stat(at_flight["sld_mvd_um"][sl], np.max), 1)
        elif kind == KIND_CLEAR:
            props["severity"] = None
            props["sld"] = "none"
        features.append(
            {
                "type": "Feature",
                "id": f"{route_name}:{props['segment_id']}",
                "geometry": geom,
                "properties": props,
                "_slice": (a, b),
            }
        )
    return features


def _minutes(mask, dt):
    return round(float(np.sum(np.asarray(dt)[mask])) / 60.0, 2)


def route_summary(screening_like, *, airframe=None) -> dict:
    """Summarise one screened route (worst severity, minutes in icing, gaps, ...).

    Parameters
    ----------
    screening_like : RouteScreening
        Needs ``route_name``, ``samples``, ``at_flight``, ``segments``.
    airframe : Airframe, optional
        For the time until the airframe's ice tolerance is reached.

    Returns
    -------
    dict
        JSON-serialisable summary; gaps are counted apart from icing and from clear air.
    """
    s = screening_like.samples
    af = screening_like.at_flight
    sev = np.asarray(af["severity"])
    covered = np.asarray(af["covered"], bool) & (sev != codes.GAP)
    dt = np.asarray(s.dt_s, float)
    dist_km = np.asarray(s.distance_m) / 1000.0
    icing = covered & (sev >= codes.SEV_TRACE)
    worst = int(sev[covered].max()) if covered.any() else None
    ref = af.get("reference_collector")
    per_col = af.get("per_collector", {})
    ref_rate = np.asarray(per_col[ref]["accretion_rate_mm_h"]) if ref in per_col else None
    total_ref = float(np.nansum(ref_rate * dt) / 3600.0) if ref_rate is not None else None
    step_km = np.diff(dist_km, append=dist_km[-1] if dist_km.size else 0.0)
    gap_km = float(np.sum(step_km[~covered]))
    met = np.unique(np.asarray(af["sld_class"])[icing])
    sld_classes = [codes.SLD_CLASSES[int(c)] for c in met if c > codes.SLD_NONE]
    gap_segments = [f for f in screening_like.segments if f["properties"]["kind"] == KIND_GAP]
    fl = np.asarray(af.get("freezing_level_m", np.full(sev.shape, np.nan)), float)
    fl = fl[np.isfinite(fl)]
    tolerance_min = None
    if airframe is not None and total_ref is not None and ref_rate is not None:
        cum = np.cumsum(np.nan_to_num(ref_rate) * dt / 3600.0)
        reached = np.flatnonzero(cum >= airframe.ice_tolerance_mm)
        if reached.size:
            tolerance_min = round(float(np.sum(dt[: reached[0] + 1])) / 60.0, 1)
    if not covered.any():
        status = "not-screened: no forecast coverage"
    elif (~covered).any():
        status = "partly screened: coverage gaps"
    else:
        status = "screened"
    return {
        "route": screening_like.route_name,
        "airframe": screening_like.airframe_name,
        "status": status,
        "distance_km": round(float(dist_km[-1]) if dist_km.size else 0.0, 2),
        "flight_time_min": _minutes(np.ones(dt.shape, bool), dt),
        "worst_severity": None if worst is None else codes.SEVERITY[worst],
        "minutes_in_icing": _minutes(icing, dt),
        "minutes_by_severity": {
            w: _minutes(covered & (sev == i), dt) for i, w in enumerate(codes.SEVERITY) if i
        },
        "reference_collector": ref,
        "accretion_mm_reference": None if total_ref is None else round(total_ref, 3),
        "minutes_to_ice_tolerance": tolerance_min,
        "ice_tolerance_mm": None if airframe is None else airframe.ice_tolerance_mm,
        "sld": sld_classes or ["none"],
        "freezing_level_ft_min": None if not fl.size else round(float(fl.min()) / FT),
        "freezing_level_ft_max": None if not fl.size else round(float(fl.max()) / FT),
        "gap_km": round(gap_km, 2),
        "gap_minutes": _minutes(~covered, dt),
        "gap_count": len(gap_segments),
        "icing_segments": sum(
            f["properties"]["kind"] == KIND_ICING for f in screening_like.segments
        ),
    }


def _clean(feature: dict) -> dict:
    return {k: v for k, v in feature.items() if not k.startswith("_")}


def feature_collection(screenings, *, provenance=None, assumptions=None) -> dict:
    """Return one RFC 7946 FeatureCollection dict for the screened routes.

    The route summaries, provenance, assumptions and caution are foreign members
    (RFC 7946 section 6.1); GIS readers drop them, so the CLI writes the same
    into a sibling JSON file.
    """
    screenings = list(screenings)
    feats = [_clean(f) for s in screenings for f in s.segments]
    prov = dict(provenance or (screenings[0].provenance if screenings else {}))
    prov.setdefault("tool", "icing")
    prov.setdefault("tool_version", __version__)
    prov.setdefault("schema", f"icing-hazards/{SCHEMA_VERSION}")
    return {
        "type": "FeatureCollection",
        "features": feats,
        "caution": CAUTION,
        "schema_version": SCHEMA_VERSION,
        "summaries": [s.summary for s in screenings],
        "provenance": prov,
        "assumptions": dict(assumptions or (screenings[0].assumptions if screenings else {})),
    }
