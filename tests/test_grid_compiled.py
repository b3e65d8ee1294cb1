"""The grid's compiled loops (numba) give the numpy reference's values, to the last bit.

``icing.hazards._compiled`` runs the read-off's level search and the band reduction as
loops where numba is installed; the numpy code stays the reference. Each check runs
both on the same input and holds every output equal to the last bit (NaN where NaN):
a regression check of code paths, not of physics.
Invented columns and random inputs (a scenario of our own), with ties, NaN and
infinite coordinates, missing levels and columns under the ground.
"""

from __future__ import annotations

import dataclasses
from types import SimpleNamespace

import numpy as np
import pytest

pytest.importorskip("numba")

from icing import codes  # noqa: E402
from icing.airframes import load_airframe  # noqa: E402
from icing.calc.column import diagnose_columns  # noqa: E402
from icing.hazards import _loops, bands, readoff  # noqa: E402
from icing.hazards._compiled import compiled_kernels  # noqa: E402


def _same(a, b, name=""):
    """Equal to the last bit; NaN where NaN (its sign bit aside, see below)."""
    a, b = np.asarray(a), np.asarray(b)
    assert a.dtype == b.dtype and a.shape == b.shape, name
    if a.dtype.kind == "f":
        # every bit of every number (the sign of zero included). A NaN made afresh by
        # inf - inf carries the processor's default sign in the loop and may not in
        # numpy's vector code: NaN is NaN in every output (missing), so only where the
        # NaNs are is compared.
        nan = np.isnan(a)
        assert np.array_equal(nan, np.isnan(b)), name
        assert np.array_equal(a[~nan].view(np.uint8), b[~nan].view(np.uint8)), name
    else:
        assert np.array_equal(a, b), name


def _numpy_only(monkeypatch):
    monkeypatch.setattr(readoff, "compiled_kernels", lambda: None)
    monkeypatch.setattr(bands, "compiled_kernels", lambda: None)


def test_the_loops_are_there():
    assert compiled_kernels() is _loops
    assert (
        _loops.COMPLETE,
        _loops.PARTIAL,
        _loops.GAP_COVERAGE,
        _loops.BELOW_GROUND,
    ) == (
        bands.COVERAGE_COMPLETE,
        bands.COVERAGE_PARTIAL,
        bands.COVERAGE_GAP,
        bands.COVERAGE_BELOW_GROUND,
    )


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("reference", ["msl", "pressure"])
def test_locate_compiled_is_the_numpy_search(seed, reference):
    rng = np.random.default_rng(seed)
    m, nlev = 7, int(rng.integers(1, 9))
    pool = np.array([np.nan, np.inf, -np.inf, 0.0, -0.0, 100.0, 100.0, 250.0, 1e4, -5.0])
    z = np.where(
        rng.random((m, nlev)) < 0.4, rng.choice(pool, (m, nlev)), rng.uniform(-50, 9e3, (m, nlev))
    )
    if seed % 2:
        z = (
            np.sort(np.abs(rng.uniform(0, 9e3, (m, nlev))), axis=1)
            .astype(np.float32)
            .astype(float)
        )
    with np.errstate(all="ignore"):
        diag = SimpleNamespace(height=z, pressure=np.exp(-z / 8000.0) * 1e5)
    ci = rng.integers(-1, m, (5, 40))
    tgt = np.where(
        rng.random(ci.shape) < 0.3, rng.choice(pool, ci.shape), rng.uniform(-400, 1e4, ci.shape)
    )
    tgt = np.concatenate([tgt, np.broadcast_to(z[:5, :1], (5, 1))], axis=1)  # exact ties
    ci = np.concatenate([ci, np.arange(5)[:, None]], axis=1)
    if reference == "pressure":
        with np.errstate(all="ignore"):
            tgt = np.exp(-tgt / 8000.0) * 1e5
    with np.errstate(all="ignore"):  # zero pressures from the infinite heights drawn
        want = readoff.locate(diag, ci, tgt, reference=reference)
        got = readoff.locate(diag, ci, tgt, reference=reference, compiled=True)
    assert set(got) == set(want)
    for key in want:
        if key == "shape":
            assert got[key] == want[key]
        else:
            _same(got[key], want[key], key)


