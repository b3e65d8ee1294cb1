"""Shared fixtures of the test suite (invented places, names and data; never check values).

Routes are set in the invented Skerrow Basin scenario (see routes/README.md),
except the antimeridian crossing, which sits over the open North Pacific. The
columns are invented profiles for the column-physics tests: each builder returns
the keyword arguments of :func:`icing.calc.diagnose_columns` for one column, SI
units, levels from the ground up. The screenings are synthetic route screenings
drawn by hand so that tests of pictures, avoidance and reports know where the
answers must lie (the scenario is described at :func:`_make_screening`).

Tests ask for them by fixture name: ``canonical_routes``, ``write_text``,
``columns``, ``make_screening`` and ``screening_scenario``; ``real_data`` (the
folder of real model files, origin and licence in its README.md) and
``screen_cli`` (runs ``icing screen`` on a route of our own over them);
``gfs_ensemble`` (small ensembles built from the real GFS file: the real fields as
the control member beside invented, dried members -- see :func:`gfs_ensemble`); the
service's tests also use ``service_catalog``, ``service_key``, ``start_service`` and
``live_service`` (a real ``icing serve`` on a loopback port); the grid's tests use
``check_grid_polygons`` (every polygon valid, MultiPolygon, counter-clockwise).
"""

from __future__ import annotations

import csv
import json
from datetime import UTC, datetime
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from icing import codes
from icing.caution import CAUTION
from icing.constants import FT
from icing.hazards.results import Curtain, RouteScreening
from icing.route import Route, Waypoint

# ---------------------------------------------------------------------------- routes

#: Departure time of the fixtures, inside the demo forecast window.
DEPARTURE = datetime(2027, 1, 14, 9, 0, tzinfo=UTC)


#: Two waypoints ~100 km apart at a constant 8,000 ft MSL, 200 kt, no waypoint times.
STRAIGHT_ROUTE = Route(
    name="straight",
    waypoints=(
        Waypoint("KARVO", 57.0, -25.0, 8000 * FT, "msl"),
        Waypoint("PENTU", 57.0, -23.35, 8000 * FT, "msl"),
    ),
    departure_time=DEPARTURE,
    true_airspeed_kt=200.0,
    source="fixture",
)


#: Westbound across 180 degrees at 52 N (lon 179 -> -179 is about 137 km), FL120.
ANTIMERIDIAN_ROUTE = Route(
    name="antimeridian",
    waypoints=(
        Waypoint("VEKTU", 52.0, -179.0, 120 * 100 * FT, "pressure"),
        Waypoint("SOLRI", 52.0, 179.0, 120 * 100 * FT, "pressure"),
    ),
    departure_time=DEPARTURE,
    true_airspeed_kt=300.0,
    source="fixture",
)


#: A drone hovering 10 min at 300 ft AGL over the sea surface.
SINGLE_POINT_ROUTE = Route(
    name="hover",
    waypoints=(Waypoint("HOVRA", 57.2, -24.5, 300 * FT, "agl", DEPARTURE, 10.0, 0.0),),
    departure_time=None,
    true_airspeed_kt=None,
    source="fixture",
    ground_elevation_m=0.0,
)


#: A route without waypoints (never valid).
EMPTY_ROUTE = Route(
    name="empty", waypoints=(), departure_time=DEPARTURE, true_airspeed_kt=150.0, source="fixture"
)


def _write_text(directory, name, text, *, encoding="utf-8"):
    """Write ``text`` to ``directory / name`` and return the path."""
    path = directory / name
    path.write_text(text, encoding=encoding)
    return path


# ---------------------------------------------------------------------------- columns

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


# ---------------------------------------------------------------------------- screenings

WAYPOINTS = [
    ("SKERROW", 0.0),
    ("VANNOCH", 60.0),
    ("ELDRITH", 120.0),
    ("QUARLE", 170.0),
    ("TORRISH", 200.0),
]


DECK_BASE_FT = 3000.0


DECK_TOP_FT = 8000.0


FREEZING_LEVEL_FT = 4250.0


GAP_KM = (150.0, 166.0)


