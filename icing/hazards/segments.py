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
    "segment_prefix_of",
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
    for key in _member_keys(at_flight):  # ensembles: the members' words and fractions
        change[1:] |= key[1:] != key[:-1]
    starts = np.flatnonzero(change).tolist()
    bounds = [0] + starts + [n]
    return [(a, b) for a, b in zip(bounds[:-1], bounds[1:], strict=True) if b > a]


def _member_keys(at_flight) -> list:
    """Per-sample values whose change starts a new segment in an ensemble.

    The worst member's word, how many members have data, and the band of each
    member fraction (:func:`icing.hazards.ensemble.fraction_band`: none, quarters,
    all), so a segment never hides a member's more severe stretch nor a material
    change of the fractions. Empty for a single forecast.
    """
    if "member_fraction" not in at_flight:
        return []
    from icing.hazards.ensemble import fraction_band

    keys = [
        np.asarray(at_flight["severity_worst_member"]),
        np.asarray(at_flight["members_covering"]),
    ]
    keys += [fraction_band(f) for f in at_flight["member_fraction"].values()]
    return keys


def segment_prefix_of(route_name: str) -> str:
    """Segment-id prefix made from a route's name: lower case, words joined by hyphens.

    Ids made from the name stay the same whatever the order of the routes in a run.

    >>> segment_prefix_of("Skerrow dispatch 1 (north)")
    'skerrow-dispatch-1-north-'
    """
    words = "".join(ch.lower() if ch.isalnum() else " " for ch in str(route_name)).split()
    return "-".join(words)[:60].rstrip("-") + "-" if words else "route-"


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
    """Merge samples into GeoJSON Feature dicts with the docs/contracts.md, section 4 properties.

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
    kind_all = _kind(np.asarray(at_flight["severity"]), np.asarray(at_flight["covered"], bool))
    alt_msl = np.asarray(at_flight["altitude_msl_m"], float)
    member_ice = _member_icing(at_flight)
    for k, (a, b) in enumerate(segment_samples(at_flight)):
        kind = kind_all[a]
        if kind == KIND_CLEAR and not (all_segments or member_ice[a]):
            continue
        end = min(b, n - 1)  # the segment reaches the next segment's first sample
        idx = slice(a, end + 1)
        props = _common_properties(
            route_name,
            airframe_name,
            samples,
            at_flight,
            a,
            b,
            end,
            kind,
            f"{id_prefix}{k + 1:03d}",
        )
        if kind == KIND_GAP:
            props.update(_gap_properties(at_flight, slice(a, b)))
        else:
            props.update(_temperature_properties(at_flight, slice(a, b)))
        if kind == KIND_ICING:
            props.update(_icing_properties(at_flight, samples, a, b))
        elif kind == KIND_CLEAR:
            props["severity"] = codes.SEVERITY[codes.SEV_NONE]
            props["severity_rank"] = codes.SEV_NONE
            props["sld"] = "none"
        if "member_fraction" in at_flight:
            props.update(_member_properties(at_flight, slice(a, b)))
        features.append(
            {
                "type": "Feature",
                "id": f"{route_name}:{props['segment_id']}",
                "geometry": _geometry(samples.lon[idx], samples.lat[idx], alt_msl[idx]),
                "properties": props,
            }
        )
    return features


def _member_icing(at_flight):
    """Per sample: some member ices where the statistic's word is "none" (ensembles).

    Such no-icing stretches are always written: one member in four icing is worth
    seeing even when the median says none.
    """
    n = len(np.asarray(at_flight["severity"]))
    if "severity_worst_member" not in at_flight:
        return np.zeros(n, bool)
    return np.asarray(at_flight["severity_worst_member"]) >= codes.SEV_TRACE


#: The most members named in a segment's ``member_gap_reason``.
_GAP_MEMBERS_NAMED = 10


def _member_properties(at_flight, sl):
    """Ensemble properties of a segment: members, fractions, the worst member's word, gaps.

    The fractions are the largest over the segment's samples (within a segment they
    stay in one band, see :func:`_member_keys`); null where no member has data.
    """
    members = int(at_flight["members"])
    covering = np.asarray(at_flight["members_covering"])[sl]
    worst = np.asarray(at_flight["severity_worst_member"])[sl]
    w = int(worst.max()) if worst.size else codes.GAP
    props = {
        "members": members,
        "members_covering": int(covering.min()) if covering.size else 0,
        "member_statistic": str(at_flight["member_statistic"]),
        "member_fraction": None,
        "severity_worst_member": None if w == codes.GAP else codes.SEVERITY[w],
        "member_gap_reason": None,
    }
    if covering.size and covering.max() > 0:
        props["member_fraction"] = {
            word: _round(_stat(np.asarray(f)[sl], np.max), 3)
            for word, f in at_flight["member_fraction"].items()
        }
    if covering.size and covering.min() < members:
        props["member_gap_reason"] = _member_gap_text(at_flight, sl)
    return props


def _member_gap_text(at_flight, sl):
    """Which members have no data on a segment, and why: "2 of 4 members: a (why); b (why)"."""
    labels = np.asarray(at_flight["member_labels"], dtype=object)
    reasons = np.asarray(at_flight["member_gap_reason"], dtype=object)[sl]  # (s, M)
    sev = np.asarray(at_flight["member_severity"])[sl]  # (s, M)
    parts = []
    for j in np.flatnonzero((sev == codes.GAP).any(axis=0)):
        why = sorted({str(r) for r in reasons[:, j] if r}) or ["missing-values"]
        parts.append(f"{labels[j]} ({', '.join(why)})")
    shown = "; ".join(parts[:_GAP_MEMBERS_NAMED]) + ("; ..." if len(parts) > 10 else "")
    return f"{len(parts)} of {len(labels)} members without data on part or all of it: {shown}"


def _range(values, scale=1.0, nd=0):
    """Return the rounded (min, max) of the finite values, None where there is none."""
    v = np.asarray(values, float) * scale
    return _round(_stat(v, np.min), nd), _round(_stat(v, np.max), nd)


def _altitude_properties(samples, at_flight, sl):
    """Altitudes of a segment: feet and metres MSL, height above ground, the route's own."""
    alt_all = np.asarray(at_flight["altitude_msl_m"], float)
    alt_msl = alt_all[sl]
    ground = np.asarray(at_flight.get("ground_m", np.full(alt_all.shape, np.nan)), float)[sl]
    ref = samples.altitude_reference
    props = {}
    props["altitude_ft_min"], props["altitude_ft_max"] = _range(alt_msl, 1.0 / FT)
    props["altitude_m_min"], props["altitude_m_max"] = _range(alt_msl, 1.0, 1)
    props["altitude_reference"] = "msl"
    props["route_altitude_reference"] = ref
    props["altitude_agl_m_min"], props["altitude_agl_m_max"] = _range(alt_msl - ground, 1.0, 1)
    props["ground_elevation_m_min"], props["ground_elevation_m_max"] = _range(ground, 1.0, 1)
    if ref == "pressure":
        fl = np.asarray(samples.altitude_m, float)[sl] / FT / 100.0
        lo, hi = _range(fl)
        props.update(flight_level=int(lo) if lo == hi else None)
        props["flight_level_min"], props["flight_level_max"] = lo, hi
    return props


