"""The compiled column physics (numba) gives the numpy reference's diagnosis.

``diagnose_columns(..., compiled=True)`` runs the steps before SLD as compiled loops
(``icing.calc._column_loops``); the numpy path stays the reference. Each check diagnoses
the same columns both ways and holds every output to it: masks, classes, indices and
the NaN pattern to the bit, the fields computed from the same IEEE operations in the
same order to the bit too, and the fields downstream of a transcendental evaluated in
the loops (``exp``, ``log``, ``pow`` from the C library, against numpy's vectorised
ones: they may differ by an ulp) within :data:`TOLERANCE`. A regression check of code
paths, not of physics: the columns are the repository's fixtures and demo forecast,
the real model files and soundings of ``tests/data/real`` (origin in its README.md),
the shared canonical columns and a generated sweep (a scenario of our own).
"""

from __future__ import annotations

import warnings
import zlib

import numpy as np
import pytest

pytest.importorskip("numba")

from icing.calc import _column_compiled, column  # noqa: E402
from icing.calc._compiled import compiled_loops  # noqa: E402
from icing.calc.column import ColumnOptions, diagnose_columns  # noqa: E402
from icing.constants import T0  # noqa: E402

#: Fields that may differ by the ulps of the loops' transcendentals: field ->
#: (relative, absolute) tolerance. The adiabatic liquid chains up to ~40 Runge-Kutta
#: sub-steps of four ``exp``/``pow`` stages each, then ``rho (r_base - r)``, whose
#: cancellation near a base turns a relative 1e-15 of ``r`` into a larger relative
#: error of a tiny liquid: 1e-12 relative, or 1e-15 kg/m3 absolute (a ten-thousandth of
#: the 0.01 g/m3 in-cloud threshold), bounds both with room (seen on these columns:
#: 8e-17 kg/m3 absolute, 4e-13 relative where the liquid is near 1e-12 g/m3, 3e-14
#: on the benchmark grid). The droplet number, MVD and SLD sizes follow the liquid
#: through ``pow`` (seen: 1.3e-13 relative); the glaciation likelihood (0-1) through
#: ``exp`` and ``pow``, 1e-12 absolute (seen: 5e-14).
TOLERANCE = {
    "lwc": (1e-12, 1e-15),
    "lwc_diagnosed": (1e-12, 1e-15),
    "sld_lwc": (1e-12, 1e-15),
    "droplet_number": (1e-12, 0.0),
    "mvd": (1e-12, 0.0),
    "sld_mvd": (1e-12, 0.0),
    "sld_dmax": (1e-12, 0.0),
    "glaciation": (0.0, 1e-12),
}
FIELDS = column._PER_LEVEL_OUT + column._PER_COLUMN_OUT


@pytest.fixture
def used(monkeypatch):
    """Count the calls that ran the compiled loops (the path must not fall back)."""
    calls = []
    real = _column_compiled.compiled_front

    def spy(*args):
        out = real(*args)
        calls.append(out is not None)
        return out

    monkeypatch.setattr(column, "compiled_front", spy)
    return calls


def _compare(cols, options=None, *, name=""):
    """Diagnose ``cols`` both ways and hold the compiled diagnosis to numpy's."""
    ref = diagnose_columns(**cols, options=options)
    got = diagnose_columns(**cols, options=options, compiled=True)
    for f in FIELDS:
        a, b = getattr(ref, f), getattr(got, f)
        where = f"{name}: {f}"
        assert a.dtype == b.dtype and a.shape == b.shape, where
        if a.dtype.kind != "f":
            assert np.array_equal(a, b), where
            continue
        nan = np.isnan(a)
        assert np.array_equal(nan, np.isnan(b)), where
        rtol, atol = TOLERANCE.get(f, (0.0, 0.0))
        if rtol == atol == 0.0:  # to the bit
            assert np.array_equal(a[~nan], b[~nan]), where
        else:
            np.testing.assert_allclose(b[~nan], a[~nan], rtol=rtol, atol=atol, err_msg=where)
    assert ref.warnings == got.warnings, name
    assert ref.assumptions == got.assumptions, name
    return ref


def test_the_loops_are_there_and_off_by_default(used):
    assert compiled_loops("icing.calc._column_loops") is not None
    diagnose_columns([90000.0, 85000.0], [268.0, 265.0], relative_humidity=[1.0, 1.0])
    assert used == []  # numpy unless asked for


def test_turned_off_or_not_transcribed_runs_numpy(used, columns, monkeypatch):
    cols = next(_canonical(columns))
    _compare(cols, ColumnOptions(ice_nuclei_model="fletcher62"), name="fletcher62")
    assert used == [False]
    monkeypatch.setattr(_column_compiled, "compiled_loops", lambda name: None)
    _compare(cols, name="no numba")
    assert used == [False, False]


