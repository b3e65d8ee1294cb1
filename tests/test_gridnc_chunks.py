"""The grid NetCDF's product chunks, encoded on several threads (icing.outputs.gridnc).

No physics here: the file written through h5py's direct chunk writes must hold the
same data, filters and chunks as the file netCDF writes itself, and be read back by
netCDF4, xarray and h5py alike.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from icing.hazards.bands import parse_bands
from icing.outputs import gridnc
from icing.outputs.gridnc import write_grid_netcdf
from icing.runs.grid import GridOptions, grid_forecast

ROOT = Path(__file__).resolve().parents[1]
LCC = ROOT / "fixtures" / "skerrow-lcc.nc"
PRODUCTS = ("severity", "sld", "coverage", "lwc", "mvd", "accretion_rate")


@pytest.fixture(scope="module")
def result():
    opts = GridOptions(bands=parse_bands("0:20000:4000"), workers=1)
    return grid_forecast(LCC, airframe="twin-turboprop", options=opts)


def _read(path):
    import netCDF4

    with netCDF4.Dataset(path) as nc:
        nc.set_auto_mask(False)
        return {
            n: (nc[n][:], nc[n].filters(), nc[n].chunking(), nc[n].dtype, nc[n].ncattrs())
            for n in PRODUCTS
        }


def test_direct_chunks_hold_what_netcdf_writes(result, tmp_path, monkeypatch):
    fast = write_grid_netcdf(result, tmp_path / "fast.nc")
    monkeypatch.setattr(gridnc, "_chunk_encoders", lambda path, arrays: {})
    slow = write_grid_netcdf(result, tmp_path / "slow.nc")
    a, b = _read(fast), _read(slow)
    for n in PRODUCTS:
        np.testing.assert_array_equal(a[n][0], b[n][0], err_msg=n)  # NaN where NaN
        assert a[n][1:] == b[n][1:], n
        assert a[n][1]["zlib"] and a[n][1]["shuffle"], n
    for n in PRODUCTS:  # not a file of fill values: every band has data somewhere
        assert np.isfinite(np.asarray(a[n][0], float)).any(), n


def test_every_reader_sees_the_same_values(result, tmp_path):
    import h5py
    import xarray as xr

    path = write_grid_netcdf(result, tmp_path / "g.nc")
    with xr.open_dataset(path, mask_and_scale=False) as ds, h5py.File(path, "r") as f:
        for n in PRODUCTS:
            expected = np.asarray(getattr(result, n))
            np.testing.assert_array_equal(ds[n].values, expected, err_msg=n)
            np.testing.assert_array_equal(f[n][...], expected, err_msg=n)


def test_the_encoding_is_that_of_hdf5s_filters(tmp_path):
    """A chunk encoded here decodes (zlib, then the byte planes put back) to the values."""
    import zlib

    values = np.linspace(-1.0, 1.0, 12, dtype=np.float32).reshape(3, 4)
    values[1, 2] = np.nan
    encode = gridnc._encoder([(2, 1, (4,)), (1, 1, (1,))], np.dtype(np.float32))
    planes = np.frombuffer(zlib.decompress(encode(values)), np.uint8).reshape(4, -1)
    back = np.ascontiguousarray(planes.T).view(np.float32).reshape(3, 4)
    np.testing.assert_array_equal(back, values)
    assert gridnc._encoder([(1, 1, (1,))], np.dtype(np.int8)) is not None
    # other pipelines (fletcher32, szip, another shuffle size) go through netCDF
    assert gridnc._encoder([(2, 1, (4,)), (1, 1, (1,)), (3, 1, ())], np.dtype("f4")) is None
    assert gridnc._encoder([(4, 1, (1, 2))], np.dtype("f4")) is None
    assert gridnc._encoder([(2, 1, (2,)), (1, 1, (1,))], np.dtype("f4")) is None


def test_without_h5py_netcdf_writes_the_slices(result, tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "h5py", None)  # import h5py fails
    path = write_grid_netcdf(result, tmp_path / "g.nc")
    got = _read(path)
    np.testing.assert_array_equal(got["lwc"][0], np.asarray(result.lwc))
    np.testing.assert_array_equal(got["severity"][0], np.asarray(result.severity))