def _common_properties(route_name, airframe_name, samples, at_flight, a, b, end, kind, seg_id):
    """Properties every segment carries, physics left null (filled by kind)."""
    dist_km = np.asarray(samples.distance_m) / 1000.0
    sl = slice(a, b)
    dt = np.asarray(samples.dt_s, float)[sl]
    hold = np.asarray(getattr(samples, "hold", np.zeros(len(samples.lat), bool)), bool)[sl]
    tas = getattr(samples, "tas", None)
    props = {
        "route": route_name,
        "segment_id": seg_id,
        "from_waypoint": str(samples.from_waypoint[a]),
        "to_waypoint": str(samples.to_waypoint[b - 1]),
        "kind": kind,
        "severity": None,
        "severity_rank": None,
        "ice_type": None,
        "sld": None,
        "basis": None,
        "start_km": _round(dist_km[a], 3),
        "end_km": _round(dist_km[end], 3),
        "start_time": _iso(samples.time[a]),
        "end_time": _iso(samples.time[end]),
        "duration_min": _round(dt.sum() / 60.0, 2),
        "hold_min": _round(dt[hold].sum() / 60.0, 2),
    }
    props.update(_altitude_properties(samples, at_flight, sl))
    props.update(
        {
            "tas_m_s": None if tas is None else _round(_stat(np.asarray(tas)[sl], np.mean), 1),
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
            "candidate_altitudes_ft": [],
            "ice_free_altitudes_ft": [],
            "airframe": airframe_name,
            "caution": CAUTION,
        }
    )
    return props


