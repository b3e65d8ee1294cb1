"""The saturation vapour pressure computed while assembling columns, taken again by the
column diagnosis (``assemble_columns(computed=...)``, ``diagnose_columns(saturation=...)``).

No physics here: handing the pass over must change nothing, to the bit, in every field
of the diagnosis (numpy and compiled paths, levels in any order, in chunks), and in the
assembled columns. The columns are the canonical invented ones of tests/conftest.py.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from icing.calc import thermo
from icing.calc.column import ColumnOptions, diagnose_columns
from icing.forecast.assemble import ColumnSpec, assemble_columns


def _same(a, b):
    for f in dataclasses.fields(a):
        x, y = getattr(a, f.name), getattr(b, f.name)
        if isinstance(x, np.ndarray):
            nan = x.dtype.kind == "f"
            assert x.dtype == y.dtype and np.array_equal(x, y, equal_nan=nan), f.name
        else:
            assert x == y, f.name


@pytest.fixture
def stacked(every_canonical_column):
    return every_canonical_column


@pytest.mark.parametrize("compiled", [False, True], ids=["numpy", "compiled"])
@pytest.mark.parametrize("order", ["ground-up", "top-down", "mixed"])
def test_the_diagnosis_is_the_same_with_the_pass_handed_over(stacked, compiled, order):
    cols = dict(stacked)
    n_lev = cols["pressure"].shape[-1]
    perm = {
        "ground-up": np.arange(n_lev),
        "top-down": np.arange(n_lev)[::-1],
        "mixed": np.random.default_rng(2).permutation(n_lev),
    }[order]
    cols = {k: (v[..., perm] if np.ndim(v) == 2 else v) for k, v in cols.items()}
    es = thermo.saturation_vapor_pressure(cols["temperature"])
    opts = ColumnOptions(chunk_columns=3)  # several chunks
    own = diagnose_columns(**cols, options=opts, compiled=compiled)
    handed = diagnose_columns(**cols, saturation=es, options=opts, compiled=compiled)
    _same(own, handed)
    # and it is taken, not computed again: another saturation moves the cloud diagnosis
    other = diagnose_columns(**cols, saturation=1.5 * es, options=opts, compiled=compiled)
    assert not np.array_equal(other.lwc, own.lwc, equal_nan=True)


@pytest.mark.parametrize("humidity", ["relative_humidity", "dewpoint", "specific_humidity"])
@pytest.mark.parametrize("heights", [True, False], ids=["heights", "hypsometric"])
def test_assembling_hands_over_the_pass_it_made(stacked, humidity, heights):
    base = dict(stacked)
    t = base["temperature"]
    vals = {
        "pressure": base["pressure"],
        "temperature": t,
        "vertical_velocity": -0.3 * np.ones_like(t),  # omega [Pa/s], invented
        "surface_pressure": np.full(t.shape[0], 101000.0),
        "surface_height": np.full(t.shape[0], 100.0),
    }
    rh = np.clip(base["relative_humidity"], 0.0, 1.0)
    es = thermo.saturation_vapor_pressure(t)
    vals[humidity] = {
        "relative_humidity": rh,
        "dewpoint": thermo.dewpoint_from_vapor_pressure(rh * es),
        "specific_humidity": thermo.specific_humidity_from_relative_humidity(
            base["pressure"], t, rh
        ),
    }[humidity]
    spec = ColumnSpec(
        levels=np.asarray(base["pressure"][0]), vertical="pressure", humidity=humidity, omega=True
    )
    if heights:  # heights in the file: those the assembly would compute, given
        vals["height"] = assemble_columns(dict(vals), t.shape[0], spec)["height"]
    computed = {}
    with_out = assemble_columns(dict(vals), t.shape[0], spec, computed=computed)
    plain = assemble_columns(dict(vals), t.shape[0], spec)
    assert with_out.keys() == plain.keys()
    for k in plain:
        np.testing.assert_array_equal(with_out[k], plain[k], err_msg=k)
    if humidity == "specific_humidity":
        assert "saturation" not in computed  # nothing computed, nothing handed over
    else:
        np.testing.assert_array_equal(computed["saturation"], es)
