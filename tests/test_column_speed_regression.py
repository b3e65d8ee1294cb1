"""The column diagnosis's fast paths give the results of the general ones, bit for bit.

``diagnose_columns`` and ``diagnose_sld`` skip work where the input allows it
(levels already ordered, every level usable, large outputs mapped in small pages,
Appendix C checks only near the envelopes, ice saturation computed once). These
checks run the same columns through the fast and the general paths and compare,
and compare the outputs on the benchmark's invented columns with a digest recorded
before the fast paths were written (regression values, computed by this code).
"""

from __future__ import annotations

import importlib.util
import pathlib

import numpy as np
import pytest

from icing.calc import clouds, column, sld, thermo
from icing.calc.column import ColumnOptions, diagnose_columns

_BENCH = pathlib.Path(__file__).resolve().parents[1] / "benchmarks" / "columns.py"


def _make_columns(n, seed):
    """The invented winter columns of ``benchmarks/columns.py`` (demo data)."""
    spec = importlib.util.spec_from_file_location("_bench_columns", _BENCH)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.make_columns(n, seed=seed)


def _variants():
    """The benchmark's columns as generated, and with gaps, hydrometeors and ground."""
    c = _make_columns(2000, 7)
    yield "bench", c, {}
    rng = np.random.default_rng(8)
    d = {k: np.array(v) for k, v in c.items()}
    d["temperature"][rng.random(d["temperature"].shape) < 0.01] = np.nan
    d["rain"] = np.where(rng.random((2000, 40)) < 0.2, rng.uniform(0, 5e-4, (2000, 40)), 0.0)
    d["snow"] = np.where(rng.random((2000, 40)) < 0.2, rng.uniform(0, 5e-4, (2000, 40)), 0.0)
    d["surface_pressure"] = rng.uniform(95000, 101000, 2000)
    d = {k: (v[..., ::-1] if np.ndim(v) == 2 else v) for k, v in d.items()}
    yield "gaps_top_down", d, {"chunk_columns": 700}


#: Per field: (NaN count, level-weighted NaN-sum) for floats, (weighted sum,) for codes
#: and masks, and the number of warnings. Regression: computed by this code before the
#: fast paths existed (numpy 2.4, MetPy's saturation law, x86-64 libm).
_DIGEST = {
    # re-recorded when the physics changed on purpose, each time for a stated reason:
    # a cloud layer resting on a missing level became a coverage gap; the adiabatic
    # liquid now starts at the condensation level of the base air (less liquid near
    # bases), convective layers keep a sub-adiabatic floor, drizzle grows by
    # autoconversion and accretion (drizzle in the invented columns), and the
    # model-glaciated and possible-drizzle fields were added; the parcel is carried up a
    # cloud level by level instead of integrated from the base for every level
    # (thermo.moist_adiabat_chain: shorter RK4 steps), which moved the liquid sums and
    # what follows them (MVD, glaciation, drizzle) by 1e-7 to 2e-6 relative, no count
    "bench": {
        "pressure": (0, 7256666666.666666),
        "height": (0, 507478886.4612601),
        "temperature": (0, 29559266.145045012),
        "relative_humidity": (0, 76060.52100646737),
        "valid": (1640000,),
        "below_ground": (0,),
        "cloud": (308701,),
        "cloud_base_height": (63235, 66825788.79573284),
        "cloud_top_height": (63235, 103163778.79410271),
        "cloud_top_temperature": (63235, 5982650.411740532),
        "lwc": (0, 5.032530013060219),
        "lwc_model": (0, 2.9271026081483904),
        "lwc_diagnosed": (0, 4.097217462815657),
        "basis": (401267,),
        "glaciation": (63235, 10550.186115211938),
        "model_glaciated": (0,),
        "droplet_number": (64991, 2665470351816.959),
        "mvd": (65092, 0.34955055917352434),
        "spectrum_shape": (64991, 236976.255),
        "sld_class": (23846,),
        "sld_lwc": (0, 0.5038659538804204),
        "sld_mvd": (77816, 0.3831036857771301),
        "sld_dmax": (77816, 1.362775),
        "possible_drizzle": (372,),
        "precip_type": (3462,),
        "freezing_level": (821, 1553619.6801182607),
        "warnings": 1,
    },
    "gaps_top_down": {
        "pressure": (0, 8213333333.333333),
        "height": (0, 392572132.20736897),
        "temperature": (769, 30015428.20019323),
        "relative_humidity": (0, 76933.95163610307),
        "valid": (1610167,),
        "below_ground": (124347,),
        "cloud": (362649,),
        "cloud_base_height": (63713, 58828407.89250507),
        "cloud_top_height": (63713, 92905010.31976235),
        "cloud_top_temperature": (63713, 6294217.209162924),
        "lwc": (4538, 5.467216351717413),
        "lwc_model": (4538, 3.205287640479834),
        "lwc_diagnosed": (3984, 4.524921867228247),
        "basis": (523172,),
        "glaciation": (64219, 20954.53096855036),
        "model_glaciated": (229431,),
        "droplet_number": (65450, 2898855414990.5625),
        "mvd": (66105, 0.3709691083850898),
        "spectrum_shape": (65450, 258063.75000000003),
        "sld_class": (238899,),
        "sld_lwc": (1381, 4.501475228152289),
        "sld_mvd": (65809, 2.8845716504654546),
        "sld_dmax": (65809, 10.2609875),
        "possible_drizzle": (625,),
        "precip_type": (3697,),
        "freezing_level": (979, 1478759.499597272),
        "warnings": 1,
    },
}


