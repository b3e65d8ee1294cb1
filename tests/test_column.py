"""Checks of the column diagnosis (icing.column.diagnose_columns)."""

from __future__ import annotations

import json

import numpy as np
import pytest
from common_columns import (
    all_nan_column,
    cold_dry_column,
    deep_frontal_deck_with_ice,
    stack,
    supercooled_stratiform_deck,
    thin_minus8_deck,
    warm_nose_column,
    warm_topped_drizzle_deck,
)

from icing import codes
from icing.column import ColumnOptions, diagnose_columns
from icing.errors import InputError

T0 = 273.15
ALL = (warm_nose_column, cold_dry_column, all_nan_column, supercooled_stratiform_deck,
       warm_topped_drizzle_deck, deep_frontal_deck_with_ice, thin_minus8_deck)


def test_shapes_level_n_and_nm():
    one = supercooled_stratiform_deck()
    d1 = diagnose_columns(**one)
    assert d1.lwc.shape == (40,) and d1.freezing_level.shape == ()
    two = stack(*(f() for f in ALL))
    d2 = diagnose_columns(**two)
    assert d2.lwc.shape == (len(ALL), 40) and d2.precip_type.shape == (len(ALL),)
    three = {k: np.broadcast_to(v, (2,) + v.shape) for k, v in two.items()}
    d3 = diagnose_columns(**three)
    assert d3.lwc.shape == (2, len(ALL), 40)
    # regression: the same column gives the same answer whatever the batch shape
    np.testing.assert_allclose(d2.lwc[3], d1.lwc, rtol=1e-12, equal_nan=True)
    np.testing.assert_allclose(d3.lwc[1], d2.lwc, rtol=1e-12, equal_nan=True)


def test_levels_in_either_order_outputs_in_input_order():
    col = supercooled_stratiform_deck()
    up = diagnose_columns(**col)
    down = diagnose_columns(**{k: v[::-1] for k, v in col.items()})
    np.testing.assert_allclose(down.lwc[::-1], up.lwc, rtol=1e-12, equal_nan=True)
    np.testing.assert_array_equal(down.cloud[::-1], up.cloud)
    np.testing.assert_array_equal(down.pressure, col["pressure"][::-1])


def test_nan_column_is_invalid_not_clear():
    d = diagnose_columns(**all_nan_column())
    assert not d.valid.any()
    assert np.isnan(d.lwc).all()  # unknown, never 0 ("no icing")
    assert np.isnan(d.freezing_level)


def test_nan_level_invalid_others_kept():
    col = supercooled_stratiform_deck()
    col["temperature"] = col["temperature"].copy()
    col["temperature"][20] = np.nan
    d = diagnose_columns(**col)
    assert not d.valid[20] and d.valid[:20].all() and d.valid[21:].all()
    assert np.isnan(d.lwc[20])
    assert np.isfinite(d.height).all()  # heights bridge the gap


def test_cold_dry_column_is_clear():
    d = diagnose_columns(**cold_dry_column())
    assert d.valid.all() and not d.cloud.any()
    assert np.nanmax(d.lwc) == 0.0


def test_options_describe_is_json_and_in_output():
    d = diagnose_columns(**supercooled_stratiform_deck())
    text = json.dumps(d.assumptions)
    assert "maritime" in text and d.assumptions == ColumnOptions().describe()


def test_no_humidity_is_a_clear_error():
    col = supercooled_stratiform_deck()
    with pytest.raises(InputError, match="humidity"):
        diagnose_columns(col["pressure"], col["temperature"])


def test_basis_codes_are_known():
    d = diagnose_columns(**stack(*(f() for f in ALL)))
    assert set(np.unique(d.basis)) <= {codes.BASIS_NONE, codes.BASIS_MODEL,
                                       codes.BASIS_DIAGNOSED}