def _canonical(columns):
    """The shared canonical columns, stacked by their number of levels."""
    c = columns
    yield c.stack(
        c.warm_nose_column(),
        c.cold_dry_column(),
        c.all_nan_column(),
        c.supercooled_stratiform_deck(),
        c.warm_topped_drizzle_deck(),
        c.deep_frontal_deck_with_ice(),
        c.thin_minus8_deck(),
    )
    yield c.stack(c.sld_warm_nose_column(), c.sld_warm_nose_column(cold_layer="deep"))
    yield c.stack(c.sld_drizzle_deck_column(), c.sld_drizzle_deck_column(ice_above_g_kg=0.5))


OPTIONS = {
    "default": ColumnOptions(),
    "water-saturation, no bridging": ColumnOptions(
        rh_threshold_model="water-saturation", bridge_single_level_gaps=False
    ),
    "continental, steps, chunks": ColumnOptions(
        air_mass="continental", moist_adiabat_step=0.05, chunk_columns=3
    ),
    "user air mass": ColumnOptions(air_mass={"c_per_cm3": 500.0, "k": 0.5, "shape": 4.0}),
}


@pytest.mark.parametrize("label", OPTIONS)
def test_canonical_columns(columns, used, label):
    for cols in _canonical(columns):
        _compare(cols, OPTIONS[label], name=label)
    assert used and all(used)


def _forecast_columns(path, **load):
    """Every column of a forecast file: all blocks of all times, or every profile."""
    from icing.forecast import load_forecast
    from icing.forecast.blocks import plan_blocks, read_block_columns

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fc = load_forecast(path, **load)
        if getattr(fc, "table", None) is not None:
            tab = fc.table
            cs = fc.columns_at(tab.lat, tab.lon, tab.time)
            yield cs.columns
            return
        src = fc.sources[0]
        times = range(len(fc.valid_times))
        for block in plan_blocks(src.y.size, src.x.size, list(times), columns=4000):
            yield read_block_columns(fc, block).columns


FIXTURES = [
    "fixtures/skerrow-latlon.nc",
    "fixtures/skerrow-lcc.nc",
    "fixtures/skerrow-profiles.csv",
    "icing/data/demo/skerrow-demo.nc",
]
REAL = [
    "GFS_test.nc",
    "gfs.t12z.pgrbf120.2p5deg.grib2",
    "nam.t00z.awp21100.tm00.grib2",
    "ecmwf_pl_regular_ll.grib",
    "wrf_d01_allvars_cropped.nc",
    ["IGRA2_USM00070026-data_2010-06.txt", "BOI_2010-12-09T12Z_wyoming.csv"],
]


@pytest.mark.parametrize("name", FIXTURES)
def test_fixtures_and_demo(name, used):
    import pathlib

    root = pathlib.Path(__file__).resolve().parents[1]
    for cols in _forecast_columns(root / name):
        _compare(cols, name=name)
    assert used and all(used)


@pytest.mark.parametrize("name", REAL, ids=lambda n: n if isinstance(n, str) else "soundings")
def test_real_files(name, real_data, used):
    paths = [real_data / n for n in name] if isinstance(name, list) else real_data / name
    diagnosed = 0
    for cols in _forecast_columns(paths):
        d = _compare(cols, name=str(name))
        diagnosed += int(d.cloud.sum())
    assert used and all(used)
    assert diagnosed > 0  # the files hold cloud: the loops' cloudy steps ran


def test_wyoming_text_soundings(real_data, used):
    """The Wyoming text lists (Boise, Norman) read with their sites, as the CLI does."""
    from icing.forecast.soundings import SoundingSite, read_sounding
    from icing.forecast.table import parse_time

    for name, lat, lon, elevation, time in (
        ("BOI_2010-12-09T12Z_wyoming_text.txt", 43.56, -116.21, 874.0, "2010-12-09T12:00Z"),
        ("OUN_2013-01-20T12Z_wyoming_text.txt", 35.18, -97.44, 345.0, "2013-01-20T12:00Z"),
    ):
        site = SoundingSite(lat, lon, elevation, parse_time(time))
        tab = read_sounding(real_data / name, site=site)
        cols = {k: v for k, v in tab.levels.items() if k not in ("wind_u", "wind_v")}
        cols.update({k: v for k, v in tab.scalars.items() if np.isfinite(v).any()})
        _compare(cols, name=name)
    assert used and all(used)


# ------------------------------------------------------------------ a generated sweep