def _gap_properties(at_flight, sl):
    """Why a coverage-gap segment is one, and the note that it is no "no icing"."""
    reasons = sorted({str(r) for r in np.asarray(at_flight["gap_reason"])[sl] if r})
    return {"gap_reason": ", ".join(reasons) or "missing-values", "note": GAP_NOTE}


def _temperature_properties(at_flight, sl):
    """Temperature range of a screened (icing or no-icing) segment."""
    t = at_flight["temperature_c"][sl]
    return {
        "temperature_c_min": _round(_stat(t, np.min), 2),
        "temperature_c_max": _round(_stat(t, np.max), 2),
    }


def _icing_properties(at_flight, samples, a, b):
    """Physics of an icing segment: severity, ice type, SLD, liquid, the worst collector."""
    sl = slice(a, b)
    dt = np.asarray(samples.dt_s, float)
    sld = int(at_flight["sld_class"][a])
    basis = np.asarray(at_flight["basis"])[sl]
    basis_words = sorted({codes.BASIS[int(c)] for c in basis if c > 0})
    per_col = at_flight.get("per_collector", {})
    # the collector that caught the most ice on this stretch
    best, best_mm = None, -1.0
    for name, arrs in per_col.items():
        mm = float(np.nansum(np.asarray(arrs["accretion_rate_mm_h"])[sl] * dt[sl]) / 3600)
        if mm > best_mm:
            best, best_mm = name, mm
    col = per_col.get(best, at_flight)
    ice = int(at_flight["ice_type"][a])
    rank = int(np.asarray(at_flight["severity"])[a])
    props = {
        "severity": codes.SEVERITY[rank],
        "severity_rank": rank,
        "ice_type": codes.ICE_TYPES[ice] if ice > 0 else None,
        "sld": codes.SLD_CLASSES[sld],
        "basis": " + ".join(basis_words) if basis_words else "diagnosed",
        "lwc_g_m3_max": _round(_stat(at_flight["lwc_g_m3"][sl], np.max), 4),
        "mvd_um_max": _round(_stat(at_flight["mvd_um"][sl], np.max), 2),
        "glaciation_likelihood_max": _round(_stat(at_flight["glaciation"][sl], np.max), 3),
        "collector": best,
        "collection_efficiency_max": _round(
            _stat(np.asarray(col["collection_efficiency"])[sl], np.max), 4
        ),
        "accretion_rate_mm_h_max": _round(
            _stat(np.asarray(col["accretion_rate_mm_h"])[sl], np.max), 3
        ),
        "accretion_mm": _round(max(best_mm, 0.0), 3),
    }
    reasons = at_flight.get("severity_reasons")
    if reasons is not None:  # why the words are what they are, in sample order
        seen = [r for x in np.asarray(reasons)[sl] if x for r in str(x).split(" | ")]
        props["severity_reasons"] = list(dict.fromkeys(seen))
    if sld != codes.SLD_NONE:
        props["sld_lwc_g_m3_max"] = _round(_stat(at_flight["sld_lwc_g_m3"][sl], np.max), 4)
        props["sld_mvd_um_max"] = _round(_stat(at_flight["sld_mvd_um"][sl], np.max), 1)
    return props


def _minutes(mask, dt):
    return round(float(np.sum(np.asarray(dt)[mask])) / 60.0, 2)