def _segments(route, airframe, dist, lat, lon, alt_m, times, sev, sld, ice, rate, temp):
    """Split the flight-level series into runs of equal (severity, SLD, ice type)."""
    key = np.stack([sev, sld, ice], axis=1)
    change = np.flatnonzero((np.diff(key, axis=0) != 0).any(axis=1)) + 1
    starts = np.r_[0, change]
    ends = np.r_[change, dist.size]
    feats = []
    names = [w for w, _ in WAYPOINTS]
    wd = np.array([d for _, d in WAYPOINTS])
    for a, b in zip(starts, ends, strict=True):
        s = int(sev[a])
        if s == codes.SEV_NONE:
            continue
        kind = "coverage-gap" if s == codes.GAP else "icing"
        sl = slice(a, b)
        dt_min = (times[b - 1] - times[a]) / np.timedelta64(1, "m")
        phys = kind == "icing"
        props = {
            "route": route,
            "segment_id": f"{route}-{len(feats) + 1:03d}",
            "from_waypoint": names[int(np.argmin(np.abs(wd - dist[a])))],
            "to_waypoint": names[int(np.argmin(np.abs(wd - dist[b - 1])))],
            "kind": kind,
            "severity": codes.SEVERITY[s] if phys else None,
            "ice_type": codes.ICE_TYPES[int(ice[a])] if phys else None,
            "sld": codes.SLD_CLASSES[int(sld[a])] if phys else None,
            "basis": "diagnosed" if phys else None,
            "start_km": float(dist[a]),
            "end_km": float(dist[b - 1]),
            "start_time": str(times[a]) + "Z",
            "end_time": str(times[b - 1]) + "Z",
            "duration_min": float(dt_min),
            "altitude_ft_min": float(alt_m[sl].min() / FT),
            "altitude_ft_max": float(alt_m[sl].max() / FT),
            "temperature_c_min": float(temp[sl].min()) if phys else None,
            "temperature_c_max": float(temp[sl].max()) if phys else None,
            "lwc_g_m3_max": 0.1 * s if phys else None,
            "mvd_um_max": 18.0 if phys else None,
            "sld_lwc_g_m3_max": 0.2 if phys and sld[a] else None,
            "sld_mvd_um_max": 120.0 if phys and sld[a] else None,
            "collector": "wing leading edge" if phys else None,
            "collection_efficiency_max": 0.6 if phys else None,
            "accretion_rate_mm_h_max": float(rate[sl].max()) if phys else None,
            "accretion_mm": float(rate[sl].mean() * dt_min / 60.0) if phys else None,
            "ice_free_altitudes_ft": [],
            "airframe": airframe,
            "caution": CAUTION,
        }
        coords = [
            [round(float(x), 6), round(float(y), 6), round(float(z), 1)]
            for x, y, z in zip(lon[sl], lat[sl], alt_m[sl], strict=True)
        ]
        if len(coords) == 1:
            coords = coords * 2
        feats.append(
            {
                "type": "Feature",
                "properties": props,
                "geometry": {"type": "LineString", "coordinates": coords},
            }
        )
    return feats