@pytest.mark.parametrize("seed", range(8))
def test_reduce_compiled_is_the_numpy_reduction(seed):
    rng = np.random.default_rng(seed)
    m, nlev = 40, 9
    edges = np.array([0.0, 300.0, 600.0, 1200.0])
    levels = np.sort(rng.uniform(-100.0, 1500.0, (m, nlev)), axis=1)
    levels[rng.random(levels.shape) < 0.05] = np.nan
    levels[:3] = np.round(levels[:3] / 300.0) * 300.0  # levels on the edges: ties
    tgt = bands._targets(levels, edges)
    shape = tgt.shape
    known = rng.random(shape) < 0.7
    above = known | (rng.random(shape) < 0.5)
    above[:4] = rng.random((4, shape[1])) < 0.2  # mostly under the ground
    sev = np.where(known, rng.integers(0, 5, shape), codes.GAP).astype(np.int8)
    sld = np.where(known, rng.integers(0, 3, shape), codes.GAP)
    rate = np.where(rng.random(shape) < 0.5, 0.0, rng.choice([0.5, 1.0, 2.0, np.inf], shape))
    rate[rng.random(shape) < 0.1] = np.nan
    lwc = np.where(rng.random(shape) < 0.5, rng.choice([0.0, 2e-4, 5e-4, -np.inf], shape), np.nan)
    mvd = rng.uniform(5e-6, 40e-6, shape)
    args = (tgt, edges, known, above, sev, sld, rate, lwc, mvd)
    got = bands._reduce(*args)
    want = bands._reduce_numpy(*args)
    for f in dataclasses.fields(want):
        _same(getattr(got, f.name), getattr(want, f.name), f.name)


def _winter_columns(n=300, seed=11):
    """Columns with cloud, a warm nose, rain and snow; some under the ground."""
    rng = np.random.default_rng(seed)
    p = np.linspace(100000.0, 40000.0, 24)
    z = (44330.8 * (1.0 - (p / 101325.0) ** 0.190263)).astype(np.float32).astype(float)
    t = rng.uniform(262.0, 279.0, (n, 1)) - 0.0065 * z
    t = t + 5.0 * np.exp(-(((p - 80000.0) / 6000.0) ** 2)) * (rng.random((n, 1)) < 0.4)
    rh = np.where(rng.random((n, 24)) < 0.6, 1.0, 0.7)
    t[rng.random(t.shape) < 0.01] = np.nan
    ps = np.where(rng.random(n) < 0.3, rng.uniform(85000.0, 97000.0, n), 101300.0)
    return {
        "pressure": np.broadcast_to(p, (n, 24)).copy(),
        "temperature": t,
        "relative_humidity": rh,
        "height": np.broadcast_to(z, (n, 24)).copy(),
        "cloud_liquid": np.where(rh >= 1.0, rng.uniform(0.0, 4e-4, (n, 24)), 0.0),
        "rain": np.where(p > 75000.0, 1e-4, 0.0) * (rng.random((n, 1)) < 0.4),
        "snow": np.where(p <= 75000.0, 1e-4, 0.0) * np.ones((n, 1)),
        "precipitation_rate_mm_h": rng.uniform(0.0, 3.0, n),
        "surface_pressure": ps,
        "surface_height": 44330.8 * (1.0 - (ps / 101325.0) ** 0.190263),
    }


