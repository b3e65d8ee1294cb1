"""Block reads straight from the file (``GridForecast.read_block``) against xarray.

No physics here: a block read through netCDF4 (scaled in place, levels put surface
first by a slice or a take) must equal the same variable decoded by xarray, converted
with the field's own scale and offset and ordered surface first.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from icing.forecast import load_forecast
from icing.forecast.fields import FileField

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("name", ["skerrow-latlon.nc", "skerrow-lcc.nc"])
def test_a_block_read_is_the_file_decoded_by_xarray(name):
    path = ROOT / "fixtures" / name
    fc = load_forecast([path])
    src = fc.sources[0]
    ys, xs = slice(1, 5), slice(2, 9)
    checked = 0
    with xr.open_dataset(path) as ds:
        for key, fld in src.fields.items():
            if not isinstance(fld, FileField) or fld.raw.dims != tuple(ds[fld.raw.name].dims):
                continue
            raw = ds[fld.raw.name]
            sel = {fld.y_dim: ys, fld.x_dim: xs}
            if fld.time_dim:
                sel[fld.time_dim] = 0
            values = raw.isel(sel)
            if fld.level_dim:
                values = values.transpose(fld.level_dim, fld.y_dim, fld.x_dim)
            expected = np.asarray(values.values, dtype=float) * fld.scale + fld.offset
            if fld.levelled:
                expected = expected[fc._order]
            got = fc.read_block(key, 0, ys, xs)
            np.testing.assert_array_equal(got, expected, err_msg=key)
            checked += 1
    assert checked >= 5