def _make_screening(
    *,
    warm_nose=False,
    gap=True,
    altitude_reference="msl",
    antimeridian=False,
    route_name=None,
    airframe_name="Skerrow light twin (demo)",
):
    """Build a plausible RouteScreening of the Skerrow Basin (see the module docstring)."""
    n = 101
    dist = np.linspace(0.0, 200.0, n)  # [km]
    alt_ft = np.arange(0.0, 20000.0 + 1, 500.0)
    alt_m = alt_ft * FT
    ground_m = 100.0 + 450.0 * np.exp(-(((dist - 100.0) / 25.0) ** 2))
    below = alt_m[None, :] < ground_m[:, None]
    D, A = np.meshgrid(dist, alt_ft, indexing="ij")  # (n, a) in km and ft

    sev = np.zeros((n, alt_ft.size), dtype=int)
    sld = np.zeros_like(sev)
    if not warm_nose:
        temp = 8.42 - 6.5e-3 * (A * FT)  # 0 degC at 4,250 ft
        cloud = (A >= DECK_BASE_FT) & (A <= DECK_TOP_FT) & (D >= 10.0) & (D < 150.0)
        sev[cloud & (temp < 0.0)] = codes.SEV_LIGHT
        sev[cloud & (D >= 60) & (D <= 120) & (A >= 5500) & (A <= 7000)] = codes.SEV_MODERATE
        patch = cloud & (D >= 80) & (D <= 100) & (A >= 5000) & (A <= 6500)
        sev[patch] = codes.SEV_SEVERE
        sld[patch] = codes.SLD_DRIZZLE
        plan_ft = np.interp(dist, [0, 20, 180, 200], [2500, 6000, 6000, 2500])
    else:
        temp = np.interp(
            A, [0, 3000, 4000, 5000, 6000, 7000, 20000], [-3.0, -1.5, 0.5, 3.0, 1.5, -1.0, -30.0]
        )
        cloud = (A >= 7000) & (A <= 12000) & (D >= 10.0) & (D < 150.0)
        sev[cloud] = codes.SEV_LIGHT
        fzra = (temp < 0.0) & (A < 4000) & (D >= 40) & (D <= 140)
        sev[fzra] = codes.SEV_SEVERE
        sld[fzra] = codes.SLD_RAIN
        plan_ft = np.interp(dist, [0, 20, 180, 200], [2500, 3000, 3000, 2500])
    ice = np.select(
        [sev == 4, sev == 3, sev > 0],
        [codes.ICE_CLEAR, codes.ICE_MIXED, codes.ICE_RIME],
        codes.ICE_NONE,
    )
    rate = np.array([0.0, 2.0, 10.0, 35.0, 90.0])[np.clip(sev, 0, 4)]
    if gap:
        in_gap = (dist >= GAP_KM[0]) & (dist <= GAP_KM[1])
        sev[in_gap, :] = codes.GAP
        temp[in_gap, :] = np.nan
        cloud[in_gap, :] = False
    sev[below] = codes.GAP
    temp = np.where(below, np.nan, temp)
    curtain = Curtain(
        distance_km=dist,
        altitudes_m=alt_m,
        altitude_reference=altitude_reference,
        severity=sev,
        below_ground=below,
        temperature_c=temp,
        cloud=cloud & ~below,
        sld_class=np.where(below, codes.SLD_NONE, sld),
        ice_type=np.where(sev > 0, ice, codes.ICE_NONE),
        accretion_rate_mm_h=np.where(sev > 0, rate, 0.0),
        ground_m=ground_m,
    )

    # Flight-level values: nearest curtain row to the planned altitude.
    row = np.clip(np.rint(plan_ft / 500.0).astype(int), 0, alt_ft.size - 1)
    cols = np.arange(n)
    f_sev = sev[cols, row]
    if antimeridian:
        lon = np.linspace(179.2, 181.6, n)
        lon = np.where(lon > 180.0, lon - 360.0, lon)
        lat = np.linspace(-17.8, -17.2, n)
    else:
        lon = np.linspace(-7.9, -5.0, n)
        lat = np.linspace(56.1, 56.6, n) - (0.45 if warm_nose else 0.0)
    times = np.datetime64("2027-01-14T12:00", "ms") + (dist / 0.07 * 1000).astype(
        "timedelta64[ms]"
    )  # 70 m/s ground speed
    plan_m = plan_ft * FT
    name = route_name or ("Skerrow Basin north" if not warm_nose else "Skerrow Basin south")
    samples = SimpleNamespace(
        lat=lat,
        lon=lon,
        altitude_m=plan_m,
        altitude_reference=altitude_reference,
        distance_m=dist * 1000.0,
        time=times,
        tas=np.full(n, 70.0),
        leg=np.searchsorted([d for _, d in WAYPOINTS][1:-1], dist, side="right"),
        waypoint_distance_m=np.array([d for _, d in WAYPOINTS]) * 1000.0,
    )
    at_flight = {
        "covered": f_sev != codes.GAP,
        "severity": f_sev,
        "temperature_c": temp[cols, row],
        "sld_class": curtain.sld_class[cols, row],
        "ice_type": curtain.ice_type[cols, row],
        "accretion_rate_mm_h": curtain.accretion_rate_mm_h[cols, row],
        "altitude_ft": plan_ft,
        "distance_km": dist,
    }
    segments = _segments(
        name,
        airframe_name,
        dist,
        lat,
        lon,
        plan_m,
        times,
        f_sev,
        at_flight["sld_class"],
        at_flight["ice_type"],
        at_flight["accretion_rate_mm_h"],
        at_flight["temperature_c"],
    )
    icing_min = sum(
        f["properties"]["duration_min"] for f in segments if f["properties"]["kind"] == "icing"
    )
    summary = {
        "route": name,
        "airframe": airframe_name,
        "worst_severity": codes.SEVERITY[int(f_sev.max())],
        "minutes_in_icing": round(icing_min, 1),
        "accretion_mm": round(sum(f["properties"]["accretion_mm"] or 0 for f in segments), 2),
        "gap_km": float(GAP_KM[1] - GAP_KM[0]) if gap else 0.0,
        "segments": len(segments),
    }
    return RouteScreening(
        route_name=name,
        airframe_name=airframe_name,
        samples=samples,
        at_flight=at_flight,
        curtain=curtain,
        segments=segments,
        summary=summary,
        waypoints=list(WAYPOINTS),
        provenance={
            "forecast_files": ["skerrow_basin_demo.nc"],
            "valid_times": ["2027-01-14T12:00:00Z", "2027-01-14T15:00:00Z"],
            "tool": "icing (test fixture)",
        },
        assumptions={
            "air_mass": "maritime",
            "sub_adiabatic_factor": "falls with height above base (demo)",
            "coverage_radius_km": 50.0,
            "model_choices": {"collision": "finstad88", "severity": "demo table"},
            "ceiling_m": 25000 * FT,
        },
    )


