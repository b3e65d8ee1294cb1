"""The output JSON Schema, built from the one list of names (:mod:`icing.outputs.names`).

``icing/data/schemas/hazards-v1.json`` is this module's output, checked in so that
consumers can read it without running Python; ``python -m icing.outputs.schema``
writes it again after a change, and a test keeps the two equal. Every key carries
its label as ``title``; deprecated keys say ``"deprecated": true`` and name their
replacement; the per-sample CSV columns are listed under ``x-csv-columns``.
"""

from __future__ import annotations

import json
from pathlib import Path

from icing import codes
from icing._version import SCHEMA_VERSION
from icing.outputs.names import DEPRECATED, LABELS

__all__ = [
    "schema",
    "schema_text",
    "SCHEMA_PATH",
    "SUMMARY_TYPES",
    "SEGMENT_TYPES",
    "MEMBER_KEYS",
]

SCHEMA_PATH = Path(__file__).resolve().parents[1] / "data" / "schemas" / "hazards-v1.json"

_NUM = {"type": ["number", "null"]}
_INT = {"type": ["integer", "null"]}
_STR = {"type": ["string", "null"]}
_BOOL = {"type": ["boolean", "null"]}
_TIME = {"type": ["string", "null"], "format": "date-time"}
_SEV = {"enum": list(codes.SEVERITY) + [None]}
_RANK = {"type": ["integer", "null"], "minimum": 0, "maximum": 4}
_REF = {"enum": ["msl", "agl", "pressure"]}
_FT_LIST = {"type": "array", "items": {"type": "number"}}

#: Route-summary keys and their JSON types.
SUMMARY_TYPES = {
    "route": {"type": "string"},
    "airframe": {"type": "string"},
    "outcome": {"enum": ["met", "not-met", "incomplete", None]},
    "outcome_reason": {"type": "string"},
    "condition": _STR,
    "status": {"type": "string"},
    "departure_time": _TIME,
    "arrival_time": _TIME,
    "distance_km": {"type": "number"},
    "flight_time_min": {"type": "number"},
    "hold_min": {"type": "number"},
    "route_altitude_reference": _REF,
    "worst_severity": _SEV,
    "worst_severity_rank": _RANK,
    "minutes_in_icing": _NUM,
    "minutes_by_severity": {"type": "object"},
    "reference_collector": _STR,
    "accretion_mm": _NUM,
    "accretion_mm_reference": _NUM,
    "minutes_to_ice_tolerance": _NUM,
    "ice_tolerance_mm": _NUM,
    "tolerance_reached": _BOOL,
    "sld": {"type": ["array", "null"], "items": {"enum": list(codes.SLD_CLASSES)}},
    "freezing_level_ft_min": _NUM,
    "freezing_level_ft_max": _NUM,
    "gap_km": {"type": "number"},
    "gap_minutes": {"type": "number"},
    "gap_count": {"type": "integer"},
    "icing_segments": {"type": "integer"},
    "candidate_altitudes": {"type": "array", "items": {"type": "object"}},
    "candidate_altitudes_ft": {"type": "array", "items": {"type": "object"}},
    "candidate_altitudes_wording": {"type": "string"},
    "caution": {"type": "string", "minLength": 40},
    **{  # ensembles and spreads only (schema 1.2)
        "members": {"type": "integer", "minimum": 2},
        "member_statistic": {"type": "string"},
        "member_fraction": {"oneOf": [{"type": "null"}, {"$ref": "#/$defs/member_fraction"}]},
        "member_fraction_words": _STR,
        "severity_worst_member": _SEV,
        "members_covering_min": {"type": "integer", "minimum": 0},
        "member_gap_km": {"type": "number", "minimum": 0},
        "member_gap_minutes": {"type": "number", "minimum": 0},
        "member_coverage": {"type": "array", "items": {"$ref": "#/$defs/member_coverage"}},
    },
}

#: Summary and segment keys written for ensembles and spreads only (never required).
MEMBER_KEYS = (
    "members",
    "member_statistic",
    "member_fraction",
    "member_fraction_words",
    "severity_worst_member",
    "members_covering",
    "members_covering_min",
    "member_gap_km",
    "member_gap_minutes",
    "member_coverage",
    "member_gap_reason",
)

