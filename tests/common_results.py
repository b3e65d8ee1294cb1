"""Synthetic route screenings of the demo scenario "the Skerrow Basin" (invented data).

Nothing here is a check value: the curtains are drawn by hand so that tests of
pictures, avoidance and reports know where the answers must lie.

Standard case (``make_screening()``), 200 km from SKERROW to TORRISH, flown at
6,000 ft after a climb from 2,500 ft, with a descent at the end:

* curtain rows every 500 ft from 0 to 20,000 ft MSL, samples every 2 km;
* temperature falls 6.5 K/km from 8.42 degC at sea level: the freezing level is
  at 4,250 ft MSL, above the ground (100 m, a 450 m hill near km 100), so the
  4,000 ft row is +1.0 degC and the 4,500 ft row -0.5 degC;
* a liquid cloud deck from 3,000 ft (base) to 8,000 ft (top) between km 10 and
  km 150: "light" icing where it is below freezing, "moderate" in its core
  (km 60-120, 5,500-7,000 ft), "severe" with freezing drizzle in a patch
  (km 80-100, 5,000-6,500 ft);
* a coverage gap (no data at any altitude) from km 150 to km 166;
* below the ground: ``codes.GAP`` and ``below_ground``.

So along the icing stretches at 6,000 ft the nearest clear altitude above is
9,000 ft (first 1,000 ft multiple above the 8,000 ft top) and below is 4,000 ft
(warm cloud under the freezing level).

Warm-nose case (``make_screening(warm_nose=True)``): flown at 3,000 ft in
freezing rain under a warm layer (above 0 degC from about 3,800 to 6,800 ft),
with cloud above 7,000 ft: 4,000 ft is a clear warm-layer option with freezing
rain beneath it.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from icing import codes
from icing.caution import CAUTION
from icing.constants import FT
from icing.hazards.results import Curtain, RouteScreening

__all__ = ["make_screening", "WAYPOINTS", "DECK_TOP_FT", "FREEZING_LEVEL_FT"]

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


def make_screening(
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
