"""Humidity conventions of the models, and how each source's relative humidity is read.

Relative humidity is a vapour pressure over a saturation vapour pressure; models
differ in what they saturate over below 0 C. The column physics wants it over
plane water (supercooled liquid is what ices aircraft), so each source's
convention is found from the file and its relative humidity converted:
``RH_water = RH_source * e_source(T) / e_water(T)``, both saturation pressures from
the model's own formulas.

============ =========================================== ===================================
convention   saturation below 0 C                        documented in
============ =========================================== ===================================
water        plane water at every temperature            (NCEP NAM: UPP ``CALRH``; NCEP
                                                         RAP/HRRR: UPP ``CALRH_GSD``)
ifs-mixed    water >= 0 C, ice <= -23 C, quadratic        ECMWF parameter database
             weight between (Tetens form)                (paramId 157); IFS documentation
                                                         Part IV (Cy45r1 sec. 7.4)
ncep-gfs     water >= 0 C, ice <= -20 C, linear weight    NCEP Unified Post Processor,
             between (GFS physics constants)             ``CALRH_GFS`` / ``FPVSNEW``
ice          plane ice below 0 C                         (only when the user says so)
============ =========================================== ===================================

Where the file does not say which model wrote it, the convention is unknown:
the values are read as over water and the provenance says so. Reading an
ice-referenced humidity as over water overstates humidity below 0 C (more cloud,
more icing diagnosed), never the reverse. ``--rh-convention`` overrides.

Model relative humidity is also capped at 100 % by some post-processors (NCEP);
a capped value converted to over-water stays at or below ice saturation below
0 C, as the model meant it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.calc.thermo import (
    saturation_vapor_pressure_ifs,
    saturation_vapor_pressure_ncep_gfs,
)

__all__ = ["HumidityConvention", "CONVENTIONS", "humidity_convention", "water_rh_factor"]


@dataclass(frozen=True)
class HumidityConvention:
    """What a source's relative humidity is relative to, below 0 C."""

    name: str
    """Short name (``--rh-convention``)."""
    description: str
    """The saturation it uses, in words."""
    source: str
    """Where the convention is documented."""


CONVENTIONS = {
    "water": HumidityConvention(
        "water",
        "over plane water at all temperatures",
        "as the file's model documents it (NCEP NAM: UPP CALRH; NCEP RAP/HRRR: UPP CALRH_GSD)",
    ),
    "ifs-mixed": HumidityConvention(
        "ifs-mixed",
        "over water at and above 0 C, over ice at and below -23 C, quadratic blend between",
        "ECMWF parameter database, relative humidity (paramId 157); IFS documentation Part IV",
    ),
    "ncep-gfs": HumidityConvention(
        "ncep-gfs",
        "over water at and above 0 C, over ice below -20 C, linear blend between",
        "NCEP Unified Post Processor, CALRH_GFS with FPVSNEW (GFS physics constants)",
    ),
    "ice": HumidityConvention(
        "ice",
        "over plane ice below 0 C, over water above",
        "stated by the user (--rh-convention ice)",
    ),
}
_UNKNOWN = HumidityConvention(
    "unknown",
    "not stated by the file: read as over water",
    "unknown (the file does not say which model wrote it; --rh-convention states it)",
)

_NCEP_PROCESS = {81: "ncep-gfs", 82: "ncep-gfs", 96: "ncep-gfs", 107: "ncep-gfs"}
_NCEP_WATER = {83: "HRRR", 84: "NAM", 89: "NAM (NMM)", 105: "RAP"}


def _from_grib(attrs):
    """Convention from GRIB centre and generating process (this package's or cfgrib's)."""
    centre = str(attrs.get("GRIB_centre", "")).strip().lower()
    process = attrs.get("GRIB_generatingProcessIdentifier")
    process = None if process is None else int(np.asarray(process).ravel()[0])
    if centre in ("ecmf", "98"):
        return "ifs-mixed", "GRIB centre ecmf (ECMWF)"
    if centre in ("kwbc", "7"):
        if process in _NCEP_PROCESS:
            return _NCEP_PROCESS[process], f"GRIB centre kwbc, generating process {process} (GFS)"
        if process in _NCEP_WATER:
            name = _NCEP_WATER[process]
            return "water", f"GRIB centre kwbc, generating process {process} ({name})"
    return None


def _from_service(attrs):
    """Convention from netCDF-Java (THREDDS) and other global attributes."""
    centre = str(attrs.get("Originating_or_generating_Center", "")).lower()
    process = str(
        attrs.get(
            "Analysis_or_forecast_generating_process_identifier_defined_by_originating_centre", ""
        )
    ).lower()
    text = " ".join(str(attrs.get(k, "")) for k in ("source", "institution", "title")).lower()
    if "european centre" in centre or "ecmwf" in text or "era5" in text:
        return "ifs-mixed", "global attributes name ECMWF"
    if "ncep" in centre or "national centers for environmental prediction" in centre:
        if "global forecast system" in process or "gfs" in process:
            return "ncep-gfs", "global attributes name the NCEP GFS"
        if "nam" in process or "rapid refresh" in process or "hrrr" in process:
            return "water", f"global attributes name the NCEP model ({process})"
    return None


def humidity_convention(var_attrs, file_attrs, override=None):
    """Return (convention, how it was known) of a relative-humidity variable.

    ``override`` (a name of :data:`CONVENTIONS`) wins; then the variable's GRIB
    identity, then the file's GRIB or service attributes; else unknown.
    """
    if override:
        return CONVENTIONS[override], "stated by the user (--rh-convention)"
    for attrs in (var_attrs, file_attrs):
        found = _from_grib(attrs) or _from_service(attrs)
        if found:
            return CONVENTIONS[found[0]], found[1]
    return _UNKNOWN, "the file does not say which model wrote it"


def water_rh_factor(convention: HumidityConvention, temperature):
    """Return ``e_convention(T) / e_water(T)``, the factor to an over-water humidity.

    The ratio is taken with the model's own saturation formulas (a ratio of two
    formulas of one family, so their small differences from other laws cancel).
    """
    t = np.asarray(temperature, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        if convention.name == "ifs-mixed":
            return saturation_vapor_pressure_ifs(t, phase="mixed") / saturation_vapor_pressure_ifs(
                t
            )
        if convention.name == "ncep-gfs":
            return saturation_vapor_pressure_ncep_gfs(
                t, phase="mixed"
            ) / saturation_vapor_pressure_ncep_gfs(t)
        if convention.name == "ice":
            ratio = saturation_vapor_pressure_ifs(
                t, phase="solid"
            ) / saturation_vapor_pressure_ifs(t)
            return np.where(t < 273.16, ratio, 1.0)
    return np.ones_like(t)