# ---------------------------------------------------------------------------- fixtures


@pytest.fixture(scope="session")
def canonical_routes():
    """The canonical routes (frozen, safe to share) and their departure time."""
    return SimpleNamespace(
        DEPARTURE=DEPARTURE,
        STRAIGHT_ROUTE=STRAIGHT_ROUTE,
        ANTIMERIDIAN_ROUTE=ANTIMERIDIAN_ROUTE,
        SINGLE_POINT_ROUTE=SINGLE_POINT_ROUTE,
        EMPTY_ROUTE=EMPTY_ROUTE,
    )


@pytest.fixture(scope="session")
def write_text():
    """Write a text file into a folder and return its path."""
    return _write_text


@pytest.fixture(scope="session")
def columns():
    """Builders of the canonical forecast columns, and ``stack`` to join them."""
    return SimpleNamespace(
        warm_nose_column=warm_nose_column,
        cold_dry_column=cold_dry_column,
        all_nan_column=all_nan_column,
        supercooled_stratiform_deck=supercooled_stratiform_deck,
        warm_topped_drizzle_deck=warm_topped_drizzle_deck,
        deep_frontal_deck_with_ice=deep_frontal_deck_with_ice,
        thin_minus8_deck=thin_minus8_deck,
        sld_warm_nose_column=sld_warm_nose_column,
        sld_drizzle_deck_column=sld_drizzle_deck_column,
        stack=stack,
    )


def _every_canonical_column():
    """The seven canonical columns stacked, a gap column last: (7, level) / (7,)."""
    return stack(
        warm_nose_column(),
        supercooled_stratiform_deck(),
        warm_topped_drizzle_deck(),
        deep_frontal_deck_with_ice(),
        thin_minus8_deck(),
        cold_dry_column(),
        all_nan_column(),
    )


@pytest.fixture
def every_canonical_column():
    """The canonical columns stacked (a fresh dict of arrays for each test)."""
    return _every_canonical_column()


@pytest.fixture(scope="session")
def make_screening():
    """Build a synthetic screening of the Skerrow Basin scenario (see the module doc)."""
    return _make_screening


