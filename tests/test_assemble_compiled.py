"""The column assembly's compiled loops (icing.forecast._assemble_loops) against numpy.

No physics here: the specific humidity and the omega conversion as compiled loops must
give numpy's values to the bit (the same IEEE operations in the same order), NaN and
infinities included. The columns are the canonical invented ones of tests/conftest.py
with invented omega and gaps.
"""

from __future__ import annotations

import numpy as np
import pytest

from icing.calc import thermo
from icing.forecast.assemble import ColumnSpec, _loops, assemble_columns

pytestmark = pytest.mark.skipif(_loops() is None, reason="numba not installed")


def _bits(a):
    """The values' bits, every NaN as one pattern (a NaN's sign bit is no value: numpy's
    negation sets it, the compiled one keeps it)."""
    a = np.ascontiguousarray(a, dtype=float)
    return np.where(np.isnan(a), np.nan, a).view(np.int64)


@pytest.fixture
def values(every_canonical_column):
    base = every_canonical_column
    rng = np.random.default_rng(11)
    t = base["temperature"]
    rh = np.clip(base["relative_humidity"], 0.0, 1.0)
    es = thermo.saturation_vapor_pressure(t)
    omega = rng.normal(0.0, 0.5, t.shape)  # [Pa/s], invented
    omega[1, 3] = np.nan
    omega[2, 4] = np.inf
    rh = rh.copy()
    rh[3, 5] = np.nan
    return {
        "pressure": base["pressure"],
        "temperature": t,
        "vertical_velocity": omega,
        "surface_pressure": np.full(t.shape[0], 101000.0),
        "surface_height": np.full(t.shape[0], 100.0),
        "relative_humidity": rh,
        "dewpoint": thermo.dewpoint_from_vapor_pressure(rh * es),
        "specific_humidity": thermo.specific_humidity_from_relative_humidity(
            base["pressure"], t, rh, saturation=es
        ),
    }


@pytest.mark.parametrize("humidity", ["relative_humidity", "dewpoint", "specific_humidity"])
@pytest.mark.parametrize("heights", [True, False], ids=["heights", "hypsometric"])
def test_compiled_assembly_is_numpys_to_the_bit(values, humidity, heights):
    others = {"relative_humidity", "dewpoint", "specific_humidity"} - {humidity}
    vals = {k: v for k, v in values.items() if k not in others}
    n = vals["temperature"].shape[0]
    spec = ColumnSpec(
        levels=np.asarray(vals["pressure"][0]), vertical="pressure", humidity=humidity, omega=True
    )
    if heights:
        vals["height"] = assemble_columns(dict(vals), n, spec)["height"]
    got_c, got_n = {}, {}
    compiled = assemble_columns(dict(vals), n, spec, computed=got_c, compiled=True)
    reference = assemble_columns(dict(vals), n, spec, computed=got_n)
    assert compiled.keys() == reference.keys()
    for k in reference:
        np.testing.assert_array_equal(_bits(compiled[k]), _bits(reference[k]), err_msg=k)
    assert got_c.keys() == got_n.keys()
    for k in got_n:
        np.testing.assert_array_equal(_bits(got_c[k]), _bits(got_n[k]), err_msg=k)
    w = compiled["vertical_velocity"]
    assert np.isnan(w[1, 3]) and np.isinf(w[2, 4])  # a gap stays a gap, never 0
