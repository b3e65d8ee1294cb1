"""One name per quantity: the keys of every output and the labels people read.

Every quantity written by ``icing`` has one key, the same in the route summaries
(JSON), the GeoJSON and GeoPackage properties and the per-sample CSV, and one
label, the same in the terminal table, the HTML report and the pictures. The
output JSON Schema (``icing/data/schemas/hazards-v1.json``) lists each key with
its label as ``title`` (``tests/test_names.py`` keeps them in step).
"""

from __future__ import annotations

__all__ = ["LABELS", "DEPRECATED", "label", "OUTCOME_WORDS", "SUMMARY_FIRST"]

#: What a reader needs first about a route, in this order (terminal table and report).
SUMMARY_FIRST = (
    "route",
    "airframe",
    "outcome",
    "worst_severity",
    "minutes_in_icing",
    "accretion_mm",
    "sld",
)

#: key -> label (unit in brackets). Keys are what programs read; labels what people read.
LABELS = {
    # route summaries
    "route": "route",
    "airframe": "airframe",
    "outcome": "outcome",
    "outcome_reason": "why",
    "condition": "condition",
    "status": "screened",
    "departure_time": "departure [UTC]",
    "arrival_time": "arrival [UTC]",
    "distance_km": "distance [km]",
    "flight_time_min": "flight time [min]",
    "hold_min": "holding [min]",
    "route_altitude_reference": "route altitudes given as",
    "worst_severity": "worst icing",
    "worst_severity_rank": "worst icing rank (0 none .. 4 severe)",
    "minutes_in_icing": "time in icing [min]",
    "minutes_by_severity": "time in icing by severity [min]",
    "reference_collector": "reference collector",
    "accretion_mm": "ice accreted [mm]",
    "minutes_to_ice_tolerance": "time to ice tolerance [min]",
    "ice_tolerance_mm": "ice tolerance [mm]",
    "tolerance_reached": "ice tolerance reached",
    "sld": "SLD",
    "freezing_level_ft_min": "lowest freezing level [ft MSL]",
    "freezing_level_ft_max": "highest freezing level [ft MSL]",
    "gap_km": "not screened [km]",
    "gap_minutes": "not screened [min]",
    "gap_count": "coverage gaps",
    "icing_segments": "icing segments",
    "candidate_altitudes": "candidate altitudes per icing stretch",
    "candidate_altitudes_wording": "candidate altitudes: how to read them",
    "caution": "caution",
    # ensembles and spreads (route summaries and segments)
    "members": "members",
    "member_statistic": "member statistic giving the severity",
    "member_fraction": "fraction of members at each severity or worse",
    "member_fraction_words": "members at each severity or worse, in words",
    "severity_worst_member": "worst member's icing",
    "members_covering": "members with data",
    "members_covering_min": "fewest members with data",
    "member_gap_km": "some member without data [km]",
    "member_gap_minutes": "some member without data [min]",
    "member_coverage": "each member's worst icing and coverage gaps",
    "member_gap_reason": "members without data, and why",
    # segments (GeoJSON / GeoPackage features)
    "segment_id": "segment",
    "from_waypoint": "from",
    "to_waypoint": "to",
    "kind": "kind",
    "severity": "icing severity",
    "severity_rank": "severity rank (0 none .. 4 severe)",
    "severity_reasons": "why the severity is what it is",
    "ice_type": "ice type",
    "basis": "liquid from",
    "start_km": "start [km]",
    "end_km": "end [km]",
    "start_time": "start [UTC]",
    "end_time": "end [UTC]",
    "duration_min": "duration [min]",
    "altitude_ft_min": "lowest altitude [ft MSL]",
    "altitude_ft_max": "highest altitude [ft MSL]",
    "altitude_m_min": "lowest altitude [m MSL]",
    "altitude_m_max": "highest altitude [m MSL]",
    "altitude_reference": "altitudes written as",
    "altitude_agl_m_min": "lowest height above ground [m]",
    "altitude_agl_m_max": "highest height above ground [m]",
    "ground_elevation_m_min": "lowest ground [m MSL]",
    "ground_elevation_m_max": "highest ground [m MSL]",
    "flight_level": "flight level",
    "flight_level_min": "lowest flight level",
    "flight_level_max": "highest flight level",
    "tas_m_s": "true airspeed [m/s]",
    "temperature_c_min": "lowest temperature [\u00b0C]",
    "temperature_c_max": "highest temperature [\u00b0C]",
    "lwc_g_m3_max": "most liquid water [g/m\u00b3]",
    "mvd_um_max": "largest MVD [\u00b5m]",
    "sld_lwc_g_m3_max": "most SLD water [g/m\u00b3]",
    "sld_mvd_um_max": "largest SLD MVD [\u00b5m]",
    "glaciation_likelihood_max": "highest glaciation likelihood",
    "collector": "collector",
    "collection_efficiency_max": "highest collection efficiency",
    "accretion_rate_mm_h_max": "fastest ice growth [mm/h]",
    "candidate_altitudes_ft": "candidate altitudes [ft MSL]",
    "vertical_options": "nearest candidate altitudes above and below",
    "gap_reason": "why not screened",
    # grid features (icing grid)
    "valid_time": "valid time [UTC]",
    "coverage": "band coverage",
    "note": "note",
    "threshold": "members at this word or worse",
    "fraction_class": "class of the fraction of members (1 up to 1/4 .. 5 all)",
    "fraction_class_label": "fraction of members",
    "member_fraction_max": "largest fraction of members in the area",
    # per-sample CSV
    "index": "sample",
    "lat": "latitude [\u00b0]",
    "lon": "longitude [\u00b0]",
    "altitude_ft": "altitude [ft MSL]",
    "altitude_m": "altitude [m MSL]",
    "altitude_agl_m": "height above ground [m]",
    "ground_elevation_m": "ground [m MSL]",
    "route_altitude_ft": "route altitude [ft, route's reference]",
    "hold": "holding",
    "time": "time [UTC]",
    "dt_s": "time the sample stands for [s]",
    "covered": "screened",
    "pressure_hpa": "pressure [hPa]",
    "temperature_c": "temperature [\u00b0C]",
    "relative_humidity_pct": "relative humidity [%]",
    "cloud": "in cloud",
    "lwc_g_m3": "liquid water [g/m\u00b3]",
    "lwc_model_g_m3": "model liquid water [g/m\u00b3]",
    "lwc_diagnosed_g_m3": "diagnosed liquid water [g/m\u00b3]",
    "droplet_number_cm3": "droplets [1/cm\u00b3]",
    "mvd_um": "MVD [\u00b5m]",
    "glaciation": "glaciation likelihood",
    "sld_lwc_g_m3": "SLD water [g/m\u00b3]",
    "sld_mvd_um": "SLD MVD [\u00b5m]",
    "worst_collector": "worst collector",
    "collection_efficiency": "collection efficiency",
    "beta0": "stagnation collection efficiency",
    "freezing_fraction": "freezing fraction",
    "ice_density_kg_m3": "ice density [kg/m\u00b3]",
    "accretion_rate_mm_h": "ice growth [mm/h]",
    "member_fraction_trace": "fraction of members at trace or worse",
    "member_fraction_light": "fraction of members at light or worse",
    "member_fraction_moderate": "fraction of members at moderate or worse",
    "member_fraction_severe": "fraction of members at severe",
}

#: Deprecated keys, kept one release beside their new name: old key -> new key.
DEPRECATED = {
    "ice_free_altitudes_ft": "candidate_altitudes_ft",
    "accretion_mm_reference": "accretion_mm",
    "altitude_msl_m": "altitude_m",
}

#: The outcome words and how a person reads them.
OUTCOME_WORDS = {
    "met": "condition met",
    "not-met": "condition not met",
    "incomplete": "incomplete (part not screened)",
    None: "no condition stated",
}


def label(key: str) -> str:
    """Return the label people read for an output key (the key itself when unlisted).

    >>> label("accretion_mm")
    'ice accreted [mm]'
    """
    if key in DEPRECATED:
        return LABELS[DEPRECATED[key]] + " (deprecated name)"
    return LABELS.get(key, key.replace("_", " "))