@pytest.fixture(scope="session")
def screening_scenario():
    """Where the answers of the synthetic screenings lie (deck, freezing level, gap)."""
    return SimpleNamespace(
        WAYPOINTS=WAYPOINTS,
        DECK_BASE_FT=DECK_BASE_FT,
        DECK_TOP_FT=DECK_TOP_FT,
        FREEZING_LEVEL_FT=FREEZING_LEVEL_FT,
        GAP_KM=GAP_KM,
    )


#: Real model output kept for the reader tests (origin, licence, quirks: README.md there).
REAL_DATA = Path(__file__).resolve().parent / "data" / "real"


@pytest.fixture(scope="session")
def real_data():
    """The folder of real model files (tests/data/real; see its README.md)."""
    return REAL_DATA


def _check_grid_polygons(fc):
    """Every feature of a grid layer valid, MultiPolygon, exteriors CCW, inside -180..180."""
    import shapely
    from shapely.geometry import shape

    kinds = ("icing", "coverage-gap", "member-fraction")
    for f in fc["features"]:
        g = shape(f["geometry"])
        assert f["geometry"]["type"] == "MultiPolygon"
        assert g.is_valid, shapely.is_valid_reason(g)
        for p in g.geoms:
            assert shapely.is_ccw(p.exterior)
            assert not any(shapely.is_ccw(r) for r in p.interiors)
        x0, y0, x1, y1 = g.bounds
        assert -180.0 <= x0 <= x1 <= 180.0 and -90.0 <= y0 <= y1 <= 90.0
        props = f["properties"]
        assert props["kind"] in kinds
        assert props["caution"] == CAUTION and props["airframe"] == fc["airframe"]
        if props["kind"] == "icing":
            assert props["severity"] in codes.SEVERITY[1:] and props["sld"] in codes.SLD_CLASSES
        elif props["kind"] == "coverage-gap":
            assert props["severity"] is None and props["gap_reason"]
        else:
            assert props["threshold"] and 1 <= props["fraction_class"] <= 5


@pytest.fixture(scope="session")
def check_grid_polygons():
    """Check a grid FeatureCollection's polygons (valid, MultiPolygon, counter-clockwise)."""
    return _check_grid_polygons


@pytest.fixture
def screen_cli(tmp_path):
    """Run ``icing screen`` on a route of our own; return (exit code, GeoJSON, sample rows).

    ``run(coords, forecast, departure=ISO, name=..., airframe=..., extra=(...))``:
    ``coords`` are ``[lon, lat, alt_m]`` positions of a LineString written to a
    temporary GeoJSON route; the output GeoJSON is None when nothing was written.
    """
    from icing.cli import main

    def run(coords, forecast, *, departure, name="test route", airframe="light-piston", extra=()):
        route = tmp_path / "route.geojson"
        feature = {
            "type": "Feature",
            "properties": {"name": name, "departure_time": departure},
            "geometry": {"type": "LineString", "coordinates": coords},
        }
        route.write_text(json.dumps(feature))
        out, samples = tmp_path / "out.geojson", tmp_path / "samples.csv"
        for f in (out, samples):
            f.unlink(missing_ok=True)
        args = ["screen", str(route), "--forecast", *map(str, np.atleast_1d(forecast))]
        args += ["--airframe", airframe, "-o", str(out), "--samples", str(samples), *extra]
        code = main(args)
        fc = json.loads(out.read_text()) if out.exists() else None
        rows = []
        if samples.exists():
            with samples.open() as fh:
                rows = list(csv.DictReader(fh))
        return code, fc, rows

    return run


# ---------------------------------------------------------------------------- service


def _free_port() -> int:
    import socket

    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="session")
def service_catalog(tmp_path_factory):
    """A catalogue folder for ``icing serve``: the demo grid and the profile fixture."""
    import shutil
    from pathlib import Path

    from icing.forecast import demo_forecast_path

    folder = tmp_path_factory.mktemp("catalogue")
    shutil.copy(demo_forecast_path(), folder / "skerrow-demo.nc")
    repo = Path(__file__).resolve().parents[1]
    shutil.copy(repo / "fixtures" / "skerrow-profiles.json", folder / "skerrow-profiles.json")
    return folder