def _sweep(seed, humidity, heights, order, n=240, levels=26):
    """Columns of our own: warm to below -40 C, decks, gaps, ground, optional fields.

    ``humidity``: ``relative_humidity``, ``dewpoint`` or ``specific_humidity``;
    ``heights``: ``given``, ``anchored`` (hypsometric from the surface) or ``standard``
    (hypsometric from the standard atmosphere); ``order``: ``ground-up``,
    ``top-down`` or ``mixed`` (half the columns each way).
    """
    from icing.calc import thermo

    rng = np.random.default_rng(seed)
    p = np.linspace(103000.0, 25000.0, levels)[None, :] * rng.uniform(0.97, 1.0, (n, 1))
    t_sfc = rng.uniform(-45.0, 32.0, (n, 1)) + T0  # very cold to warm
    z_std = thermo.standard_atmosphere_height(p)
    lapse = rng.uniform(0.003, 0.009, (n, 1))
    t = t_sfc - lapse * (z_std - z_std[:, :1])
    nose = rng.random((n, 1)) < 0.3  # warm noses aloft
    t = t + np.where(nose, 6.0 * np.exp(-(((z_std - z_std[:, :1] - 1200.0) / 400.0) ** 2)), 0)
    rh = rng.uniform(0.2, 0.8, (n, levels))
    for _ in range(3):  # saturated decks, some with one drier level inside
        lo = rng.integers(0, levels - 2, (n, 1))
        deep = rng.integers(1, 9, (n, 1))
        k = np.arange(levels)[None, :]
        rh = np.where((k >= lo) & (k < lo + deep), rng.uniform(0.9, 1.03, (n, levels)), rh)
    rh = np.where(rng.random((n, levels)) < 0.05, 0.85, rh)
    cols = {"pressure": p, "temperature": t}
    with np.errstate(all="ignore"):
        es = thermo.saturation_vapor_pressure(t)
        if humidity == "relative_humidity":
            cols[humidity] = rh
        elif humidity == "dewpoint":
            cols[humidity] = thermo.dewpoint_from_vapor_pressure(rh * es)
        else:
            cols[humidity] = thermo.specific_humidity_from_relative_humidity(p, t, rh)
    cloudy = rh > 0.95

    def field(scale, share, absent):
        v = np.where(cloudy & (rng.random((n, levels)) < share), rng.uniform(0, scale), 0.0)
        return np.where(rng.random((n, 1)) < absent, np.nan, v)  # absent in some columns

    cols["cloud_liquid"] = field(6e-4, 0.7, 0.2)
    cols["cloud_ice"] = field(3e-4, 0.5, 0.3)
    cols["snow"] = field(5e-4, 0.5, 0.3)
    cols["rain"] = field(5e-4, 0.3, 0.3)
    w = rng.normal(0.0, 0.3, (n, levels))
    w = np.where(rng.random((n, 1)) < 0.15, w + rng.uniform(1.0, 6.0, (n, 1)), w)  # convective
    cols["vertical_velocity"] = np.where(rng.random((n, 1)) < 0.3, np.nan, w)
    z_sfc = z_std[:, 0] + rng.uniform(-50.0, 900.0, n)  # some levels under the ground
    if heights == "given":
        cols["height"] = z_std
        cols["surface_height"] = z_sfc
    else:
        cols["surface_pressure"] = thermo.standard_atmosphere_pressure(z_sfc)
        if heights == "anchored":
            cols["surface_height"] = z_sfc
    cols["precipitation_rate_mm_h"] = np.where(rng.random(n) < 0.3, rng.uniform(0, 3, n), 0.0)
    for key in ("temperature", humidity):  # NaN in the middle and at the bottom
        a = cols[key]
        a[rng.random((n, levels)) < 0.02] = np.nan
        a[rng.random(n) < 0.05, 0] = np.nan
    cols["temperature"][rng.random(n) < 0.03] = np.nan  # all-invalid columns
    if order != "ground-up":
        flip = np.ones(n, bool) if order == "top-down" else rng.random(n) < 0.5
        for key, a in cols.items():
            if np.ndim(a) == 2:
                cols[key] = np.where(flip[:, None], np.broadcast_to(a, (n, levels))[:, ::-1], a)
    return cols


@pytest.mark.parametrize("order", ["ground-up", "top-down", "mixed"])
@pytest.mark.parametrize("heights", ["given", "anchored", "standard"])
@pytest.mark.parametrize("humidity", ["relative_humidity", "dewpoint", "specific_humidity"])
def test_generated_sweep(humidity, heights, order, used):
    seed = zlib.crc32(f"{humidity} {heights} {order}".encode())  # the same every run
    cols = _sweep(seed, humidity, heights, order)
    d = _compare(cols, name=f"{humidity} {heights} {order}")
    assert used and all(used)
    # the sweep reaches what it is meant to: cloud, liquid, convection, gaps, ground
    assert d.cloud.any() and (d.lwc_diagnosed > 0).any() and (d.basis == 1).any()
    assert (~d.valid & ~d.below_ground).any() and d.below_ground.any()
    assert (d.temperature < T0 - 40.0).any() and (d.temperature > T0 + 25.0).any()


def test_generated_sweep_with_cloud_fraction_and_options(used):
    cols = _sweep(11, "relative_humidity", "anchored", "mixed")
    rng = np.random.default_rng(12)
    cols["cloud_fraction"] = np.where(rng.random(cols["temperature"].shape) < 0.5, 0.05, 0.7)
    for label, options in OPTIONS.items():
        _compare(cols, options, name=label)
    assert used and all(used)
