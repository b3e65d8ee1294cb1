"""The tile cache and the internal structure: shared safely between threads, lazy, SI.

The forecast is the invented Skerrow Basin scenario (fixtures/make_fixtures.py);
expectations are consequences of the reading rules (the same columns whichever
thread reads them), not check values.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np

from icing.forecast import load_forecast
from icing.forecast.tiles import TileCache

ROOT = Path(__file__).resolve().parents[1]
LATLON = ROOT / "fixtures" / "skerrow-latlon.nc"
T12 = np.datetime64("2027-01-14T12:00", "ms")


def _samples(seed, n=40):
    rng = np.random.default_rng(seed)
    return rng.uniform(54.0, 60.0, n), rng.uniform(-30.0, -18.0, n), np.full(n, T12)


def test_threads_sharing_one_forecast_get_the_serial_columns():
    fc = load_forecast(LATLON).with_tiling(tile=4)  # small tiles: many blocks, evictions
    serial = [load_forecast(LATLON).columns_at(*_samples(s)) for s in range(16)]
    with ThreadPoolExecutor(max_workers=8) as pool:
        threaded = list(pool.map(lambda s: fc.columns_at(*_samples(s)), range(16)))
    for a, b in zip(serial, threaded, strict=True):
        for key in a.columns:
            np.testing.assert_array_equal(a.columns[key], b.columns[key], err_msg=key)
    stats = fc.read_stats
    assert stats["reads"] > 0 and stats["cache_hits"] > 0


def test_cache_is_bounded_and_counts():
    cache = TileCache(max_bytes=3 * 8 * 100)
    for k in range(10):
        cache.get_or_read(k, lambda: np.zeros(100))
    assert cache.get_or_read(9, lambda: np.ones(100))[0] == 0.0  # kept: the latest
    assert cache.get_or_read(0, lambda: np.ones(100))[0] == 1.0  # evicted: read again
    stats = cache.stats()
    assert (stats.reads, stats.cache_hits, stats.values) == (11, 1, 1100)


def test_cached_blocks_cannot_be_changed_by_a_caller():
    cache = TileCache()
    block = cache.get_or_read("k", lambda: np.zeros(3))
    assert not block.flags.writeable


def test_internal_dataset_is_lazy_si_and_matches_the_columns():
    fc = load_forecast(LATLON)
    ds = fc.dataset
    assert ds["temperature"].dims == ("time", "level", "y", "x")
    assert ds["surface_height"].dims == ("y", "x")
    assert ds["level"].attrs["units"] == "Pa" and ds["level"].attrs["vertical"] == "pressure"
    assert ds["temperature"].attrs["units"] == "K"
    assert ds["temperature"].attrs["source_name"] == "t"
    assert ds["temperature"].attrs["found_by"] == "standard_name"
    col = ds["temperature"].sel(time=T12, y=57.0, x=-24.5).values  # reads one column
    cs = fc.columns_at([57.0], [-24.5], [T12])
    order = np.argsort(-ds["level"].values)  # surface first in the columns
    np.testing.assert_array_equal(col[order], cs.columns["temperature"][0])
    rh = ds["relative_humidity"].isel(time=0, level=[0, 3], y=slice(2, 5), x=[1, 4]).values
    assert rh.shape == (2, 3, 2) and np.nanmax(rh) <= 1.5  # a fraction, not percent


def test_threads_opening_reading_and_dropping_forecasts(real_data):
    # the HDF5 and ecCodes libraries of the wheels are not thread-safe: every call goes
    # through one lock per library, so a service may open, read and drop forecasts from
    # many threads at once (this crashed the process before the locks)
    import gc

    files = [LATLON, real_data / "nam.t00z.awp21100.tm00.grib2"]

    def work(seed):
        fc = load_forecast(files[seed % 2]).with_tiling(tile=4)
        rng = np.random.default_rng(seed)
        lat, lon = rng.uniform(55.0, 59.0, 20), rng.uniform(-28.0, -20.0, 20)
        if seed % 2:
            lat, lon = rng.uniform(30.0, 45.0, 20), rng.uniform(-110.0, -80.0, 20)
        cs = fc.columns_at(lat, lon, np.full(20, fc.valid_times[0]))
        del fc
        gc.collect()
        return bool(cs.covered.all())

    with ThreadPoolExecutor(max_workers=8) as pool:
        assert all(pool.map(work, range(8)))