def route_summary(screening_like, *, airframe=None) -> dict:
    """Summarise one screened route (worst severity, minutes in icing, gaps, ...).

    Parameters
    ----------
    screening_like : RouteScreening
        Needs ``route_name``, ``airframe_name``, ``samples``, ``at_flight``, ``segments``.
    airframe : Airframe, optional
        For the time until the airframe's ice tolerance is reached.

    Returns
    -------
    dict
        JSON-serialisable summary; gaps are counted apart from icing and from clear air,
        and what could not be computed is None (never 0 or "none").
    """
    s = screening_like.samples
    af = screening_like.at_flight
    sev = np.asarray(af["severity"])
    covered = np.asarray(af["covered"], bool) & (sev != codes.GAP)
    dt = np.asarray(s.dt_s, float)
    dist_km = np.asarray(s.distance_m) / 1000.0
    icing = covered & (sev >= codes.SEV_TRACE)
    worst = int(sev[covered].max()) if covered.any() else None
    ice = _ice_totals(af, dt, covered, airframe)
    step_km = np.diff(dist_km, append=dist_km[-1] if dist_km.size else 0.0)
    met = np.unique(np.asarray(af["sld_class"])[icing])
    sld_classes = [codes.SLD_CLASSES[int(c)] for c in met if c > codes.SLD_NONE]
    segments = screening_like.segments
    fl = np.asarray(af.get("freezing_level_m", np.full(sev.shape, np.nan)), float)
    fl = fl[np.isfinite(fl)]
    times = np.asarray(s.time)
    hold = np.asarray(getattr(s, "hold", np.zeros(dt.shape, bool)), bool)
    if not covered.any():
        status = "not-screened: no forecast coverage"
    elif (~covered).any():
        status = "partly screened: coverage gaps"
    else:
        status = "screened"
    members = _ensemble_summary(af, dt, step_km) if "member_fraction" in af else {}
    if members.get("member_gap_km") and status == "screened":
        status = "partly screened: some members have coverage gaps"
    return {
        "route": screening_like.route_name,
        "airframe": screening_like.airframe_name,
        "status": status,
        "departure_time": _iso(times.min()) if times.size else None,
        "arrival_time": _iso(times.max()) if times.size else None,
        "distance_km": round(float(dist_km[-1]) if dist_km.size else 0.0, 2),
        "flight_time_min": _minutes(np.ones(dt.shape, bool), dt),
        "hold_min": _minutes(hold, dt),
        "route_altitude_reference": s.altitude_reference,
        "worst_severity": None if worst is None else codes.SEVERITY[worst],
        "worst_severity_rank": worst,
        "minutes_in_icing": _minutes(icing, dt) if covered.any() else None,
        "minutes_by_severity": {
            w: _minutes(covered & (sev == i), dt) for i, w in enumerate(codes.SEVERITY) if i
        },
        "reference_collector": af.get("reference_collector"),
        "accretion_mm": ice["accretion_mm"],
        "accretion_mm_reference": ice["accretion_mm"],
        "minutes_to_ice_tolerance": ice["minutes_to_ice_tolerance"],
        "ice_tolerance_mm": None if airframe is None else airframe.ice_tolerance_mm,
        "tolerance_reached": ice["tolerance_reached"],
        "sld": (sld_classes or ["none"]) if covered.any() else None,
        "freezing_level_ft_min": None if not fl.size else round(float(fl.min()) / FT),
        "freezing_level_ft_max": None if not fl.size else round(float(fl.max()) / FT),
        "gap_km": round(float(np.sum(step_km[~covered])), 2),
        "gap_minutes": _minutes(~covered, dt),
        "gap_count": sum(f["properties"]["kind"] == KIND_GAP for f in segments),
        "icing_segments": sum(f["properties"]["kind"] == KIND_ICING for f in segments),
        **members,
    }