@pytest.fixture(scope="session")
def service_key(tmp_path_factory):
    """A key file with one key: ``path``, ``name``, ``key`` and the ``headers`` that send it."""
    from icing.service.keys import add_key

    path = tmp_path_factory.mktemp("keys") / "api-keys.txt"
    key = add_key(path, "dispatch-test")
    return SimpleNamespace(
        path=path, name="dispatch-test", key=key, headers={"Authorization": f"Bearer {key}"}
    )


def _start_service(folder, catalog, args):
    """Start ``icing serve`` on a free loopback port; return once /v1/health answers."""
    import os
    import subprocess
    import sys
    import time
    import urllib.request

    port = _free_port()
    cmd = [sys.executable, "-m", "icing", "serve", "--catalog", str(catalog)]
    cmd += ["--port", str(port), *args]
    out = open(folder / "access.jsonl", "wb")  # noqa: SIM115 - closed by the stopper
    err = open(folder / "server.log", "wb")  # noqa: SIM115
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    proc = subprocess.Popen(cmd, stdout=out, stderr=err, env=env)
    url = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 90
    while True:
        try:
            with urllib.request.urlopen(url + "/v1/health", timeout=2) as r:
                if r.status == 200:
                    break
        except OSError:
            pass
        if proc.poll() is not None or time.monotonic() > deadline:
            proc.kill()
            raise RuntimeError((folder / "server.log").read_text()[-2000:])
        time.sleep(0.2)

    def stop():
        if proc.poll() is None:
            proc.terminate()
            try:
                proc.wait(30)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
        out.close()
        err.close()

    return SimpleNamespace(
        url=url,
        pid=proc.pid,
        process=proc,
        access_log=folder / "access.jsonl",
        server_log=folder / "server.log",
        stop=stop,
    )


@pytest.fixture
def start_service(tmp_path_factory):
    """Start ``icing serve --catalog DIR ARGS...`` processes; each is stopped after the test.

    ``start_service(catalog, *args)`` returns ``url``, ``pid``, ``process``,
    ``access_log``, ``server_log`` and ``stop()`` (SIGTERM: a graceful stop).
    """
    started = []

    def start(catalog, *args):
        service = _start_service(tmp_path_factory.mktemp("service"), catalog, args)
        started.append(service)
        return service

    yield start
    for service in started:
        service.stop()


@pytest.fixture(scope="session")
def live_service(service_catalog, service_key, tmp_path_factory):
    """A real ``icing serve`` (uvicorn) on a free loopback port: keys on, 2 workers, no rate limit.

    As ``start_service``, plus ``headers`` (with the key); stopped at the end of the session.
    """
    args = ["--api-keys", str(service_key.path), "--workers", "2", "--rate-limit", "0"]
    service = _start_service(tmp_path_factory.mktemp("live-service"), service_catalog, args)
    service.headers = service_key.headers
    yield service
    service.stop()


# ---------------------------------------------------------------------------- ensembles

#: The real GFS GRIB2 file the ensembles are built from (tests/data/real/README.md).
GFS_FILE = "gfs.t12z.pgrbf120.2p5deg.grib2"
#: A route of our own over the GFS winter case (Great Lakes, 2011-01-15), where the real
#: forecast holds icing at and around the flight altitude.
LAKES_ROUTE = ((43.0, -88.0, 3000.0), (43.0, -84.0, 3000.0))
LAKES_DEPARTURE = datetime(2011, 1, 15, 11, 30, tzinfo=UTC)
#: The invented perturbation of the dried members: relative humidity 5 %, no cloud water.
DRIED_RH_PCT = 5.0


