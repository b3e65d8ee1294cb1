"""The compiled SLD diagnosis (numba) gives the numpy reference's diagnosis.

``icing.calc._sld_compiled`` runs :func:`icing.calc.sld.diagnose_sld` as one loop per
column where numba is installed and the caller asks (a grid run); the numpy function
stays the reference. These are regression checks of a code path, not of physics: each
runs both paths on the same columns and compares every field.

Tolerance: floats agree to a relative 1e-12 (NaN where NaN). The loops do the numpy
code's operations in the same order without fast-math, but numpy evaluates ``exp``,
``log`` and ``pow`` in its vectorised (SIMD) routines and the loops call the C
library's, which may differ by a few units in the last place (2.2e-16 each); the
drizzle growth (eight Runge-Kutta steps of ``pow``) and the sums of the Bourgouin
areas carry a handful of those, far under 1e-12 (the largest seen: 6e-15).
Classes, types and flags are compared exactly. A class could differ only where a value
compared with a threshold sits within that tolerance of it; of those values, only the
drizzle content is an output, so a class may differ only at a level whose reference
drizzle content lies within the tolerance of ``DRIZZLE_LWC_MIN`` (checked as such);
everywhere else classes must be identical.

The column steps before SLD stay on numpy here (their own loops are held to numpy in
``tests/test_compiled_column.py``), so that both paths give the SLD step the same
inputs and every difference is the SLD loops'.

Columns: the benchmark's invented winter columns (demo data) with and without gaps,
the fixtures' forecasts (a scenario of our own), the real files of ``tests/data/real``
(origins in its README.md) and a generated sweep of columns of our own: warm noses
aloft, warm-topped drizzle decks with and without ice aloft, model rain and snow given
or not, a precipitation rate or none, levels in either order, missing levels in the
middle and at the bottom, levels under the ground and columns without a usable level.
"""

from __future__ import annotations

import dataclasses
import importlib.util
import pathlib

import numpy as np
import pytest

from icing import codes
from icing.calc import _sld_compiled, bourgouin, sld
from icing.calc.column import diagnose_columns

REPO = pathlib.Path(__file__).resolve().parents[1]
REAL = REPO / "tests" / "data" / "real"
RTOL = 1e-12  # see the module docstring
_SLD_FIELDS = ("sld_class", "sld_lwc", "sld_mvd", "sld_dmax", "possible_drizzle", "precip_type")


@pytest.fixture(autouse=True)
def _column_steps_on_numpy(monkeypatch):
    """The steps before SLD on numpy: the SLD loops alone are compared (module docstring)."""
    from icing.calc import _column_compiled

    monkeypatch.setattr(_column_compiled, "compiled_loops", lambda name: None)


def _kernel():
    """The compiled loops, or skip (numba absent or turned off)."""
    pytest.importorskip("numba")
    if _sld_compiled.sld_kernel() is None:
        pytest.skip("compiled loops turned off (ICING_COMPILED=0)")


def _close(ref, got, name):
    """Floats within RTOL (NaN where NaN); everything else equal."""
    ref, got = np.asarray(ref), np.asarray(got)
    assert ref.dtype == got.dtype and ref.shape == got.shape, name
    if ref.dtype.kind != "f":
        assert np.array_equal(ref, got), name
        return
    nan = np.isnan(ref)
    assert np.array_equal(nan, np.isnan(got)), name
    np.testing.assert_allclose(got[~nan], ref[~nan], rtol=RTOL, atol=0.0, err_msg=name)


def _classes_agree(ref_cls, got_cls, ref_drizzle):
    """Classes equal, except within RTOL of the drizzle threshold (see the docstring)."""
    differ = ref_cls != got_cls
    with np.errstate(invalid="ignore"):
        near = np.abs(ref_drizzle - sld.DRIZZLE_LWC_MIN) <= RTOL * sld.DRIZZLE_LWC_MIN
    assert not np.any(differ & ~near), np.argwhere(differ & ~near)[:5]