def _ensemble_summary(af, dt, step_km):
    """Return a route's ensemble results: members, the statistic, route fractions, each member.

    ``member_fraction`` of a route: the fraction of the members with data on the
    route whose worst word anywhere along it is that word or worse ("2 of 4 members
    put moderate or worse somewhere on the route"). ``member_gap_km``: where at
    least one member has no data (a gap of one member is a gap).
    """
    from icing.hazards.ensemble import FRACTION_WORDS, fractions_in_words

    msev = np.asarray(af["member_severity"])  # (n, M)
    members = int(af["members"])
    route_worst = msev.max(axis=0) if msev.size else np.full(members, codes.GAP)
    with_data = route_worst != codes.GAP
    fractions = None
    if with_data.any():
        fractions = {
            w: round(float(np.mean(route_worst[with_data] >= codes.severity_code(w))), 4)
            for w in FRACTION_WORDS
        }
    worst = int(route_worst.max()) if with_data.any() else None
    gap_any = (msev == codes.GAP).any(axis=1)
    covering = np.asarray(af["members_covering"])
    return {
        "members": members,
        "member_statistic": str(af["member_statistic"]),
        "member_fraction": fractions,
        "member_fraction_words": None
        if fractions is None
        else fractions_in_words(fractions, int(with_data.sum())) + " somewhere on the route",
        "severity_worst_member": None if worst is None else codes.SEVERITY[worst],
        "members_covering_min": int(covering.min()) if covering.size else 0,
        "member_gap_km": round(float(np.sum(step_km[gap_any])), 2),
        "member_gap_minutes": _minutes(gap_any, dt),
        "member_coverage": _member_coverage(af, msev, dt, step_km),
    }


def _member_coverage(af, msev, dt, step_km):
    """Per member: its worst word on the route and where it has no data (stretches in km)."""
    labels = np.asarray(af["member_labels"], dtype=object)
    reasons = np.asarray(af["member_gap_reason"], dtype=object)
    dist = np.concatenate([[0.0], np.cumsum(step_km)[:-1]]) if step_km.size else step_km
    out = []
    for j, label in enumerate(labels):
        gap = msev[:, j] == codes.GAP
        stretches = []
        for a, b in _runs(gap):
            why = sorted({str(r) for r in reasons[a:b, j] if r}) or ["missing-values"]
            stretches.append(
                {
                    "start_km": round(float(dist[a]), 2),
                    "end_km": round(float(dist[b - 1] + step_km[b - 1]), 2),
                    "reason": ", ".join(why),
                }
            )
        worst = int(msev[~gap, j].max()) if (~gap).any() else None
        out.append(
            {
                "member": str(label),
                "worst_severity": None if worst is None else codes.SEVERITY[worst],
                "gap_km": round(float(np.sum(step_km[gap])), 2),
                "gap_minutes": _minutes(gap, dt),
                "gaps": stretches,
            }
        )
    return out


def _runs(mask):
    """Half-open index ranges of the True runs of a boolean array."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    edges = np.flatnonzero(np.diff(m.astype(np.int8)))
    return list(zip(edges[::2].tolist(), edges[1::2].tolist(), strict=True))


def _ice_totals(af, dt, covered, airframe):
    """Ice on the reference collector over the covered samples, and the tolerance time.

    None where nothing was screened: an unknown amount is never written as 0 mm.
    """
    ref = af.get("reference_collector")
    per_col = af.get("per_collector", {})
    out = {"accretion_mm": None, "minutes_to_ice_tolerance": None, "tolerance_reached": None}
    if ref not in per_col or not covered.any():
        return out
    rate = np.where(covered, np.nan_to_num(np.asarray(per_col[ref]["accretion_rate_mm_h"])), 0.0)
    cum = np.cumsum(rate * dt / 3600.0)
    out["accretion_mm"] = round(float(cum[-1]), 3)
    if airframe is not None:
        reached = np.flatnonzero(cum >= airframe.ice_tolerance_mm)
        out["tolerance_reached"] = bool(reached.size)
        if reached.size:
            out["minutes_to_ice_tolerance"] = round(float(np.sum(dt[: reached[0] + 1])) / 60.0, 1)
    return out


def feature_collection(screenings, *, provenance=None, assumptions=None) -> dict:
    """Return one RFC 7946 FeatureCollection dict for the screened routes.

    The route summaries, provenance, assumptions and caution are foreign members
    (RFC 7946 section 6.1); GIS readers drop them, so the CLI writes the same
    into a sibling JSON file.
    """
    screenings = list(screenings)
    feats = [f for s in screenings for f in s.segments]
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
