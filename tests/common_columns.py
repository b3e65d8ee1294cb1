"""Canonical forecast columns for the column-physics tests.

Invented profiles for tests and demos only (never check values): each function
returns the keyword arguments of :func:`icing.column.diagnose_columns` for one
column, SI units, levels from the ground up. Profiles are smooth enough to be
plausible; heights are left to the hypsometric equation unless stated.
Append new fixtures at the end of the file.
"""

from __future__ import annotations

import numpy as np

T0 = 273.15

#: 40 pressure levels from 1000 to 300 hPa, ground up. [Pa]
PRESSURE_40 = np.linspace(100000.0, 30000.0, 40)


def _interp_profile(pressure_hpa, points):
    """Piecewise-linear profile in pressure from ``[(p_hpa, value), ...]``."""
    ps, vs = zip(*sorted(points), strict=True)
    return np.interp(pressure_hpa, ps, vs)


def warm_nose_column():
    """Freezing rain set-up: sub-freezing surface layer under a +3 C melting layer.

    Surface -3 C at 1000 hPa, warm nose +3 C near 850 hPa, saturated from
    900 hPa up to 600 hPa, 2 mm/h of precipitation.
    """
    p = PRESSURE_40
    ph = p / 100.0
    tc = _interp_profile(
        ph,
        [
            (1000, -3.0),
            (930, -1.0),
            (850, 3.0),
            (780, 0.0),
            (700, -6.0),
            (500, -22.0),
            (300, -48.0),
        ],
    )
    rh = _interp_profile(ph, [(1000, 0.95), (900, 1.0), (600, 1.0), (550, 0.6), (300, 0.3)])
    return {
        "pressure": p,
        "temperature": tc + T0,
        "relative_humidity": rh,
        "precipitation_rate_mm_h": 2.0,
    }


def cold_dry_column():
    """Cold, dry continental winter air: no cloud anywhere (RH 30-50 %)."""
    p = PRESSURE_40
    ph = p / 100.0
    tc = _interp_profile(ph, [(1000, -10.0), (700, -25.0), (500, -38.0), (300, -55.0)])
    rh = _interp_profile(ph, [(1000, 0.5), (300, 0.3)])
    return {"pressure": p, "temperature": tc + T0, "relative_humidity": rh}


def all_nan_column():
    """A column whose data are all missing (NaN)."""
    nan = np.full(PRESSURE_40.shape, np.nan)
    return {"pressure": PRESSURE_40.copy(), "temperature": nan, "relative_humidity": nan}


def supercooled_stratiform_deck():
    """A supercooled stratiform deck: saturated 900-800 hPa (about -5 to -11 C), dry above.

    Model cloud water 0.1 g/kg inside the deck, weak ascent (0.05 m/s), no ice aloft.
    """
    p = PRESSURE_40
    ph = p / 100.0
    tc = _interp_profile(
        ph, [(1000, 1.0), (900, -4.0), (800, -11.0), (780, -9.0), (500, -30.0), (300, -52.0)]
    )
    rh = _interp_profile(
        ph, [(1000, 0.8), (910, 0.9), (900, 1.0), (800, 1.0), (780, 0.5), (300, 0.3)]
    )
    inside = (ph <= 900.0) & (ph >= 800.0)
    return {
        "pressure": p,
        "temperature": tc + T0,
        "relative_humidity": rh,
        "cloud_liquid": np.where(inside, 1e-4, 0.0),
        "vertical_velocity": np.where(inside, 0.05, 0.0),
    }


def warm_topped_drizzle_deck():
    """A shallow deck with a warm top (-6 C) under a dry inversion, no model cloud water.

    Saturated 950-850 hPa (-1 to -6 C), dry and warmer above; no ice aloft. Its
    diagnosed liquid (~0.5 g/m3 at the top) sits below the freezing-drizzle gates at
    maritime droplet numbers; ``sld_drizzle_deck_column`` is the drizzling case.
    """
    p = PRESSURE_40
    ph = p / 100.0
    tc = _interp_profile(
        ph,
        [
            (1000, 2.0),
            (950, -1.0),
            (850, -6.0),
            (830, -2.0),
            (700, -8.0),
            (500, -26.0),
            (300, -50.0),
        ],
    )
    rh = _interp_profile(
        ph, [(1000, 0.85), (955, 0.95), (950, 1.0), (850, 1.0), (835, 0.4), (300, 0.2)]
    )
    return {"pressure": p, "temperature": tc + T0, "relative_humidity": rh}


def deep_frontal_deck_with_ice():
    """A deep frontal deck near -25 C (700-450 hPa saturated) with snow falling into it.

    Snow 0.2 g/kg and cloud ice 0.05 g/kg above 500 hPa, weak ascent 0.1 m/s.
    """
    p = PRESSURE_40
    ph = p / 100.0
    tc = _interp_profile(
        ph, [(1000, -8.0), (700, -20.0), (600, -25.0), (450, -32.0), (300, -50.0)]
    )
    rh = _interp_profile(
        ph, [(1000, 0.8), (710, 0.9), (700, 1.0), (450, 1.0), (400, 0.8), (300, 0.7)]
    )
    aloft = ph <= 500.0
    return {
        "pressure": p,
        "temperature": tc + T0,
        "relative_humidity": rh,
        "snow": np.where(aloft, 2e-4, 0.0),
        "cloud_ice": np.where(aloft, 5e-5, 0.0),
        "vertical_velocity": np.full(p.shape, 0.1),
    }


