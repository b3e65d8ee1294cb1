"""``airframe_severity`` gives ``airframe_icing``'s severity and accretion rate, to the bit.

A grid's bands keep only the airframe's severity and accretion rate, so they compute
only what sets the two (the critical collectors and the reference, and of each only
the catch, the heat balance, the ice density and the severity rules). This is a check
of a code path, not of physics: both functions run on the same states of our own
making (a sweep over the inputs' ranges, every preset airframe) and must agree
exactly; the physics of the collector chain is checked in its own tests.
"""

from __future__ import annotations

import numpy as np
import pytest

from icing import codes
from icing.airframes import list_airframes, load_airframe
from icing.calc.airframe import airframe_icing, airframe_severity


def _states(n=4000, seed=11):
    """Broad states: cold to warm, dry to wet, cloud and SLD, gaps in every input."""
    rng = np.random.default_rng(seed)
    s = {
        "lwc": rng.choice([0.0, 5e-6, 1e-5, 2e-4, 8e-4, 2.5e-3], n) * rng.uniform(0.5, 1.5, n),
        "mvd": rng.uniform(5e-6, 60e-6, n),
        "temperature": rng.uniform(230.0, 276.0, n),
        "pressure": rng.uniform(3e4, 1.05e5, n),
        "spectrum_shape": rng.choice([0.0, 2.0, 5.0], n),
        "sld_lwc": np.where(rng.random(n) < 0.3, rng.uniform(0.0, 4e-4, n), 0.0),
        "sld_mvd": rng.uniform(1e-4, 2e-3, n),
        "sld_class": rng.integers(0, 3, n),
        "airspeed": rng.uniform(0.0, 250.0, n),
        "relative_humidity": rng.uniform(0.6, 1.1, n),
        "glaciation": np.where(rng.random(n) < 0.5, rng.random(n), np.nan),
        "model_glaciated": rng.random(n) < 0.2,
        "basis": rng.integers(0, 3, n),
    }
    for k in ("lwc", "mvd", "temperature", "pressure", "sld_lwc", "sld_mvd", "airspeed"):
        s[k] = np.where(rng.random(n) < 0.01, np.nan, s[k])  # a gap in each input in turn
    return s


@pytest.mark.parametrize("name", [a.name for a in list_airframes()])
def test_the_same_severity_and_rate_as_the_whole_chain(name):
    af = load_airframe(name)
    s = _states()
    full = airframe_icing(af, **s)
    sev, rate = airframe_severity(af, **s)
    assert np.array_equal(sev, full.severity)
    assert np.array_equal(rate, full.accretion_rate_mm_h, equal_nan=True)
    assert (sev == codes.GAP).any() and (sev >= codes.SEV_LIGHT).any()  # the sweep reaches both


def test_options_and_shapes_pass_through():
    af = load_airframe("twin-turboprop")
    kw = dict(lwc=[[3e-4, 0.0]], mvd=20e-6, temperature=263.15, pressure=8e4)
    for extra in ({}, {"model": "langmuir46", "n_bins": 5}, {"spectrum_method": "direct"},
                  {"recovery_factor": 0.9}):  # fmt: skip
        full = airframe_icing(af, **kw, **extra)
        sev, rate = airframe_severity(af, **kw, **extra)
        assert sev.shape == (1, 2) and np.array_equal(sev, full.severity)
        assert np.array_equal(rate, full.accretion_rate_mm_h)
    with pytest.raises(TypeError, match="unexpected keyword"):
        airframe_severity(af, **kw, speed=3.0)
