"""Units of forecast variables: read the ``units`` attribute, convert once to SI.

Every variable found in a file is converted by ``si = raw * scale + offset``
from its own ``units`` attribute (udunits / CF spellings and the common model
spellings in :data:`UNIT_ALIASES`), parsed with MetPy's pint registry. Where a
file has no units attribute the unit is guessed from the values and the guess
is said in the provenance ("assumed").
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.constants import RHO_WATER, G
from icing.errors import ForecastError

__all__ = [
    "TARGET_UNITS",
    "UNIT_ALIASES",
    "Conversion",
    "units_of",
    "quantity",
    "linear",
    "conversion_of",
    "is_dimension",
    "KNOWN_UNITS",
]

#: the SI (or unit-named) target of each variable key; "height"-like keys also
#: accept geopotential (divided by g), vertical velocity also omega (Pa/s)
TARGET_UNITS = {
    "temperature": "K",
    "dewpoint": "K",
    "relative_humidity": "1",
    "specific_humidity": "1",
    "height": "m",
    "pressure": "Pa",
    "cloud_liquid": "1",
    "cloud_ice": "1",
    "rain": "1",
    "snow": "1",
    "cloud_fraction": "1",
    "vertical_velocity": "m/s",
    "wind_u": "m/s",
    "wind_v": "m/s",
    "precipitation_rate": "mm/h",
    "surface_pressure": "Pa",
    "surface_height": "m",
}

#: spellings found in model output -> a pint-parsable unit
UNIT_ALIASES = {
    "C": "degC",
    "Celsius": "degC",
    "celsius": "degC",
    "deg C": "degC",
    "degrees C": "degC",
    "degrees_Celsius": "degC",
    "fraction": "1",
    "Fraction": "1",
    "Proportion": "1",
    "0-1": "1",
    "-": "1",
    "": "1",
    "(0 - 1)": "1",
    "kg/kg": "kg kg-1",
    "kg kg**-1": "kg kg-1",
    "g/kg": "g kg-1",
    "gpm": "m",
    "m2/s2": "m2 s-2",
    "m**2 s**-2": "m2 s-2",
    "m**2/s**2": "m2 s-2",
    "mm/h": "mm h-1",
    "mm/hr": "mm h-1",
    "Pa/s": "Pa s-1",
    "Pa s**-1": "Pa s-1",
    "m/s": "m s-1",
    "m s**-1": "m s-1",
    "kg m**-2 s**-1": "kg m-2 s-1",
    "millibars": "mbar",
    "millibar": "mbar",
    "percent": "%",
    "K/K": "1",
}


@dataclass(frozen=True)
class Conversion:
    """How one variable is brought to its SI target: ``si = raw * scale + offset``."""

    units: str
    """The source units as written (with " (assumed: ...)" when guessed)."""
    scale: float
    """Multiplier to the target unit."""
    offset: float
    """Offset added after scaling (temperatures in degC)."""
    transform: str = ""
    """"omega" when Pa/s is stored for a vertical velocity (converted on the column)."""


def units_of(var):
    """Return the ``units`` attribute of a variable, stripped, or None."""
    u = var.attrs.get("units")
    return None if u is None else str(u).strip()


def _ureg():
    from metpy.units import units  # pint: only for spellings not in KNOWN_UNITS

    return units


#: The dimension of each target unit of :func:`linear` and :func:`is_dimension`.
_TARGET_DIMENSION = {
    "K": "temperature",
    "1": "1",
    "m": "length",
    "Pa": "pressure",
    "m/s": "speed",
    "mm/h": "speed",
    "m2 s-2": "specific energy",
    "Pa/s": "pressure tendency",
    "kg m-2 s-1": "mass flux",
}

#: Spellings (after :data:`UNIT_ALIASES`) -> (dimension, {target: (scale, offset)}):
#: pint's results for them, so that most files never load pint (tests compare).
KNOWN_UNITS = {
    "K": ("temperature", {"K": (1.0, 0.0)}),
    "degC": ("temperature", {"K": (1.0, 273.15)}),
    "%": ("1", {"1": (0.01, 0.0)}),
    "1": ("1", {"1": (1.0, 0.0)}),
    "kg kg-1": ("1", {"1": (1.0, 0.0)}),
    "g kg-1": ("1", {"1": (0.001, 0.0)}),
    "m": ("length", {"m": (1.0, 0.0)}),
    "km": ("length", {"m": (1000.0, 0.0)}),
    "m2 s-2": ("specific energy", {"m2 s-2": (1.0, 0.0)}),
    "Pa": ("pressure", {"Pa": (1.0, 0.0)}),
    "hPa": ("pressure", {"Pa": (100.0, 0.0)}),
    "mbar": ("pressure", {"Pa": (100.0, 0.0)}),
    "Pa s-1": ("pressure tendency", {"Pa/s": (1.0, 0.0)}),
    "hPa s-1": ("pressure tendency", {"Pa/s": (100.0, 0.0)}),
    "m s-1": ("speed", {"m/s": (1.0, 0.0), "mm/h": (3600000.0, 0.0)}),
    "cm s-1": ("speed", {"m/s": (0.01, 0.0), "mm/h": (36000.0, 0.0)}),
    "mm h-1": ("speed", {"m/s": (2.7777777777777776e-07, 0.0), "mm/h": (1.0, 0.0)}),
    "kg m-2 s-1": ("mass flux", {"kg m-2 s-1": (1.0, 0.0)}),
}


def _known(units_str):
    """Return the :data:`KNOWN_UNITS` entry of a spelling (after the aliases), or None."""
    return KNOWN_UNITS.get(UNIT_ALIASES.get(units_str, units_str))


def quantity(units_str, *, path, name):
    """Return a pint quantity of 1 in ``units_str``; ForecastError when not understood."""
    ureg = _ureg()
    s = UNIT_ALIASES.get(units_str, units_str)
    try:
        return ureg.Quantity(1.0, ureg.parse_units(s) if s != "1" else ureg.dimensionless)
    except Exception:
        raise ForecastError(
            f"units {units_str!r} not understood",
            path=path,
            where=name,
            fix="set a udunits/CF units attribute (e.g. K, Pa, %, kg kg-1)",
        ) from None


def is_dimension(units_str, reference) -> bool:
    """Tell whether ``units_str`` parses to the dimensionality of ``reference`` (e.g. "Pa")."""
    known = _known(units_str)
    if known is not None and reference in _TARGET_DIMENSION:
        return known[0] == _TARGET_DIMENSION[reference]
    try:
        q = quantity(units_str, path=None, name="")
    except ForecastError:
        return False
    ureg = _ureg()
    return q.dimensionality == ureg.Quantity(1.0, reference).dimensionality


def linear(units_str, target, *, path, name):
    """Return (scale, offset) with si = raw * scale + offset, or None if not convertible."""
    known = _known(units_str)
    if known is not None and target in _TARGET_DIMENSION:
        if target in known[1]:
            return known[1][target]
        if known[0] != _TARGET_DIMENSION[target]:
            return None
    ureg = _ureg()
    q0 = quantity(units_str, path=path, name=name)
    try:
        tgt = ureg.dimensionless if target == "1" else ureg.parse_units(target)
        if q0.dimensionality != ureg.Quantity(1.0, tgt).dimensionality:
            return None
        a = ureg.Quantity(0.0, q0.units).to(tgt).magnitude
        b = ureg.Quantity(1.0, q0.units).to(tgt).magnitude
    except Exception:
        return None
    return float(b - a), float(a)


def _guess_units(key, sample):
    """Guess a unit from the values when the file gives none (said in the provenance)."""
    with np.errstate(invalid="ignore"):
        top = np.nanmax(sample) if np.isfinite(sample).any() else 0.0
    return {
        "temperature": "K" if top > 100 else "degC",
        "dewpoint": "K" if top > 100 else "degC",
        "relative_humidity": "%" if top > 1.5 else "1",
        "cloud_fraction": "%" if top > 1.5 else "1",
    }.get(key, TARGET_UNITS[key])


def conversion_of(key, var, *, path, name, sample) -> Conversion:
    """Return the conversion of a found variable to the SI target of ``key``."""
    units_str = units_of(var)
    guessed = units_str is None
    if guessed:
        units_str = _guess_units(key, sample)
    transform = ""
    target = TARGET_UNITS[key]
    where = f"variable {name}"
    conv = linear(units_str, target, path=path, name=where)
    if conv is None and key in ("height", "surface_height"):
        c2 = linear(units_str, "m2 s-2", path=path, name=where)
        if c2 is not None:
            conv = (c2[0] / G, c2[1] / G)
    if conv is None and key == "vertical_velocity":
        conv = linear(units_str, "Pa/s", path=path, name=where)
        transform = "omega" if conv is not None else ""
    if conv is None and key == "precipitation_rate":
        c2 = linear(units_str, "kg m-2 s-1", path=path, name=where)
        if c2 is not None:  # mass flux / rho_w -> m/s -> mm/h
            conv = (c2[0] / RHO_WATER * 3.6e6, c2[1] / RHO_WATER * 3.6e6)
    if conv is None:
        raise ForecastError(
            f"units {units_str!r} of {key} cannot be converted to {target}",
            path=path,
            where=where,
            fix=f"give {key} in units convertible to {target}, or map another "
            f"variable with --var {key}=NAME",
        )
    label = units_str + (" (assumed: no units attribute)" if guessed else "")
    return Conversion(label, conv[0], conv[1], transform)