def thin_minus8_deck():
    """A thin deck topped near -8 C (880-860 hPa saturated), dry above, no ice aloft."""
    p = PRESSURE_40
    ph = p / 100.0
    tc = _interp_profile(
        ph, [(1000, 0.0), (880, -6.5), (860, -8.0), (840, -6.0), (500, -30.0), (300, -52.0)]
    )
    rh = _interp_profile(
        ph, [(1000, 0.8), (890, 0.9), (880, 1.0), (860, 1.0), (850, 0.5), (300, 0.3)]
    )
    return {"pressure": p, "temperature": tc + T0, "relative_humidity": rh}


def stack(*columns):
    """Stack single-column keyword dicts into (n, level) / (n,) arrays.

    A key missing from some columns is filled with zeros there (no cloud water,
    no ice, no ascent, no precipitation).
    """
    keys = set().union(*columns)
    per_column = ("precipitation_rate_mm_h", "surface_pressure", "surface_height")
    out = {}
    for k in sorted(keys):
        shape = () if k in per_column else np.shape(columns[0]["pressure"])
        out[k] = np.stack(
            [np.broadcast_to(np.asarray(c.get(k, 0.0), float), shape) for c in columns]
        )
    return out


def _hydrostatic_pressure(height, temperature, *, surface_pressure=101325.0):
    """Pressure [Pa] of ascending levels by integrating dp/p = -g dz / (Rd T) (trapezoid)."""
    from icing.constants import RD, G

    z = np.asarray(height, dtype=float)
    t = np.asarray(temperature, dtype=float)
    layer = G / RD * np.diff(z, axis=-1) * 0.5 * (1.0 / t[..., 1:] + 1.0 / t[..., :-1])
    lnp = np.concatenate([np.zeros(z.shape[:-1] + (1,)), -np.cumsum(layer, axis=-1)], axis=-1)
    return surface_pressure * np.exp(lnp)


def sld_warm_nose_column(*, cold_layer="shallow", precipitation_rate_mm_h=1.0):
    """A +3 C warm nose aloft over a sub-freezing surface layer, on height levels.

    ``cold_layer="shallow"``: -3 C at the ground, 0 C at 500 m, the warm nose between
    500 and 2000 m (peak +3 C at 1250 m), then -6.5 K/km above.
    ``cold_layer="deep"``: -10 C at the ground, 0 C at 1500 m, the same warm nose
    between 1500 and 3000 m (peak +3 C at 2250 m). Levels every 250 m to 5 km;
    saturated (RH 1, a cloud deck) above the warm nose, RH 0.97 below; no explicit
    cloud water. Carries ``height`` (pressure integrated hydrostatically from
    1013.25 hPa at the ground).
    """
    z = np.arange(0.0, 5001.0, 250.0)
    if cold_layer == "shallow":
        base, t_sfc = 500.0, -3.0
    elif cold_layer == "deep":
        base, t_sfc = 1500.0, -10.0
    else:
        raise ValueError(f"cold_layer must be 'shallow' or 'deep'; got {cold_layer!r}")
    top = base + 1500.0
    tc = np.interp(z, [0.0, base, base + 750.0, top], [t_sfc, 0.0, 3.0, 0.0])
    tc = np.where(z > top, -6.5e-3 * (z - top), tc)
    t = tc + T0
    return {
        "pressure": _hydrostatic_pressure(z, t),
        "height": z,
        "temperature": t,
        "relative_humidity": np.where(z > top, 1.0, 0.97),
        "precipitation_rate_mm_h": float(precipitation_rate_mm_h),
    }


def sld_drizzle_deck_column(*, top_c=-6.0, lwc_top_g_m3=0.8, ice_above_g_kg=0.0):
    """A 600 m supercooled stratus deck under a dry inversion, no melting layer.

    Cloud from 400 to 1000 m, ``top_c`` at its top, warming 5 K/km downward through
    the cloud and below it to the ground (``top_c + 5`` C at the ground). Cloud
    water rises linearly from 0 at base to ``lwc_top_g_m3`` at top (given as
    ``cloud_liquid`` [kg/kg]). Above the top a dry (RH 0.4) inversion 4 K warmer,
    then -6.5 K/km from 1100 m; no level above 0 C for ``top_c <= -5``.
    ``ice_above_g_kg`` puts cloud ice in the levels from 1100 to 2000 m (a seeding
    cloud above, RH 0.95 there). Levels every 100 m to 3 km; no precipitation rate.
    """
    from icing.constants import RD

    z = np.arange(0.0, 3001.0, 100.0)
    base, top = 400.0, 1000.0
    tc = top_c + 5e-3 * (top - z)
    tc = np.where(z > top, top_c + 4.0 - 6.5e-3 * np.maximum(z - top - 100.0, 0.0), tc)
    t = tc + T0
    p = _hydrostatic_pressure(z, t)
    in_cloud = (z >= base) & (z <= top)
    ice = np.where((z >= 1100.0) & (z <= 2000.0), ice_above_g_kg * 1e-3, 0.0)
    rh = np.where(in_cloud, 1.0, np.where(z < base, 0.9, np.where(ice > 0.0, 0.95, 0.4)))
    lwc = np.where(in_cloud, lwc_top_g_m3 * 1e-3 * (z - base) / (top - base), 0.0)
    return {
        "pressure": p,
        "height": z,
        "temperature": t,
        "relative_humidity": rh,
        "cloud_liquid": lwc / (p / (RD * t)),
        "cloud_ice": ice,
        "precipitation_rate_mm_h": 0.0,
    }