@pytest.mark.parametrize("name", ["bench", "gaps_top_down"])
def test_outputs_match_the_digest_recorded_before_the_fast_paths(name):
    cols, opts = next((c, o) for n, c, o in _variants() if n == name)
    d = diagnose_columns(**cols, options=ColumnOptions(**opts))
    expected = _DIGEST[name]
    assert len(d.warnings) == expected["warnings"]
    w = 1.0 + np.arange(40) / 40.0
    for field, want in expected.items():
        if field == "warnings":
            continue
        v = np.asarray(getattr(d, field))
        # The digest was recorded on one machine. Another CPU's libm (SIMD exp/log) may
        # differ in the last bit and flip a threshold at a handful of the 80,000 levels, so
        # counts may move by 1e-4 and sums by 1e-6 relative; the fast-path checks below
        # compare bit for bit on the machine that runs them.
        if v.dtype.kind == "f":
            ww = w if v.ndim == 2 else 1.0
            assert int(np.isnan(v).sum()) == pytest.approx(want[0], rel=1e-4, abs=2), field
            assert float(np.nansum(v * ww)) == pytest.approx(want[1], rel=1e-6, abs=1e-300), field
        else:
            ww = np.arange(1, 41) if v.ndim == 2 else 1
            got = int(np.sum(v.astype(np.int64) * ww))
            assert got == pytest.approx(want[0], rel=1e-4, abs=40), field


def _assert_same(a, b):
    for f in column._PER_LEVEL_OUT + column._PER_COLUMN_OUT:
        x, y = getattr(a, f), getattr(b, f)
        assert x.dtype == y.dtype and x.shape == y.shape, f
        np.testing.assert_array_equal(x, y, err_msg=f)  # NaN-equal, bit for bit
    assert a.warnings == b.warnings


def test_mapped_multi_chunk_outputs_equal_one_chunk(monkeypatch):
    cols = _make_columns(1500, 3)
    one = diagnose_columns(**cols)
    monkeypatch.setattr(column, "_SMALL_PAGE_OUTPUT_BYTES", 0)  # map every output
    many = diagnose_columns(**cols, options=ColumnOptions(chunk_columns=400))
    _assert_same(one, many)
    assert many.lwc.flags.writeable and not np.shares_memory(many.pressure, cols["pressure"])
    many.lwc[0, 0] = 1.0  # an ordinary writeable array


def test_all_usable_shortcuts_equal_the_masked_path():
    cols = _make_columns(300, 4)
    alone = diagnose_columns(**cols)
    # one unusable level in an extra column sends the whole call down the masked path
    extra = {k: np.concatenate([v, v[:1]]) for k, v in cols.items()}
    extra["temperature"][-1, 5] = np.nan
    masked = diagnose_columns(**extra)
    for f in column._PER_LEVEL_OUT + column._PER_COLUMN_OUT:
        np.testing.assert_array_equal(getattr(masked, f)[:-1], getattr(alone, f), err_msg=f)