#: Segment (GeoJSON Feature) property keys and their JSON types.
SEGMENT_TYPES = {
    "route": {"type": "string"},
    "segment_id": {"type": "string"},
    "from_waypoint": {"type": "string"},
    "to_waypoint": {"type": "string"},
    "kind": {"enum": ["icing", "coverage-gap", "no-icing"]},
    "severity": _SEV,
    "severity_rank": _RANK,
    "severity_reasons": {"type": "array", "items": {"type": "string"}},
    "ice_type": {"enum": list(codes.ICE_TYPES[1:]) + [None]},
    "sld": {"enum": list(codes.SLD_CLASSES) + [None]},
    "basis": _STR,
    "start_km": {"type": "number"},
    "end_km": {"type": "number"},
    "start_time": {"type": "string", "format": "date-time"},
    "end_time": {"type": "string", "format": "date-time"},
    "duration_min": {"type": "number", "minimum": 0},
    "hold_min": _NUM,
    "altitude_ft_min": _NUM,
    "altitude_ft_max": _NUM,
    "altitude_m_min": _NUM,
    "altitude_m_max": _NUM,
    "altitude_reference": {"const": "msl"},
    "route_altitude_reference": _REF,
    "altitude_agl_m_min": _NUM,
    "altitude_agl_m_max": _NUM,
    "ground_elevation_m_min": _NUM,
    "ground_elevation_m_max": _NUM,
    "flight_level": _INT,
    "flight_level_min": _NUM,
    "flight_level_max": _NUM,
    "tas_m_s": _NUM,
    "temperature_c_min": _NUM,
    "temperature_c_max": _NUM,
    "lwc_g_m3_max": _NUM,
    "mvd_um_max": _NUM,
    "sld_lwc_g_m3_max": _NUM,
    "sld_mvd_um_max": _NUM,
    "glaciation_likelihood_max": _NUM,
    "collector": _STR,
    "collection_efficiency_max": {"type": ["number", "null"], "minimum": 0, "maximum": 1},
    "accretion_rate_mm_h_max": {"type": ["number", "null"], "minimum": 0},
    "accretion_mm": {"type": ["number", "null"], "minimum": 0},
    "candidate_altitudes_ft": _FT_LIST,
    "ice_free_altitudes_ft": _FT_LIST,
    "vertical_options": {"type": "object"},
    "airframe": {"type": "string"},
    "caution": {"type": "string", "minLength": 40},
    "gap_reason": {"type": "string"},
    "note": {"type": "string"},
    **{  # ensembles and spreads only (schema 1.2)
        "members": {"type": "integer", "minimum": 2},
        "members_covering": {"type": "integer", "minimum": 0},
        "member_statistic": {"type": "string"},
        "member_fraction": {"oneOf": [{"type": "null"}, {"$ref": "#/$defs/member_fraction"}]},
        "severity_worst_member": _SEV,
        "member_gap_reason": _STR,
    },
}


def _member_defs():
    """Return the shared definitions of the ensemble keys."""
    fraction = {"type": ["number", "null"], "minimum": 0, "maximum": 1}
    return {
        "member_fraction": {
            "type": "object",
            "description": "fraction of the members with data at each severity or worse",
            "required": list(codes.SEVERITY[1:]),
            "properties": {w: fraction for w in codes.SEVERITY[1:]},
            "additionalProperties": False,
        },
        "member_coverage": {
            "type": "object",
            "required": ["member", "worst_severity", "gap_km", "gaps"],
            "properties": {
                "member": {"type": "string"},
                "worst_severity": _SEV,
                "gap_km": {"type": "number", "minimum": 0},
                "gap_minutes": {"type": "number", "minimum": 0},
                "gaps": {"type": "array", "items": {"type": "object"}},
            },
        },
    }


_SEGMENT_REQUIRED = [
    k
    for k in SEGMENT_TYPES
    if k
    not in (
        "flight_level",
        "flight_level_min",
        "flight_level_max",
        "vertical_options",
        "severity_reasons",
    )
    and k not in ("gap_reason", "note")
    and k not in MEMBER_KEYS
]
_SUMMARY_REQUIRED = [
    "route",
    "airframe",
    "outcome",
    "outcome_reason",
    "status",
    "worst_severity",
    "worst_severity_rank",
    "minutes_in_icing",
    "accretion_mm",
    "gap_km",
    "departure_time",
    "arrival_time",
]


