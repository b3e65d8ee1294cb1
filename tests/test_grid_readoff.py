"""The read-off's level search, as a grid run uses it at every altitude of every column.

``icing.hazards.readoff._bracket`` finds the levels around each target with a binary
search over each column's sorted finite levels, or, where the levels lie on a binary
grid (heights read from float32 fields), with one search over exact integer keys of
all columns; the reference here counts the levels at or below each target by
comparing with every level (what the read-off did before, with (targets, levels)
temporaries). All must give the same levels for every input, ties, NaN and infinite
coordinates included: a regression check of the search, not of physics.
"""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from icing.hazards import readoff
from icing.hazards.readoff import _bracket, read_off


def _reference(zs, order, c, tz):
    nlev = zs.shape[1]
    col_z = zs[c]
    with np.errstate(invalid="ignore"):
        above = np.sum(col_z <= tz[..., None], axis=-1)
    lo = np.clip(above - 1, 0, nlev - 2) % nlev
    hi = (lo + 1) % nlev
    pick = np.take_along_axis
    return (
        lo,
        hi,
        pick(col_z, lo[..., None], -1)[..., 0],
        pick(col_z, hi[..., None], -1)[..., 0],
        col_z[..., 0],
        pick(order[c], lo[..., None], -1)[..., 0],
        pick(order[c], hi[..., None], -1)[..., 0],
    )


_VALUES = st.sampled_from([np.nan, np.inf, -np.inf, 0.0, 100.0, 100.0, 250.0, 1e4, -5.0])


def _draw_case(data, m, nlev, levels, targets):
    """Levels (m, nlev) sorted as the read-off sorts them, and up to 12 targets."""
    z = np.array(data.draw(st.lists(levels, min_size=m * nlev, max_size=m * nlev)), float)
    z = z.reshape(m, nlev)
    order = np.argsort(np.where(np.isfinite(z), z, np.inf), axis=-1)
    zs = np.take_along_axis(z, order, -1)
    k = data.draw(st.integers(1, 12))
    c = np.array(data.draw(st.lists(st.integers(0, m - 1), min_size=k, max_size=k)))
    tz = np.array(data.draw(st.lists(targets, min_size=k, max_size=k)), float)
    return zs, order, c, tz


def _assert_reference(zs, order, c, tz):
    want = _reference(zs, order, c, tz)
    for g, w in zip(_bracket(zs, order, c, tz), want, strict=True):
        assert np.array_equal(g, w, equal_nan=np.asarray(g).dtype.kind == "f")


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 6), st.integers(1, 9), st.data())
def test_bracket_is_the_comparison_count(m, nlev, data):
    floats = st.one_of(_VALUES, st.floats(-1e3, 2e4, allow_nan=False))
    _assert_reference(*_draw_case(data, m, nlev, floats, floats))


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 6), st.integers(1, 9), st.data())
def test_integer_key_search_is_the_comparison_count(m, nlev, data):
    # levels on the grid (float32 values, as a file's heights), targets anywhere
    f32 = st.floats(-1e3, 2e4, width=32).filter(lambda v: v == 0 or abs(v) >= 2**-10)
    grid = st.one_of(_VALUES, f32, st.sampled_from([0.5, 2.0**-10, float(np.float32(8191.999))]))
    floats = st.one_of(grid, st.floats(-1e3, 2e4, allow_nan=False))
    zs, order, c, tz = _draw_case(data, m, nlev, grid, floats)
    finite = np.isfinite(zs)
    keyed = readoff._count_on_grid(zs, finite, c, tz)
    assert keyed is not None  # every level drawn is on the grid
    nlev = zs.shape[1]
    searched = readoff._count_binary(zs, finite, finite.sum(axis=-1)[c], c * nlev, tz)
    assert np.array_equal(keyed, searched)
    _assert_reference(zs, order, c, tz)


def test_levels_off_the_grid_are_searched_one_by_one():
    zs = np.array([[0.1, 500.0, 1000.0]])  # 0.1 has no finite binary expansion
    finite = np.isfinite(zs)
    assert readoff._count_on_grid(zs, finite, np.zeros(1, int), np.array([0.1])) is None
    lo = _bracket(zs, np.arange(3)[None, :], np.zeros(2, int), np.array([0.1, 0.0999]))[0]
    assert lo.tolist() == [0, 0]


def test_fields_subset_gives_the_same_values():
    p = np.array([[100000.0, 90000.0, 80000.0, 70000.0]] * 3)
    t = np.array([[275.0, 268.0, 262.0, 255.0]] * 3)
    rh = np.array([[0.9, 1.0, 1.0, 0.5]] * 3)
    from icing.calc.column import diagnose_columns

    diag = diagnose_columns(p, t, relative_humidity=rh)
    targets = np.array([[0.0, 500.0, 1500.0, 2500.0, np.nan]] * 3)
    ci = np.broadcast_to(np.arange(3)[:, None], targets.shape)
    full = read_off(diag, ci, targets)
    part = read_off(diag, ci, targets, fields=("lwc", "sld_lwc"))
    assert set(part) == {"lwc", "sld_lwc", "cloud", "height", "valid", "below_ground"}
    for key, value in part.items():
        assert np.array_equal(value, full[key], equal_nan=value.dtype.kind == "f")