def _gfs_member_grib(path, members=4):
    """Write the GFS file as a GRIB2 ensemble: number 0 the real fields, the others dried.

    Each message is coded as an individual ensemble member (product template 4.1, or
    4.11 for the time-averaged precipitation of template 4.8; ``perturbationNumber``,
    ``numberOfForecastsInEnsemble``; ``typeOfEnsembleForecast`` 1 for the control, 3
    for the perturbed members: WMO GRIB2 code tables 4.0 and 4.6). The dried members'
    relative humidity (5 %) and cloud water (none) are invented test data.
    """
    import eccodes

    eccodes.codes_grib_multi_support_on()
    out = []
    for number in range(members):
        with open(REAL_DATA / GFS_FILE, "rb") as fh:
            while (h := eccodes.codes_grib_new_from_file(fh)) is not None:
                try:
                    template = eccodes.codes_get(h, "productDefinitionTemplateNumber")
                    eccodes.codes_set(
                        h, "productDefinitionTemplateNumber", {0: 1, 8: 11}[template]
                    )
                    eccodes.codes_set(h, "typeOfEnsembleForecast", 1 if number == 0 else 3)
                    eccodes.codes_set(h, "perturbationNumber", number)
                    eccodes.codes_set(h, "numberOfForecastsInEnsemble", members)
                    name = eccodes.codes_get(h, "shortName")
                    if number and name in ("r", "clwmr"):
                        n = eccodes.codes_get_size(h, "values")
                        dried = DRIED_RH_PCT if name == "r" else 0.0
                        eccodes.codes_set_values(h, np.full(n, dried))
                    out.append(eccodes.codes_get_message(h))
                finally:
                    eccodes.codes_release(h)
    Path(path).write_bytes(b"".join(out))
    return Path(path)


def _dried(ds):
    """The invented dried member of an internal-structure dataset (see DRIED_RH_PCT)."""
    out = ds.copy(deep=True)
    out["relative_humidity"] = out["relative_humidity"] * 0 + DRIED_RH_PCT / 100.0
    out["cloud_liquid"] = out["cloud_liquid"] * 0.0
    return out


@pytest.fixture(scope="session")
def gfs_ensemble(tmp_path_factory):
    """Small ensembles from the real GFS file (the perturbations are invented test data).

    The control member is the real forecast unchanged; the other members are dried
    (relative humidity 5 %, no cloud water), an invented perturbation of our own that
    removes the cloud, so that where the control ices they do not: the member
    arithmetic is then known exactly (never a physics check value). Written as
    ``grib`` (four members on a GRIB2 ``number`` axis), ``netcdf`` (four members on a
    CF ``realization`` axis), and one file per member for ``--ensemble``: ``control``,
    ``dried``, and ``cropped`` (the control cut west of 86 W: the route's east end is
    outside that member's grid). ``route`` and ``departure`` are the lakes route.
    """
    import xarray as xr

    from icing.forecast import load_forecast

    d = tmp_path_factory.mktemp("gfs-ensemble")
    grib = _gfs_member_grib(d / "gfs-members.grib2")
    ds = load_forecast(REAL_DATA / GFS_FILE).dataset.load()
    dried = _dried(ds)
    realization = xr.DataArray(
        np.arange(4), dims="realization", attrs={"standard_name": "realization"}
    )
    ens = xr.concat([ds, dried, dried, dried], dim=realization, data_vars="all")
    for key in ("surface_height",):  # static: no member axis
        ens[key] = ds[key]
    paths = {"grib": grib, "netcdf": d / "gfs-members.nc"}
    ens.to_netcdf(paths["netcdf"])
    for name, member in (("control", ds), ("dried", dried)):
        paths[name] = d / f"gfs-{name}.nc"
        member.to_netcdf(paths[name])
    paths["cropped"] = d / "gfs-cropped.nc"
    ds.sel(x=slice(None, 360.0 - 86.0)).to_netcdf(paths["cropped"])
    route = Route(
        "lakes shuttle",
        tuple(Waypoint(f"L{i}", la, lo, z, "msl") for i, (la, lo, z) in enumerate(LAKES_ROUTE)),
        departure_time=LAKES_DEPARTURE,
    )
    return SimpleNamespace(
        **paths, route=route, departure=LAKES_DEPARTURE, gfs=REAL_DATA / GFS_FILE
    )