def _csv_columns():
    from icing.outputs.table import SAMPLE_COLUMNS

    return {k: _described(k, {}) for k in SAMPLE_COLUMNS}


def _described(key, typ):
    out = {"title": LABELS.get(key, LABELS.get(DEPRECATED.get(key, ""), key)), **typ}
    if key in DEPRECATED:
        out["deprecated"] = True
        out["description"] = f"deprecated name of {DEPRECATED[key]}, kept one release"
    return out


def _geometry():
    pos = {"type": "array", "minItems": 2, "maxItems": 3, "items": {"type": "number"}}
    line = {"type": "array", "minItems": 2, "items": pos}
    return {
        "oneOf": [
            {
                "type": "object",
                "required": ["type", "coordinates"],
                "properties": {"type": {"const": "LineString"}, "coordinates": line},
            },
            {
                "type": "object",
                "required": ["type", "coordinates"],
                "properties": {
                    "type": {"const": "MultiLineString"},
                    "coordinates": {"type": "array", "items": line},
                },
            },
        ]
    }


def _kind_rules():
    def when(kind, then):
        return {"if": {"properties": {"kind": {"const": kind}}}, "then": {"properties": then}}

    return [
        when(
            "coverage-gap",
            {
                "severity": {"const": None},
                "severity_rank": {"const": None},
                "lwc_g_m3_max": {"const": None},
                "accretion_mm": {"const": None},
                "collection_efficiency_max": {"const": None},
            },
        ),
        when(
            "icing",
            {"severity": {"enum": list(codes.SEVERITY[1:])}, "severity_rank": {"minimum": 1}},
        ),
        when("no-icing", {"severity": {"const": "none"}, "severity_rank": {"const": 0}}),
    ]


def schema() -> dict:
    """Return the output JSON Schema (draft 2020-12) as a dict."""
    feature_props = {
        "type": "object",
        "required": _SEGMENT_REQUIRED,
        "properties": {k: _described(k, t) for k, t in SEGMENT_TYPES.items()},
        "allOf": _kind_rules(),
    }
    summary = {
        "type": "object",
        "required": _SUMMARY_REQUIRED,
        "properties": {k: _described(k, t) for k, t in SUMMARY_TYPES.items()},
    }
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "https://icing.invalid/schemas/hazards-v1.json",
        "title": f"icing hazard segments, version {SCHEMA_VERSION}",
        "description": "RFC 7946 FeatureCollection of hazard segments along screened routes, "
        "with route summaries, provenance, assumptions and the caution as foreign members. "
        "Every altitude is above mean sea level (altitude_reference 'msl'); the route's own "
        "reference is route_altitude_reference. Each key's title is the label people read in "
        "the terminal table, the report and the pictures. 1.1: per-route outcome, airframe, "
        "MSL altitudes with the route's own reference beside them, metres, severity_rank, "
        "candidate_altitudes_ft (ice_free_altitudes_ft deprecated). 1.2: ensembles and "
        "parametric spreads (members, member_fraction, member_statistic, "
        "severity_worst_member, members_covering, member_coverage; written only when a run "
        "has several members).",
        "type": "object",
        "required": [
            "type",
            "features",
            "caution",
            "schema_version",
            "summaries",
            "provenance",
            "assumptions",
        ],
        "properties": {
            "type": {"const": "FeatureCollection"},
            "caution": {"type": "string", "minLength": 40},
            "schema_version": {"const": SCHEMA_VERSION},
            "summaries": {"type": "array", "items": summary},
            "provenance": {"type": "object"},
            "assumptions": {"type": "object"},
            "features": {
                "type": "array",
                "items": {
                    "type": "object",
                    "required": ["type", "geometry", "properties"],
                    "properties": {
                        "type": {"const": "Feature"},
                        "geometry": _geometry(),
                        "properties": feature_props,
                    },
                },
            },
        },
        "not": {"required": ["crs"]},
        "$defs": _member_defs(),
        "x-csv-columns": _csv_columns(),
    }


def schema_text() -> str:
    """Return the schema as the text of the checked-in file."""
    return json.dumps(schema(), indent=1, ensure_ascii=False) + "\n"


if __name__ == "__main__":  # pragma: no cover - maintenance entry point
    SCHEMA_PATH.write_text(schema_text(), encoding="utf-8")
    print(f"wrote {SCHEMA_PATH}")