@pytest.mark.parametrize("make_name", ["sld_warm_nose_column", "sld_drizzle_deck_column"])
def test_sld_presorted_levels_equal_the_sorted_path(make_name, columns):
    make = getattr(columns, make_name)
    cols = columns.stack(make(), make(), make())
    cols["precipitation_rate_mm_h"] = np.array([1.0, 0.0, 1.0])
    d = diagnose_columns(**cols)
    args = dict(
        relative_humidity=d.relative_humidity,
        cloud=d.cloud,
        lwc=np.nan_to_num(d.lwc),
        droplet_number=d.droplet_number,
        cloud_top_temperature=d.cloud_top_temperature,
        cloud_top_height=d.cloud_top_height,
        cloud_base_height=d.cloud_base_height,
        precipitation_rate_mm_h=cols["precipitation_rate_mm_h"],
    )
    ordered = sld.diagnose_sld(d.pressure, d.temperature, d.height, **args)
    assert (ordered.sld_class > 0).any()  # the mechanism is exercised
    perm = np.random.default_rng(0).permutation(d.pressure.shape[-1])
    shuffled = sld.diagnose_sld(
        d.pressure[:, perm],
        d.temperature[:, perm],
        d.height[:, perm],
        **{k: (v[:, perm] if np.ndim(v) == 2 else v) for k, v in args.items()},
    )
    for f in ("sld_class", "sld_lwc", "sld_mvd", "sld_dmax", "drizzle_content"):
        np.testing.assert_array_equal(getattr(shuffled, f), getattr(ordered, f)[:, perm])
    for f in ("precip_type", "melting_area", "refreezing_area", "complete"):
        np.testing.assert_array_equal(getattr(shuffled, f), getattr(ordered, f))


def test_appendix_c_prefilter_equals_every_level():
    rng = np.random.default_rng(2)
    lwc = rng.uniform(0.0, 3e-3, 5000)
    lwc[::50] = np.nan
    t = rng.uniform(230.0, 280.0, 5000)
    conv = rng.random(5000) < 0.3
    got = clouds.appendix_c_exceedances(lwc, t, convective=conv)
    with np.errstate(invalid="ignore"):
        for name, env, mask in (
            ("continuous maximum", clouds.APPENDIX_C_CONTINUOUS_MAX, ~conv),
            ("intermittent maximum", clouds.APPENDIX_C_INTERMITTENT_MAX, np.ones_like(conv)),
        ):
            over = mask & (lwc > clouds.appendix_c_limit(t, env))
            assert got[name] == (int(over.sum()), float(lwc[over].max()))


def test_given_ice_saturation_changes_nothing():
    rng = np.random.default_rng(3)
    t = rng.uniform(230.0, 285.0, (50, 40))
    rh = rng.uniform(0.6, 1.05, (50, 40))
    f_i = thermo.ice_saturation_relative_humidity(t)
    mask = clouds.cloud_mask(rh, t)
    np.testing.assert_array_equal(clouds.cloud_mask(rh, t, ice_saturation=f_i), mask)
    np.testing.assert_array_equal(
        clouds.bridge_single_level_gaps(mask, rh, t, ice_saturation=f_i),
        clouds.bridge_single_level_gaps(mask, rh, t),
    )


def _mixed_columns(n=1200, seed=11):
    """The benchmark's columns, half of them dried out, with gaps, ground and rain (invented)."""
    rng = np.random.default_rng(seed)
    c = {k: np.array(v) for k, v in _make_columns(n, seed).items()}
    dry = rng.random(n) < 0.5
    c["relative_humidity"][dry] = np.minimum(c["relative_humidity"][dry], 0.5)
    c["cloud_liquid"][dry] = 0.0
    c["temperature"][rng.random(c["temperature"].shape) < 0.005] = np.nan
    c["surface_pressure"] = rng.uniform(94000, 101500, n)
    wet = rng.random(n) < 0.2
    c["rain"] = np.where(wet[:, None] & (rng.random((n, 40)) < 0.3), 2e-4, 0.0)
    c["snow"] = np.where(rng.random((n, 40)) < 0.02, 2e-4, 0.0)
    c["precipitation_rate_mm_h"] = np.where(rng.random(n) < 0.1, 1.5, 0.0)
    c["precipitation_rate_mm_h"][::97] = np.nan
    return c


@pytest.mark.parametrize("case", ["mixed", "bench", "gaps_top_down"])
def test_sld_of_quiet_columns_equals_diagnosing_every_column(case, monkeypatch):
    """Columns without cloud, hydrometeors or precipitation skip the SLD diagnosis.

    They must get exactly what diagnosing them would give (bit for bit): the skip is a
    shortcut, not a model.
    """
    from icing.calc import _column_sld

    cols = _mixed_columns() if case == "mixed" else next(c for n, c, _ in _variants() if n == case)
    fast = diagnose_columns(**cols)
    if case == "mixed":
        active = _column_sld._sld_possible(
            {k: cols[k] for k in ("rain", "snow")}, fast.cloud, cols["precipitation_rate_mm_h"]
        )
        assert 0.2 < active.mean() < 0.9  # both paths are exercised
    monkeypatch.setattr(_column_sld, "_sld_possible", lambda s, cloud, rate: cloud.any(-1) | True)
    _assert_same(fast, diagnose_columns(**cols))
