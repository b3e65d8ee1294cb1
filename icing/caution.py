"""The caution every output carries (README, CLI, GeoJSON features, pictures).

One text, kept here so every output says the same thing. The short form fits
on a picture; the full form goes into GeoJSON, JSON summaries and reports.
"""

from __future__ import annotations

__all__ = ["CAUTION", "CAUTION_SHORT", "NOT_ASSESSED", "GAP_NOTE"]

NOT_ASSESSED = (
    "Not assessed: ice-crystal icing at high altitude, engine, induction and "
    "carburettor icing, ground frost and contamination, convective peaks the "
    "forecast model does not resolve, and performance loss beyond a thickness proxy."
)

CAUTION = (
    "CAUTION: computed estimate from a forecast, not an official forecast or "
    "advisory. Consult official advisories (SIGMET/AIRMET, pilot reports, the "
    "national aviation weather service), the aircraft's flight manual, local "
    "regulations and licensed practice before flight. No hazard shown is no "
    "clearance to fly; missing or out-of-domain forecast data is a coverage gap, "
    "not an absence of icing. " + NOT_ASSESSED
)

CAUTION_SHORT = (
    "Estimate only, not an official forecast. Check SIGMET/AIRMET, PIREPs, the national "
    "aviation weather service and the flight manual. No hazard shown is no clearance to fly; "
    "grey = coverage gap, not 'no icing'."
)

GAP_NOTE = "coverage gap: no usable forecast data here; icing unknown, not absent"
