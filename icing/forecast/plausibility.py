"""Plausibility of gridded forecast values at the reader's edge: unit slips caught early.

A unit slip gives silently wrong icing (a deck lifted 9.8 times, 26 g/m3 of
liquid from pressures a hundred times too small). Each check looks at a sample
of the file's columns, in SI after the conversion the units attribute asked
for, and either refuses the file in one line naming the file, the variable, the
value and the likely slip, or, where the slip is unambiguous, corrects it and
says so in the provenance:

=============================== =========================== =====================
slip                            how it shows                what is done
=============================== =========================== =====================
Celsius labelled kelvin         air below 150 K             refused
kelvin labelled Celsius         air above 360 K             refused
RH fraction in a percent field  RH never above 1.5 %        refused
RH percent in a fraction field  RH above 150 %              refused
geopotential labelled metres    heights 7-13 x the standard corrected (divided by g)
                                atmosphere's at their
                                pressure
pressure levels in Pa as hPa    levels above 1100 hPa       corrected (read as Pa)
pressure levels in hPa as Pa    every level below 11 hPa    corrected (read as hPa)
heights falling with height     height not monotonic with   refused
                                the levels
=============================== =========================== =====================

Ranges: air temperature 150-360 K (the coldest and hottest air ever measured
are about 180 K and 330 K); relative humidity up to 150 % (model output a
little above 100 % is normal); the ICAO standard atmosphere for heights.
"""

from __future__ import annotations

import numpy as np

from icing.calc.thermo import standard_atmosphere_height
from icing.constants import G
from icing.errors import ForecastError

__all__ = [
    "check_temperature",
    "check_relative_humidity",
    "geopotential_as_metres",
    "level_pressure_slip",
    "check_monotonic_heights",
]


def _range(a):
    with np.errstate(invalid="ignore"):
        return float(np.nanmin(a)), float(np.nanmax(a))


def check_temperature(sample, *, name, units, path):
    """Refuse temperatures outside 150-360 K, naming the likely slip."""
    if not np.isfinite(sample).any():
        return
    lo, hi = _range(sample)
    if 150.0 <= lo and hi <= 360.0:
        return
    if hi < 150.0 and lo > -120.0:
        slip = "they look like Celsius labelled kelvin"
    elif lo > 360.0:
        slip = "they look like kelvin labelled Celsius"
    else:
        slip = "outside any air temperature"
    raise ForecastError(
        f"temperatures {lo:.1f}..{hi:.1f} K are implausible: {slip} (units attribute {units!r})",
        path=path,
        where=f"variable {name}",
        fix="correct the units attribute (K or degC)",
    )


def check_relative_humidity(sample, *, name, units, path):
    """Refuse relative humidity above 150 % or a percent field holding fractions."""
    if not np.isfinite(sample).any():
        return
    _, hi = _range(sample)
    if hi > 1.5:
        raise ForecastError(
            f"relative humidity up to {100 * hi:.0f} % (units attribute {units!r})",
            path=path,
            where=f"variable {name}",
            fix="give % or a fraction and set the units attribute",
        )
    if "%" in str(units) and 0.0 < hi <= 0.015:
        raise ForecastError(
            f"relative humidity never above {100 * hi:.2f} % over the file: a fraction "
            "written in a percent field",
            path=path,
            where=f"variable {name}",
            fix="set the units attribute to 1 (fraction) or write percent",
        )


def geopotential_as_metres(heights, pressure, *, name, path):
    """Return True when 'heights' are geopotential (m2 s-2) labelled as metres.

    Compares the heights with the ICAO standard atmosphere's at the same
    pressures (levels between 1000 and 200 hPa, where the standard heights are
    150 m and more): geopotential is g times larger; real heights stay within a
    factor of about 1.5 of the standard ones.
    """
    p = np.broadcast_to(pressure, heights.shape)
    ok = np.isfinite(heights) & (p <= 100000.0) & (p >= 20000.0)
    if not ok.any():
        return False
    ratio = np.median(heights[ok] / standard_atmosphere_height(p[ok]))
    if 0.6 * G < ratio < 1.4 * G:
        return True
    if not 0.5 < ratio < 2.0:
        raise ForecastError(
            f"heights are {ratio:.1f} times the standard atmosphere's at their pressure",
            path=path,
            where=f"variable {name}",
            fix="give geopotential height in m or geopotential in m2 s-2 with units to match",
        )
    return False


def level_pressure_slip(levels_pa, *, dim, units, path):
    """Return the factor that corrects pressure levels read with the wrong unit (1 if none).

    Levels above 1100 hPa are pascals labelled hectopascals (factor 0.01); a
    forecast whose every level lies above 11 hPa (below 1100 Pa) has hectopascals
    labelled pascals (factor 100).
    """
    top, bottom = float(np.min(levels_pa)), float(np.max(levels_pa))
    if bottom > 110000.0:
        if bottom <= 11_000_000.0:
            return 0.01
        raise ForecastError(
            f"pressure levels up to {bottom / 100:.0f} hPa",
            path=path,
            where=f"coordinate {dim}",
            fix=f"check the units attribute ({units!r})",
        )
    if bottom < 1100.0 and top > 0.0:
        return 100.0
    return 1.0


def check_monotonic_heights(heights, levels, *, name, vertical, path):
    """Refuse heights that do not rise as pressure falls (or with the level number)."""
    h = np.asarray(heights, float)
    order = np.argsort(-levels) if vertical == "pressure" else np.argsort(levels)
    h = np.take(h, order, axis=0)
    with np.errstate(invalid="ignore"):
        d = np.diff(h, axis=0)
    bad = np.isfinite(d) & (d <= 0)
    if bad.sum() > 0.05 * np.isfinite(d).sum():
        what = "pressure increases with height" if vertical == "pressure" else "heights fall"
        raise ForecastError(
            f"{what} in {int(bad.sum())} of {int(np.isfinite(d).sum())} sampled layers "
            "(levels reversed, or pressure and height mislabelled?)",
            path=path,
            where=f"variable {name}",
            fix="check the level coordinate and the units of pressure and height",
        )
