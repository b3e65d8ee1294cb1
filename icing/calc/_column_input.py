"""Input checks of the column diagnosis: numbers, shapes and unit mistakes at the edge."""

from __future__ import annotations

import numpy as np

from icing.errors import InputError

__all__: list[str] = []

#: The per-level inputs of ``diagnose_columns`` beside pressure and temperature.
_LEVEL_INPUTS = (
    "dewpoint",
    "relative_humidity",
    "specific_humidity",
    "height",
    "cloud_liquid",
    "cloud_ice",
    "rain",
    "snow",
    "cloud_fraction",
    "vertical_velocity",
)


def _as_float(name, value):
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(
            f"{name} is not numeric",
            where=name,
            fix=f"pass {name} as an array of numbers (SI units)",
        ) from None


def _prepare(pressure, temperature, level_inputs, column_inputs):
    """Broadcast inputs to (n, level) / (n,), returning the leading shape too."""
    p = _as_float("pressure", pressure)
    t = _as_float("temperature", temperature)
    arrays = {"pressure": p, "temperature": t}
    arrays.update({k: _as_float(k, v) for k, v in level_inputs.items() if v is not None})
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    except ValueError:
        given = ", ".join(f"{k} {a.shape}" for k, a in arrays.items())
        raise InputError(
            f"per-level inputs do not broadcast to one (..., level) shape: {given}",
            where="diagnose_columns",
            fix="give every per-level array the shape (..., level)",
        ) from None
    if len(shape) == 0 or shape[-1] == 0:
        raise InputError(
            "pressure and temperature need a level axis with levels",
            where="pressure",
            fix="pass arrays shaped (..., level), level >= 1",
        )
    lead, n_lev = shape[:-1], shape[-1]
    n = int(np.prod(lead, dtype=int))
    flat = {k: np.broadcast_to(a, shape).reshape(n, n_lev) for k, a in arrays.items()}
    cols = {}
    for k, v in column_inputs.items():
        if v is None:
            continue
        a = _as_float(k, v)
        try:
            cols[k] = np.broadcast_to(a, lead).reshape(n)
        except ValueError:
            raise InputError(
                f"{k} has shape {a.shape}, expected the column shape {lead}",
                where=k,
                fix=f"give {k} one value per column",
            ) from None
    return lead, n_lev, flat, cols


#: Unit mistakes caught at the edge: name -> (largest plausible value, what it looks
#: like, fix). Values above the limit anywhere in the input raise InputError.
_UNIT_LIMITS = {
    "relative_humidity": (5.0, "percent", "give relative humidity as a fraction (0-1)"),
    "specific_humidity": (0.1, "g/kg", "give specific humidity in kg/kg"),
    "cloud_liquid": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "cloud_ice": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "rain": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "snow": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "cloud_fraction": (1.5, "percent", "give cloud fraction as a fraction (0-1)"),
}


def _finite_max(a):
    top = a.max() if a.size else np.nan
    if np.isfinite(top):  # no NaN and no +inf anywhere: the largest value is finite
        return float(top)
    finite = a[np.isfinite(a)]
    return float(finite.max()) if finite.size else np.nan


def _check_units(flat):
    """Raise on clear unit mistakes; return plausibility notes (strings)."""
    p_max = _finite_max(flat["pressure"])
    if p_max < 2000.0:
        raise InputError(
            f"pressure peaks at {p_max:g}, which looks like hPa",
            where="pressure",
            fix="give pressure in Pa (hPa x 100)",
        )
    t_max = _finite_max(flat["temperature"])
    if t_max < 150.0:
        raise InputError(
            f"temperature peaks at {t_max:g}, which looks like degrees Celsius",
            where="temperature",
            fix="give temperature in K (degC + 273.15)",
        )
    if "dewpoint" in flat and _finite_max(flat["dewpoint"]) < 150.0:
        raise InputError(
            "dewpoint looks like degrees Celsius",
            where="dewpoint",
            fix="give dewpoint in K (degC + 273.15)",
        )
    for name, (limit, looks, fix) in _UNIT_LIMITS.items():
        if name in flat and _finite_max(flat[name]) > limit:
            raise InputError(
                f"{name} peaks at {_finite_max(flat[name]):g}, which looks like {looks}",
                where=name,
                fix=fix,
            )
    notes = []
    if "relative_humidity" in flat and _finite_max(flat["relative_humidity"]) > 1.2:
        notes.append(
            "relative humidity above 120 % in the input: check its units and source "
            "(values a little above 100 % are normal model output)"
        )
    return notes