@pytest.mark.parametrize("fields", [None, ("lwc", "sld_lwc", "sld_class"), ("cloud",)])
def test_read_compiled_is_the_numpy_read(fields):
    cols = _winter_columns(n=60)
    diag = diagnose_columns(**cols)
    rng = np.random.default_rng(3)
    odd = rng.random(diag.lwc.shape) < 0.05  # NaN and infinite values at some levels
    diag = dataclasses.replace(
        diag,
        lwc=np.where(odd, rng.choice([np.nan, np.inf, -np.inf], diag.lwc.shape), diag.lwc),
        mvd=np.where(odd, np.inf, diag.mvd),
    )
    tgt = np.concatenate(
        [rng.uniform(-300.0, 9000.0, (60, 30)), diag.height[:, ::3], np.full((60, 1), np.nan)], 1
    )
    ci = np.broadcast_to(np.arange(60)[:, None], tgt.shape)
    located = readoff.locate(diag, ci, tgt, compiled=True)
    for at in (slice(None), np.nonzero(rng.random(tgt.shape) < 0.4)):
        part = readoff.subset(located, at)
        with np.errstate(all="ignore"):  # the infinite liquid drawn overflows the numpy read
            want = readoff.read_located(diag, part, fields=fields)
            got = readoff.read_located(diag, part, fields=fields, compiled=True)
        assert set(got) == set(want)
        for key in want:
            _same(got[key], want[key], key)


def test_band_products_compiled_are_the_numpy_products(monkeypatch):
    cols = _winter_columns()
    diag = diagnose_columns(**cols)
    airframe = load_airframe("twin-turboprop")
    edges = bands.parse_bands("0:20000:2000")
    got = bands.band_products(diag, airframe, edges, ground=cols["surface_height"], compiled=True)
    _numpy_only(monkeypatch)
    want = bands.band_products(diag, airframe, edges, ground=cols["surface_height"], compiled=True)
    assert np.any(got.severity > codes.SEV_NONE) and np.any(got.coverage == 3)
    for f in dataclasses.fields(want):
        _same(getattr(got, f.name), getattr(want, f.name), f.name)


def _hostile(diag, ground, case, rng):
    """The winter diagnosis with its heights, flags or liquid made awkward (``case``)."""
    z = diag.height.copy()
    edges = bands.parse_bands("0:20000:2000").edges_m
    if case == "nan-levels":
        z[rng.random(z.shape) < 0.1] = np.nan
        z[:5] = np.nan  # columns without a level
    elif case == "descending":
        z = z[:, ::-1].copy()
    elif case == "unsorted":
        z = rng.permuted(z, axis=1)
    elif case == "on-edges":
        z[:, :12] = edges[rng.integers(0, edges.size, (z.shape[0], 12))]  # ties of all kinds
        z.sort(axis=1)
    elif case == "infinite":
        z[:20, 0], z[20:40, -1] = -np.inf, np.inf
    elif case == "infinite-top":  # still ascending: the levels' own order is searched
        z[20:40, -1] = np.inf
    elif case == "one-band-between-levels":
        z = np.where(np.arange(z.shape[1]) % 2, z, z + 0.5)
    flags = {
        "valid": diag.valid & (rng.random(z.shape) < 0.93),
        "below_ground": diag.below_ground | (rng.random(z.shape) < 0.03),
        "lwc": np.where(rng.random(z.shape) < 0.03, np.nan, diag.lwc),
    }
    g = np.where(rng.random(ground.shape) < 0.1, np.nan, ground)
    g[:8] = 7000.0  # every band of these columns under the ground
    return dataclasses.replace(diag, height=z, **flags), g


@pytest.mark.parametrize(
    "case",
    [
        "plain",
        "nan-levels",
        "descending",
        "unsorted",
        "on-edges",
        "infinite",
        "infinite-top",
        "one-band-between-levels",
    ],
)
def test_band_products_compiled_on_awkward_columns(case, monkeypatch):
    cols = _winter_columns(n=120, seed=5)
    diag, ground = _hostile(
        diagnose_columns(**cols), cols["surface_height"], case, np.random.default_rng(1)
    )
    airframe = load_airframe("twin-turboprop")
    spec = "0:20000:2000" if case != "one-band-between-levels" else "3000,3100"
    edges = bands.parse_bands(spec)
    with np.errstate(all="ignore"):
        got = bands.band_products(diag, airframe, edges, ground=ground, compiled=True)
        _numpy_only(monkeypatch)
        want = bands.band_products(diag, airframe, edges, ground=ground, compiled=True)
    for f in dataclasses.fields(want):
        _same(getattr(got, f.name), getattr(want, f.name), f.name)
    if case == "plain":
        assert set(np.unique(want.coverage)) == {0, 1, 2, 3}  # every coverage met


