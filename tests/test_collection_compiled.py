"""The compiled collection-table lookup gives numpy's values to the bit.

Equivalence checks, not physics: ``collection._table_lookup`` and its compiled form
(:mod:`icing.calc._collection_loops`) on points inside, outside and on the edges of
the table, and the airframe's severity through either.
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("numba")

from icing.airframes import list_airframes  # noqa: E402
from icing.calc import collection  # noqa: E402
from icing.calc.airframe import airframe_severity  # noqa: E402


def _same(a, b):
    return all(
        np.asarray(x).tobytes() == np.asarray(y).tobytes() for x, y in zip(a, b, strict=True)
    )


@pytest.mark.parametrize("shape", [0.0, 2.0])
def test_lookup_equals_numpy_to_the_bit(shape):
    table = collection.collection_table("finstad88", shape, 7)
    rng = np.random.default_rng(11)
    lk = rng.uniform(-4.0, 7.0, 50_000)  # beyond both ends of the K grid
    lp = rng.uniform(-2.0, 8.0, 50_000)  # and of the phi nodes
    k_nodes = collection._grid(collection.TABLE_LOG_K)
    lk[:200] = np.resize(k_nodes, 200)  # on K nodes
    lp[200:400] = np.resize(collection.TABLE_LOG_PHI, 200)  # on phi nodes, the crowded ones too
    lp[400:402] = collection.TABLE_LOG_PHI[[0, -1]]
    want = collection._table_lookup(table, lk.copy(), lp.copy())
    got = collection._table_lookup(table, lk.copy(), lp.copy(), compiled=True)
    assert _same(want, got)


def test_severity_through_the_compiled_lookup_equals_numpy():
    rng = np.random.default_rng(12)
    n = 5000
    states = dict(
        lwc=rng.uniform(0.0, 1.5e-3, n),
        mvd=rng.uniform(8e-6, 45e-6, n),
        temperature=rng.uniform(240.0, 276.0, n),
        pressure=rng.uniform(4.5e4, 1.03e5, n),
        sld_lwc=np.where(rng.random(n) < 0.3, rng.uniform(2e-5, 4e-4, n), 0.0),
        sld_mvd=rng.uniform(60e-6, 2e-3, n),
        sld_class=rng.integers(0, 3, n),
        airspeed=rng.uniform(15.0, 170.0, n),
    )
    for af in list_airframes():
        assert _same(
            airframe_severity(af, **states), airframe_severity(af, **states, compiled=True)
        ), af.name