def _same_diagnosis(ref, got):
    """Two SLDDiagnosis agree (classes through :func:`_classes_agree`)."""
    for f in dataclasses.fields(sld.SLDDiagnosis):
        if f.name != "sld_class":
            _close(getattr(ref, f.name), getattr(got, f.name), f.name)
    _classes_agree(ref.sld_class, got.sld_class, ref.drizzle_content)


def _same_columns(cols, **options):
    """diagnose_columns with and without the compiled loops: the same diagnosis."""
    ref = diagnose_columns(**cols, **options)
    got = diagnose_columns(**cols, **options, compiled=True)
    for f in dataclasses.fields(ref):
        if f.name not in ("sld_class", "warnings", "assumptions"):
            _close(getattr(ref, f.name), getattr(got, f.name), f.name)
    assert (ref.warnings, ref.assumptions) == (got.warnings, got.assumptions)
    # drizzle content is not a column output: classes must be identical here
    assert np.array_equal(ref.sld_class, got.sld_class)
    return ref


def _bench_columns(n, seed):
    """The invented winter columns of ``benchmarks/columns.py`` (demo data)."""
    spec = importlib.util.spec_from_file_location("_bench_columns", REPO / "benchmarks/columns.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.make_columns(n, seed=seed)


def test_without_the_loops_the_numpy_path_answers(monkeypatch):
    """No numba (or ICING_COMPILED=0): compiled=True is the numpy diagnosis, to the bit."""
    monkeypatch.setattr(_sld_compiled, "sld_kernel", lambda: None)
    cols = _bench_columns(300, 3)
    ref, got = diagnose_columns(**cols), diagnose_columns(**cols, compiled=True)
    for name in _SLD_FIELDS:
        np.testing.assert_array_equal(getattr(ref, name), getattr(got, name))
    assert _sld_compiled.diagnose_sld_compiled(
        [9e4], [270.0], [900.0], relative_humidity=[1.0], cloud=[False], lwc=[0.0],
        droplet_number=[np.nan], cloud_top_temperature=[np.nan], cloud_top_height=[np.nan],
        cloud_base_height=[np.nan],
    ) is None  # fmt: skip


def test_turned_off_by_the_environment(monkeypatch):
    monkeypatch.setenv("ICING_COMPILED", "0")
    _sld_compiled.sld_kernel.cache_clear()
    try:
        assert _sld_compiled.sld_kernel() is None
    finally:
        monkeypatch.delenv("ICING_COMPILED")
        _sld_compiled.sld_kernel.cache_clear()


def test_the_constants_are_the_numpy_modules():
    _kernel()
    c, ci = _sld_compiled.constants()
    loops = _sld_compiled.sld_kernel()
    assert c[loops.C_PA_SNOW] == bourgouin.PA_SNOW
    assert c[loops.C_LWC_MIN] == sld.DRIZZLE_LWC_MIN
    assert ci[loops.P_FZRA] == codes.PRECIP_TYPES.index("freezing-rain")
    assert ci[loops.I_GAP] == codes.GAP


def test_benchmark_columns_as_generated():
    _kernel()
    _same_columns(_bench_columns(1500, 7))


def test_benchmark_columns_with_gaps_hydrometeors_ground_top_down():
    _kernel()
    c = _bench_columns(1500, 7)
    rng = np.random.default_rng(8)
    d = {k: np.array(v) for k, v in c.items()}
    shape = d["temperature"].shape
    d["temperature"][rng.random(shape) < 0.01] = np.nan
    d["rain"] = np.where(rng.random(shape) < 0.2, rng.uniform(0, 5e-4, shape), 0.0)
    d["snow"] = np.where(rng.random(shape) < 0.2, rng.uniform(0, 5e-4, shape), 0.0)
    d["surface_pressure"] = rng.uniform(95000, 101000, shape[0])
    d = {k: (v[..., ::-1] if np.ndim(v) == 2 else v) for k, v in d.items()}
    ref = _same_columns(d)
    assert (ref.sld_class == codes.SLD_DRIZZLE).any() and (ref.sld_class == codes.GAP).any()


_COLUMN_KEYWORDS = {"precipitation_rate_mm_h", "surface_pressure", "surface_height"}


def _forecast_columns(paths):
    """The columns of a forecast as diagnose_columns takes them (all cells, first time)."""
    from icing.forecast import load_forecast
    from icing.forecast.blocks import plan_blocks, read_block_columns

    fc = load_forecast(paths)
    table = getattr(fc, "table", None)
    if table is not None:  # profiles (soundings, profile files)
        cols = {k: v for k, v in table.levels.items() if k not in ("wind_u", "wind_v")}
        return cols | {k: v for k, v in table.scalars.items() if k in _COLUMN_KEYWORDS}
    src = fc.sources[0]
    block = plan_blocks(src.y.size, src.x.size, [0], columns=src.y.size * src.x.size)[0]
    return read_block_columns(fc, block).columns


_FIXTURES = [
    ["fixtures/skerrow-latlon.nc"],
    ["fixtures/skerrow-lcc.nc"],
    ["fixtures/skerrow-profiles.csv"],
    ["icing/data/demo/skerrow-demo.nc"],
]
_REAL = [
    ["tests/data/real/gfs.t12z.pgrbf120.2p5deg.grib2"],
    ["tests/data/real/nam.t00z.awp21100.tm00.grib2"],
    ["tests/data/real/ecmwf_pl_regular_ll.grib"],
    ["tests/data/real/GFS_test.nc"],
    ["tests/data/real/wrf_d01_allvars_cropped.nc"],
    [
        "tests/data/real/IGRA2_USM00070026-data_2010-06.txt",
        "tests/data/real/BOI_2010-12-09T12Z_wyoming.csv",
    ],
]


@pytest.mark.filterwarnings("ignore")
@pytest.mark.parametrize("paths", _FIXTURES + _REAL, ids=lambda p: pathlib.Path(p[0]).name)
def test_forecasts_fixtures_and_real_files(paths):
    """The fixtures' (invented) and the real files' columns (origins: data/real/README.md)."""
    _kernel()
    _same_columns(_forecast_columns([str(REPO / p) for p in paths]))


def test_real_gfs_holds_freezing_rain_and_drizzle():
    """The real GFS winter case exercises both mechanisms (so the check above means it)."""
    _kernel()
    cols = _forecast_columns([str(REAL / "gfs.t12z.pgrbf120.2p5deg.grib2")])
    ref = diagnose_columns(**cols)
    assert (ref.sld_class == codes.SLD_RAIN).any() and (ref.sld_class == codes.SLD_DRIZZLE).any()


# --------------------------------------------------------------------------------------
# A generated sweep of columns of our own (invented, no check values)
# --------------------------------------------------------------------------------------


def _sweep(rng, m, n):
    """Columns ground-up: warm noses aloft, decks warm-topped or under ice, clear air."""
    z = np.cumsum(rng.uniform(80.0, 400.0, (m, n)), axis=1) + rng.uniform(-50, 1500, (m, 1))
    p = 101325.0 * np.exp(-z / 8000.0)
    t_sfc = 273.15 + rng.uniform(-10.0, 5.0, (m, 1))
    t = t_sfc - 6.5e-3 * (z - z[:, :1])
    nose_z = z[:, :1] + rng.uniform(300.0, 2200.0, (m, 1))
    nose = rng.uniform(0.0, 12.0, (m, 1)) * (rng.random((m, 1)) < 0.6)
    t = t + nose * np.exp(-(((z - nose_z) / rng.uniform(200, 900, (m, 1))) ** 2))
    base = rng.integers(0, n - 2, (m, 1))
    depth = rng.integers(1, 8, (m, 1))
    idx = np.arange(n)
    cloud = (idx >= base) & (idx < base + depth) & (rng.random((m, 1)) < 0.8)
    top = np.minimum(base + depth - 1, n - 1)
    cth = np.take_along_axis(z, top, 1) + 50.0
    cbh = np.take_along_axis(z, base, 1) - 50.0
    ctt = np.take_along_axis(t, top, 1)
    cloud2 = (idx >= n - 4) & (rng.random((m, 1)) < 0.3)  # ice cloud aloft, over some decks
    cloud = cloud | cloud2
    at = np.where(cloud2 & ~((idx >= base) & (idx < base + depth)), 1, 0)
    lay = {
        "cloud_top_temperature": np.where(cloud, np.where(at, t[:, -1:], ctt), np.nan),
        "cloud_top_height": np.where(cloud, np.where(at, z[:, -1:] + 50, cth), np.nan),
        "cloud_base_height": np.where(cloud, np.where(at, z[:, n - 4 : n - 3], cbh), np.nan),
    }
    lwc = np.where(cloud, rng.uniform(0.0, 8e-4, (m, n)), 0.0)
    number = np.where(cloud, rng.choice([20e6, 60e6, 100e6, 150e6, 400e6], (m, 1)), np.nan)
    rh = np.where(cloud, 1.0, rng.uniform(0.3, 1.05, (m, n)))
    rh[rng.random((m, n)) < 0.03] = np.nan
    return {"p": p, "t": t, "z": z, "cloud": cloud, "lwc": lwc, "number": number, "rh": rh, **lay}


def _hydrometeor(rng, shape, frac):
    values = rng.choice([0.0, 5e-7, 2e-6, 1e-5, 3e-4], shape)
    return np.where(rng.random(shape) < frac, values, 0.0)


def _spoil(rng, g, m, n):
    """Missing levels (middle, bottom), invalid levels, ground, unusable columns, order."""
    valid = rng.random((m, n)) > 0.03
    below = np.zeros((m, n), bool)
    ground = rng.random(m) < 0.15  # the lowest levels under the ground
    below[ground, :3] = True
    t = g["t"].copy()
    t[rng.random((m, n)) < 0.02] = np.nan  # missing in the middle
    t[rng.random(m) < 0.05, 0] = np.nan  # missing at the bottom
    z = g["z"].copy()
    z[rng.random((m, n)) < 0.01] = np.nan
    dead = rng.random(m) < 0.03  # no usable level at all
    valid[dead] = False
    return valid, below, t, z


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("model", ["none", "rain", "snow", "rain+snow+ice"])
@pytest.mark.parametrize("rate_given", [False, True])
def test_sweep_of_invented_columns(seed, model, rate_given):
    _kernel()
    rng = np.random.default_rng([seed, len(model), rate_given])
    m, n = 300, 24
    g = _sweep(rng, m, n)
    valid, below, t, z = _spoil(rng, g, m, n)
    kw = {
        "relative_humidity": g["rh"],
        "cloud": g["cloud"],
        "lwc": g["lwc"],
        "droplet_number": g["number"],
        "cloud_top_temperature": g["cloud_top_temperature"],
        "cloud_top_height": g["cloud_top_height"],
        "cloud_base_height": g["cloud_base_height"],
        "valid": valid,
        "below_ground": below,
        "drizzle_time_scale_s": float(rng.choice([1800.0, 3600.0])),
    }
    if rate_given:
        kw["precipitation_rate_mm_h"] = rng.choice([np.nan, 0.0, 0.005, 0.5, 3.0, 150.0], m)
    if "rain" in model:
        kw["rain"] = _hydrometeor(rng, (m, n), 0.4)
    if "snow" in model:
        kw["snow"] = _hydrometeor(rng, (m, n), 0.4)
    if "ice" in model:
        kw["cloud_ice"] = _hydrometeor(rng, (m, n), 0.3)
        kw["hydrometeors_given"] = rng.random(m) < 0.7
        kw["ice_saturation"] = np.where(t < 273.15, rng.uniform(0.7, 1.0, (m, n)), 1.0)
    p = g["p"]
    # levels in either order: some columns reversed, some shuffled
    order = np.broadcast_to(np.arange(n), (m, n)).copy()
    order[: m // 3] = order[: m // 3, ::-1]
    for r in range(m // 3, m // 2):
        order[r] = rng.permutation(n)
    args = [np.take_along_axis(x, order, 1) for x in (p, t, z)]
    kw = {k: (np.take_along_axis(v, order, 1) if np.ndim(v) == 2 else v) for k, v in kw.items()}
    ref = sld.diagnose_sld(*args, **kw)
    got = _sld_compiled.diagnose_sld_compiled(*args, **kw)
    _same_diagnosis(ref, got)
    kinds = set(np.unique(ref.sld_class).tolist())
    assert {codes.GAP, codes.SLD_NONE} <= kinds  # the sweep reaches gaps and clear levels


def test_sweep_reaches_every_class_and_type():
    """The sweep as a whole: freezing rain, freezing drizzle, pellets, possible drizzle."""
    _kernel()
    rng = np.random.default_rng(11)
    m, n = 3000, 24
    g = _sweep(rng, m, n)
    kw = dict(
        relative_humidity=g["rh"], cloud=g["cloud"], lwc=g["lwc"], droplet_number=g["number"],
        cloud_top_temperature=g["cloud_top_temperature"], cloud_top_height=g["cloud_top_height"],
        cloud_base_height=g["cloud_base_height"], precipitation_rate_mm_h=rng.choice(
            [np.nan, 0.0, 1.0], m), rain=_hydrometeor(rng, (m, n), 0.05),
    )  # fmt: skip
    ref = sld.diagnose_sld(g["p"], g["t"], g["z"], **kw)
    _same_diagnosis(ref, _sld_compiled.diagnose_sld_compiled(g["p"], g["t"], g["z"], **kw))
    assert {codes.SLD_RAIN, codes.SLD_DRIZZLE} <= set(np.unique(ref.sld_class).tolist())
    types = {codes.PRECIP_TYPES[i] for i in np.unique(ref.precip_type)}
    assert {"freezing-rain", "ice-pellets", "snow", "rain"} <= types, types
    assert ref.possible_drizzle.any()


def test_shapes_and_broadcasting_as_the_reference():
    """One column (level,), columns (y, x, level), a scalar rate: the reference's shapes."""
    _kernel()
    rng = np.random.default_rng(5)
    g = _sweep(rng, 12, 10)
    kw = {k: g[k].reshape(3, 4, 10) for k in ("cloud_top_temperature", "cloud_top_height",
                                                "cloud_base_height")}  # fmt: skip
    args = [g[k].reshape(3, 4, 10) for k in ("p", "t", "z")]
    kw.update(relative_humidity=g["rh"].reshape(3, 4, 10), cloud=g["cloud"].reshape(3, 4, 10),
              lwc=g["lwc"].reshape(3, 4, 10), droplet_number=g["number"].reshape(3, 4, 10),
              precipitation_rate_mm_h=2.0)  # fmt: skip
    _same_diagnosis(
        sld.diagnose_sld(*args, **kw), _sld_compiled.diagnose_sld_compiled(*args, **kw)
    )
    one = {k: (v[0, 0] if np.ndim(v) == 3 else v) for k, v in kw.items()}
    a1 = [a[0, 0] for a in args]
    _same_diagnosis(sld.diagnose_sld(*a1, **one), _sld_compiled.diagnose_sld_compiled(*a1, **one))


def test_a_large_grid_asks_for_the_loops_and_screening_does_not(monkeypatch):
    """The grid passes its ``compiled`` down; diagnose_columns keeps numpy by default."""
    _kernel()
    from icing.calc import _sld_loops
    from icing.hazards.bands import parse_bands
    from icing.runs import grid

    calls = []
    real = _sld_loops.diagnose_block
    monkeypatch.setattr(_sld_loops, "diagnose_block", lambda *a: calls.append(1) or real(*a))
    diagnose_columns(**_bench_columns(50, 1))
    assert not calls  # screen and profile: the numpy path
    fixture = REPO / "fixtures" / "skerrow-latlon.nc"
    options = grid.GridOptions(bands=parse_bands("0:12000:3000"), workers=1)
    monkeypatch.setattr(grid, "_COMPILED_MIN_COLUMNS", 1)  # the fixture counts as large
    grid.grid_forecast(fixture, airframe="twin-turboprop", options=options)
    assert calls