@pytest.mark.parametrize(
    "case", ["plain", "nan-levels", "descending", "unsorted", "on-edges", "infinite-top"]
)
def test_band_state_targets_are_the_numpy_targets(case):
    cols = _winter_columns(n=60, seed=2)
    diag, ground = _hostile(
        diagnose_columns(**cols), cols["surface_height"], case, np.random.default_rng(4)
    )
    edges = bands.parse_bands("0:20000:2000").edges_m
    z = diag.height
    zs, order = readoff.sorted_levels(z)
    m, nlev = z.shape
    flat = [np.ascontiguousarray(getattr(diag, k)).reshape(-1) for k in ("valid", "below_ground")]
    liquid = [
        np.ascontiguousarray(getattr(diag, k), float).reshape(-1) for k in ("lwc", "sld_lwc")
    ]
    sld = np.ascontiguousarray(diag.sld_class, np.int8).reshape(-1)
    got = _loops.band_state(z, zs, order, edges, 300.0, ground, *flat, *liquid, sld)[0]
    _same(got, bands._targets(z, edges))


def _real_blocks(path):
    """Every block's columns of a real forecast file (4,000 columns a block)."""
    import warnings

    from icing.forecast import load_forecast
    from icing.forecast.blocks import plan_blocks, read_block_columns

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fc = load_forecast(path)
        src = fc.sources[0]
        for block in plan_blocks(src.y.size, src.x.size, list(range(len(fc.valid_times)))):
            yield read_block_columns(fc, block).columns


@pytest.mark.parametrize("name", ["GFS_test.nc", "wrf_d01_allvars_cropped.nc"])
def test_band_products_compiled_on_real_files(name, real_data, monkeypatch):
    """Real model output (tests/data/real, provenance in its README.md)."""
    airframe = load_airframe("twin-turboprop")
    edges = bands.parse_bands("0:30000:1000")
    results = []
    for cols in _real_blocks(real_data / name):
        diag = diagnose_columns(**cols)
        ground = cols.get("surface_height")
        results.append(
            (
                diag,
                ground,
                bands.band_products(diag, airframe, edges, ground=ground, compiled=True),
            )
        )
    _numpy_only(monkeypatch)
    for diag, ground, got in results:
        want = bands.band_products(diag, airframe, edges, ground=ground)
        for f in dataclasses.fields(want):
            _same(getattr(got, f.name), getattr(want, f.name), f.name)
    assert any(np.any(r[2].severity > codes.SEV_NONE) for r in results)


def test_a_large_grid_runs_the_loops_and_gives_the_same_grid(monkeypatch):
    from pathlib import Path

    from icing.runs import grid

    fixture = Path(__file__).resolve().parents[1] / "fixtures" / "skerrow-latlon.nc"
    options = grid.GridOptions(bands=bands.parse_bands("0:12000:3000"), workers=1)
    small = grid.grid_forecast(fixture, airframe="twin-turboprop", options=options)
    calls = []
    monkeypatch.setattr(grid, "_COMPILED_MIN_COLUMNS", 1)  # the fixture counts as large
    real = _loops.reduce_bands
    monkeypatch.setattr(_loops, "reduce_bands", lambda *a: calls.append(1) or real(*a))
    large = grid.grid_forecast(fixture, airframe="twin-turboprop", options=options)
    assert calls  # the loops ran
    for name in ("severity", "sld", "coverage"):
        _same(getattr(large, name), getattr(small, name), name)
    # the compiled column physics takes exp/pow from the C library, not numpy's: its
    # liquid and MVD may differ by a few ulp (tests/test_compiled_column.py), passed on
    for name in ("lwc", "mvd", "accretion_rate"):
        a, b = np.asarray(getattr(large, name)), np.asarray(getattr(small, name))
        assert np.array_equal(np.isnan(a), np.isnan(b)), name
        np.testing.assert_allclose(a, b, rtol=1e-11, atol=0.0, err_msg=name)
