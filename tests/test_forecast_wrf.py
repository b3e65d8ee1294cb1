"""WRF output read natively, on its model levels: a real run screened through the CLI.

Real data (tests/data/real, origin and licence in its README.md):
``wrf_d01_allvars_cropped.nc``, a WRF 3.3.1 run of 2005-09-21 00-09 UTC over the Tibetan
plateau (salem sample data): 30 km Lambert, 8 x 10 columns cropped from a larger domain,
27 eta levels, terrain 4.5-5.5 km. Expectations come from the raw variables read with
xarray and computed with MetPy (reference library) or WRF's own map-rotation fields.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from icing import codes
from icing.forecast import load_forecast

FILE = "wrf_d01_allvars_cropped.nc"


@pytest.fixture(scope="module")
def raw(real_data):
    with xr.open_dataset(real_data / FILE) as ds:
        return ds.load()


@pytest.fixture(scope="module")
def column(real_data, raw):
    """Our column at the mass point (south_north 4, west_east 5), first time."""
    fc = load_forecast(real_data / FILE)
    lat = float(raw["XLAT"].values[0, 4, 5] if raw["XLAT"].ndim == 3 else raw["XLAT"][4, 5])
    lon = float(raw["XLONG"].values[0, 4, 5] if raw["XLONG"].ndim == 3 else raw["XLONG"][4, 5])
    return fc, fc.columns_at([lat], [lon], [fc.valid_times[0]])


def test_wrf_screens_on_model_levels_without_conversion(real_data, screen_cli):
    code, fc, rows = screen_cli(
        [[85.9, 29.3, 7500.0], [88.1, 30.7, 7500.0]],
        real_data / FILE,
        departure="2005-09-21T02:00:00Z",
        name="plateau hop",
    )
    assert code == 0 and rows and all(r["covered"] == "True" for r in rows)
    prov = fc["provenance"]
    assert prov["format"] == "WRF" and prov["vertical"] == "model" and prov["levels"] == 27
    assert prov["valid_times"][-1] == "2005-09-21T09:00:00Z"  # from the character Times
    var = prov["variables"]
    assert "T + 300 K" in var["temperature"]["converted"]
    assert "QVAPOR mixing ratio" in var["specific_humidity"]["converted"]
    assert "rotated to earth-relative" in var["wind_u"]["converted"]


@pytest.mark.parametrize("reference", ["msl", "pressure"])
def test_curtain_rows_under_the_plateau_are_ground_not_gaps(real_data, raw, reference):
    """The terrain of the file (HGT, 4.5-5.5 km) lies under WRF's lowest mass level
    (half an eta layer above it): curtain rows under it are below the ground, every
    row above it is read (the same test of the target's own altitude as a grid band)."""
    from datetime import UTC, datetime

    from icing.route.model import Route, Waypoint
    from icing.runs.screen import screen_route

    fc = load_forecast(real_data / FILE)
    alt = 7620.0  # FL250 or 25,000 ft MSL, over the plateau
    route = Route(
        "plateau hop",
        (Waypoint("A", 29.3, 85.9, alt, reference), Waypoint("B", 30.7, 88.1, alt, reference)),
        departure_time=datetime(2005, 9, 21, 2, tzinfo=UTC),
    )
    cur = screen_route(route, fc, airframe="light-piston").curtain
    ground = np.asarray(cur.ground_m, float)[:, None]
    hgt = raw["HGT"].values
    assert np.nanmin(ground) >= hgt.min() - 1.0 and np.nanmax(ground) <= hgt.max() + 1.0
    sev, below = np.asarray(cur.severity), np.asarray(cur.below_ground)
    rows = np.broadcast_to(cur.altitudes_m[None, :], sev.shape)
    if reference == "msl":
        under, above = rows < ground - 1.0, rows > ground + 1.0
    else:  # pressure altitudes: a margin for the real air against the standard atmosphere
        under, above = rows < ground - 800.0, rows > ground + 800.0
    assert under.sum() > 1000 and np.all(below[under]) and np.all(sev[under] == codes.GAP)
    assert not below[above].any() and np.all(sev[above] >= codes.SEV_NONE)


def test_temperature_from_perturbation_potential_temperature(raw, column):
    # reference library: MetPy temperature_from_potential_temperature (kappa of dry air)
    import metpy.calc as mpcalc
    from metpy.units import units

    _, cs = column
    p = (raw["P"] + raw["PB"]).values[0, :, 4, 5]
    theta = raw["T"].values[0, :, 4, 5] + 300.0
    t = mpcalc.temperature_from_potential_temperature(
        units.Quantity(p, "Pa"), units.Quantity(theta, "K")
    ).m_as("K")
    np.testing.assert_allclose(cs.columns["pressure"][0], p, rtol=1e-6)  # P + PB itself
    # MetPy's kappa 0.28571 vs WRF's 2/7: 2e-5 apart, under 0.01 K here
    np.testing.assert_allclose(cs.columns["temperature"][0], t, atol=0.01)


def test_heights_destaggered_and_hypsometric(raw, column):
    _, cs = column
    z_w = ((raw["PH"] + raw["PHB"]) / 9.81).values[0, :, 4, 5]  # w levels, WRF's g
    z = cs.columns["height"][0]
    np.testing.assert_allclose(z, 0.5 * (z_w[:-1] + z_w[1:]), rtol=1e-6)  # transcription
    hgt = float(raw["HGT"].values[4, 5] if raw["HGT"].ndim == 2 else raw["HGT"].values[0, 4, 5])
    # physics: the lowest mass level lies just above the terrain (half the first eta layer)
    assert hgt < z[0] < hgt + 100.0
    # and the layers obey the hypsometric equation (MetPy thickness_hydrostatic, virtual
    # temperature from the mixing ratio): 1 % covers WRF's non-hydrostatic geopotential
    import metpy.calc as mpcalc
    from metpy.units import units

    p = units.Quantity(cs.columns["pressure"][0][2:12], "Pa")
    t = units.Quantity(cs.columns["temperature"][0][2:12], "K")
    w = units.Quantity(raw["QVAPOR"].values[0, 2:12, 4, 5], "kg/kg")
    dz = mpcalc.thickness_hydrostatic(p, t, mixing_ratio=w).m_as("m")
    assert z[11] - z[2] == pytest.approx(dz, rel=0.01)


def test_mixing_ratios_become_mass_fractions(raw, column):
    # reference library: MetPy specific_humidity_from_mixing_ratio, q = w / (1 + w); the
    # condensate in the denominator (under 1e-3 kg/kg here) moves q by under 0.1 %
    import metpy.calc as mpcalc
    from metpy.units import units

    _, cs = column
    w = raw["QVAPOR"].values[0, :, 4, 5]
    q = mpcalc.specific_humidity_from_mixing_ratio(units.Quantity(w, "kg/kg")).m_as("")
    np.testing.assert_allclose(cs.columns["specific_humidity"][0], q, rtol=1e-3)
    total = 1.0 + sum(
        raw[n].values[0, :, 4, 5]
        for n in ("QVAPOR", "QCLOUD", "QICE", "QRAIN", "QSNOW", "QGRAUP")
        if n in raw
    )
    # atol: the sample stands on the mass point up to round-off in the projection
    np.testing.assert_allclose(
        cs.columns["cloud_liquid"][0],
        raw["QCLOUD"].values[0, :, 4, 5] / total,
        rtol=1e-6,
        atol=1e-12,
    )


def test_winds_rotated_like_wrfs_own_map_rotation(raw, column):
    # WRF writes the local rotation of its grid (SINALPHA, COSALPHA); earth-relative winds
    # are u = U cos(alpha) - V sin(alpha), v = V cos(alpha) + U sin(alpha) (WRF's
    # convention, from memory), U and V destaggered to the mass point
    _, cs = column
    u = 0.5 * (raw["U"].values[0, :, 4, 5] + raw["U"].values[0, :, 4, 6])
    v = 0.5 * (raw["V"].values[0, :, 4, 5] + raw["V"].values[0, :, 5, 5])
    sa = float(np.asarray(raw["SINALPHA"].values).reshape(-1, 8, 10)[0, 4, 5])
    ca = float(np.asarray(raw["COSALPHA"].values).reshape(-1, 8, 10)[0, 4, 5])
    # 0.02 m/s: our rotation is measured on the projection, WRF's from its own map
    # formulas (the angles agree to about 0.002 degree)
    np.testing.assert_allclose(cs.wind_u[0], u * ca - v * sa, atol=0.02)
    np.testing.assert_allclose(cs.wind_v[0], v * ca + u * sa, atol=0.02)


def test_below_the_terrain_is_never_icing(real_data, screen_cli, raw):
    # 4000 m MSL lies under the 4.5-5.5 km terrain of the raw HGT everywhere on the route
    assert float(np.min(raw["HGT"].values)) > 4000.0
    code, fc, rows = screen_cli(
        [[85.9, 29.3, 4000.0], [88.1, 30.7, 4000.0]],
        real_data / FILE,
        departure="2005-09-21T02:00:00Z",
        name="under the plateau",
    )
    assert code == 0
    assert all(r["covered"] == "False" and r["severity"] == "coverage-gap" for r in rows)
    low = fc["summaries"][0]["freezing_level_ft_min"]
    assert low is None or low * 0.3048 > float(np.min(raw["HGT"].values))  # above the ground
