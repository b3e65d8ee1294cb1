"""Checks of the column diagnosis (icing.column.diagnose_columns)."""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from icing import codes
from icing.calc.column import ColumnOptions, diagnose_columns
from icing.errors import InputError

T0 = 273.15
ALL = (
    "warm_nose_column",
    "cold_dry_column",
    "all_nan_column",
    "supercooled_stratiform_deck",
    "warm_topped_drizzle_deck",
    "deep_frontal_deck_with_ice",
    "thin_minus8_deck",
)


def test_shapes_level_n_and_nm(columns):
    one = columns.supercooled_stratiform_deck()
    d1 = diagnose_columns(**one)
    assert d1.lwc.shape == (40,) and d1.freezing_level.shape == ()
    two = columns.stack(*(getattr(columns, f)() for f in ALL))
    d2 = diagnose_columns(**two)
    assert d2.lwc.shape == (len(ALL), 40) and d2.precip_type.shape == (len(ALL),)
    three = {k: np.broadcast_to(v, (2,) + v.shape) for k, v in two.items()}
    d3 = diagnose_columns(**three)
    assert d3.lwc.shape == (2, len(ALL), 40)
    # regression: the same column gives the same answer whatever the batch shape
    np.testing.assert_allclose(d2.lwc[3], d1.lwc, rtol=1e-12, equal_nan=True)
    np.testing.assert_allclose(d3.lwc[1], d2.lwc, rtol=1e-12, equal_nan=True)


def test_levels_in_either_order_outputs_in_input_order(columns):
    col = columns.supercooled_stratiform_deck()
    up = diagnose_columns(**col)
    down = diagnose_columns(**{k: v[::-1] for k, v in col.items()})
    np.testing.assert_allclose(down.lwc[::-1], up.lwc, rtol=1e-12, equal_nan=True)
    np.testing.assert_array_equal(down.cloud[::-1], up.cloud)
    np.testing.assert_array_equal(down.pressure, col["pressure"][::-1])


def test_nan_column_is_invalid_not_clear(columns):
    d = diagnose_columns(**columns.all_nan_column())
    assert not d.valid.any()
    assert np.isnan(d.lwc).all()  # unknown, never 0 ("no icing")
    assert np.isnan(d.freezing_level)


def test_nan_level_invalid_others_kept(columns):
    col = columns.supercooled_stratiform_deck()
    col["temperature"] = col["temperature"].copy()
    col["temperature"][20] = np.nan
    d = diagnose_columns(**col)
    assert not d.valid[20] and d.valid[:20].all() and d.valid[21:].all()
    assert np.isnan(d.lwc[20])
    assert np.isfinite(d.height).all()  # heights bridge the gap


def test_cold_dry_column_is_clear(columns):
    d = diagnose_columns(**columns.cold_dry_column())
    assert d.valid.all() and not d.cloud.any()
    assert np.nanmax(d.lwc) == 0.0


def test_options_describe_is_json_and_in_output(columns):
    d = diagnose_columns(**columns.supercooled_stratiform_deck())
    text = json.dumps(d.assumptions)
    assert "maritime" in text and d.assumptions == ColumnOptions().describe()


def test_no_humidity_is_a_clear_error(columns):
    col = columns.supercooled_stratiform_deck()
    with pytest.raises(InputError, match="humidity"):
        diagnose_columns(col["pressure"], col["temperature"])


def test_basis_codes_are_known(columns):
    d = diagnose_columns(**columns.stack(*(getattr(columns, f)() for f in ALL)))
    assert set(np.unique(d.basis)) <= {codes.BASIS_NONE, codes.BASIS_MODEL, codes.BASIS_DIAGNOSED}


# --- liquid: bounds, limits, basis ---------------------------------------------------------


def test_lwc_nonnegative_and_none_below_homogeneous_freezing(columns):
    # physical laws: LWC >= 0; no liquid below homogeneous freezing (about -38 C, textbook
    # -40 C; Rogers & Yau 1989 ch. 8) -- model liquid there is discarded too
    cols = columns.stack(*(getattr(columns, f)() for f in ALL))
    d = diagnose_columns(**cols)
    assert np.all(d.lwc[np.isfinite(d.lwc)] >= 0.0)
    t = np.linspace(250.0, 225.0, 40)
    p = np.linspace(60000.0, 25000.0, 40)
    cold = diagnose_columns(p, t, relative_humidity=np.ones(40), cloud_liquid=np.full(40, 3e-4))
    assert np.all(cold.lwc[t <= 233.15] == 0.0)
    assert np.all(cold.lwc_model[t <= 235.15] == 0.0)
    assert np.all(cold.basis[t <= 235.15] == codes.BASIS_NONE)
    assert np.any(cold.lwc[t > 240.0] > 0.0)


def test_model_liquid_larger_wins_and_is_never_added(columns):
    # the project's rule (conservative screening; docs/references.md, cloud liquid): the
    # larger of model and diagnosed liquid,
    # never their sum, with its basis
    col = columns.supercooled_stratiform_deck()
    lots = dict(col, cloud_liquid=np.where(col["cloud_liquid"] > 0, 1.5e-3, 0.0))
    d = diagnose_columns(**lots)
    inside = d.cloud & (d.lwc_model > 0)
    assert np.all(d.basis[inside] == codes.BASIS_MODEL)
    np.testing.assert_allclose(d.lwc[inside], np.maximum(d.lwc_model, d.lwc_diagnosed)[inside])
    little = dict(col, cloud_liquid=np.where(col["cloud_liquid"] > 0, 1e-6, 0.0))
    d2 = diagnose_columns(**little)
    deck = d2.cloud & (d2.lwc_diagnosed > 0)
    assert deck.sum() >= 4 and np.all(d2.basis[deck] == codes.BASIS_DIAGNOSED)
    np.testing.assert_allclose(d2.lwc[deck], d2.lwc_diagnosed[deck])
    # model liquid kg/kg -> kg/m3 with the air density (p / Rd Tv)
    rho = d.pressure / (287.0475 * d.temperature)
    np.testing.assert_allclose(d.lwc_model[inside], 1.5e-3 * rho[inside], rtol=5e-3)


def test_deep_column_lwc_bounded():
    # common practice, no source: a 3 km saturated deck must not integrate to several
    # g/m3 (sub-adiabatic factor after Braun et al. 2018 and Warner 1955); bound 1.5 g/m3
    p = np.linspace(95000.0, 60000.0, 36)
    t = np.linspace(273.15, 255.0, 36)
    d = diagnose_columns(p, t, relative_humidity=np.ones(36))
    assert d.cloud.all()
    depth = d.cloud_top_height[0] - d.cloud_base_height[0]
    assert depth > 3000.0
    assert np.nanmax(d.lwc) < 1.5e-3


def test_below_ground_levels_masked(columns):
    # DEVELOPERS.md contract: levels under the ground are flagged and carry no liquid
    col = columns.supercooled_stratiform_deck()
    d = diagnose_columns(**col, surface_pressure=92000.0)
    assert np.array_equal(d.below_ground, col["pressure"] > 92000.0)
    assert not d.cloud[d.below_ground].any() and np.isnan(d.lwc[d.below_ground]).all()
    ground = float(np.interp(92000.0, col["pressure"][::-1], diagnose_columns(**col).height[::-1]))
    dh = diagnose_columns(**col, surface_height=ground)
    np.testing.assert_array_equal(dh.below_ground, d.below_ground)


def test_heights_anchored_at_the_surface(columns):
    # regression of the hypsometric anchor: with surface pressure and height both given,
    # the surface pressure sits at the surface height
    col = columns.supercooled_stratiform_deck()
    d = diagnose_columns(**col, surface_pressure=100000.0, surface_height=250.0)
    assert d.height[0] == pytest.approx(250.0, abs=0.01)


def test_freezing_level(columns):
    # physical definition: lowest 0 C crossing; the stratiform deck crosses between
    # 1000 hPa (+1 C) and 900 hPa (-4 C)
    d = diagnose_columns(**columns.supercooled_stratiform_deck())
    z0 = float(d.freezing_level)
    i = np.argmax(d.temperature <= T0)
    assert d.height[i - 1] < z0 <= d.height[i]
    assert np.isnan(diagnose_columns(**columns.cold_dry_column()).freezing_level)


# --- droplets ------------------------------------------------------------------------------


def test_droplet_number_maritime_vs_continental_climatology(columns):
    # from memory: stratiform droplet number ~75 /cm3 marine, ~290 /cm3 continental
    # (Miles et al. 2000, J. Atmos. Sci. 57, 295). Factor 2: their means come with
    # standard deviations near the mean, and the updraft here is an assumed 0.25 m/s.
    col = columns.supercooled_stratiform_deck()
    mar = diagnose_columns(**col, options=ColumnOptions(air_mass="maritime"))
    con = diagnose_columns(**col, options=ColumnOptions(air_mass="continental"))
    n_mar = np.nanmax(mar.droplet_number) / 1e6
    n_con = np.nanmax(con.droplet_number) / 1e6
    assert 75 / 2 <= n_mar <= 75 * 2
    assert 290 / 2 <= n_con <= 290 * 2
    # physical law: same liquid, more droplets -> smaller MVD
    assert np.nanmax(con.mvd) < np.nanmax(mar.mvd)
    # held constant up the layer
    inside = mar.cloud & np.isfinite(mar.droplet_number)
    assert np.ptp(mar.droplet_number[inside]) == 0.0


def test_updraft_floor_by_cloud_type(columns):
    # stated defaults (ColumnOptions): stratiform floor 0.1 m/s, convective 1.0 m/s; a
    # layer with |w| >= 1 m/s is convective and activates more droplets
    col = columns.supercooled_stratiform_deck()
    calm = diagnose_columns(
        **dict(col, vertical_velocity=np.zeros(40)), options=ColumnOptions(subgrid_updraft_m_s=0.0)
    )
    conv = diagnose_columns(
        **dict(col, vertical_velocity=np.where(col["cloud_liquid"] > 0, 1.2, 0.0)),
        options=ColumnOptions(subgrid_updraft_m_s=0.0),
    )
    assert np.nanmax(conv.droplet_number) > 2 * np.nanmax(calm.droplet_number)


def test_default_air_mass_is_the_conservative_maritime():
    # stated choice: maritime (fewer droplets -> larger MVD) is the default
    o = ColumnOptions()
    assert o.air_mass == "maritime"
    assert "conservative" in o.describe()["air_mass_default_reason"]
    with pytest.raises(InputError, match="air_mass"):
        ColumnOptions(air_mass="volcanic")


# --- glaciation ------------------------------------------------------------------------------


def test_glaciation_deep_frontal_deck_with_ice_above_is_high(columns):
    # physical reasoning (seeder-feeder; Korolev & Mazin 2003): a deep -25 C deck with snow
    # falling into it
    d = diagnose_columns(**columns.deep_frontal_deck_with_ice())
    deck = d.cloud & (d.temperature < T0 - 20)
    assert deck.any() and np.nanmin(d.glaciation[deck]) > 0.8
    assert np.all(d.lwc[deck] == np.maximum(d.lwc_model, d.lwc_diagnosed)[deck])  # not thinned


def test_glaciation_thin_minus8_deck_is_low(columns):
    # physical reasoning: few ice nuclei at -8 C (Meyers et al. 1992), no ice above;
    # the deck saturated over three levels so that it holds liquid above its base
    col = columns.thin_minus8_deck()
    p = col["pressure"]
    col["relative_humidity"] = np.where(
        (p <= 89500.0) & (p >= 85500.0), 1.0, col["relative_humidity"]
    )
    d = diagnose_columns(**col)
    wet = d.cloud & (d.lwc >= 5e-5)
    assert wet.any() and np.nanmax(d.glaciation[wet]) < 0.2
    assert np.isnan(d.glaciation[~d.cloud]).all()


def test_appendix_c_warning_in_the_output(columns):
    # 14 CFR 25 Appendix C continuous maximum (values from memory): 1.5 g/kg of model
    # liquid in a -8 C stratiform deck passes it
    col = columns.supercooled_stratiform_deck()
    d = diagnose_columns(**dict(col, cloud_liquid=np.where(col["cloud_liquid"] > 0, 1.5e-3, 0.0)))
    assert any("Appendix C continuous maximum" in w for w in d.warnings)
    assert all(isinstance(w, str) for w in d.warnings)


# --- SLD through the column ------------------------------------------------------------------


def test_warm_nose_column_gives_freezing_rain_below_the_nose(columns):
    # Bourgouin (2000) via icing.sld: rain melted in the warm nose falls into a shallow
    # sub-freezing surface layer as freezing rain -- also below cloud base (not gated by
    # the cloud mask)
    d = diagnose_columns(**columns.warm_nose_column())
    assert codes.PRECIP_TYPES[int(d.precip_type)] == "freezing-rain"
    cold_below = (d.temperature <= T0) & (d.height < d.freezing_level + 1.0)
    assert np.all(d.sld_class[cold_below] == codes.SLD_RAIN)
    assert np.all(d.sld_lwc[d.sld_class == codes.SLD_RAIN] > 0)


def test_drizzle_deck_through_the_column(columns):
    # warm-rain freezing drizzle (Huffman & Norman 1988; Khairoutdinov & Kogan 2000 via
    # icing.sld): warm-topped deck, maritime droplet numbers, 0.8 g/m3 of model liquid
    d = diagnose_columns(**columns.sld_drizzle_deck_column())
    assert np.any(d.sld_class == codes.SLD_DRIZZLE)
    drizzle = d.sld_class == codes.SLD_DRIZZLE
    assert np.all(np.isfinite(d.sld_mvd[drizzle]) & (d.sld_mvd[drizzle] > 0))


def test_nan_column_sld_is_a_gap(columns):
    # a column without data is a coverage gap, never "no SLD"
    d = diagnose_columns(**columns.all_nan_column())
    assert np.all(d.sld_class == codes.GAP) and int(d.precip_type) == codes.GAP


# --- input checks ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("change", "where"),
    [
        (("pressure", 1 / 100.0, 0.0), "pressure"),
        (("temperature", 1.0, -273.15), "temperature"),
        (("relative_humidity", 100.0, 0.0), "relative_humidity"),
        (("cloud_liquid", 1000.0, 0.0), "cloud_liquid"),
    ],
)
def test_unit_mistakes_give_one_line_errors(change, where, columns):
    # a unit slip: the deck's own field scaled and shifted as a wrong unit would
    col = columns.supercooled_stratiform_deck()
    name, scale, shift = change
    col[name] = col[name] * scale + shift
    with pytest.raises(InputError) as err:
        diagnose_columns(**col)
    assert err.value.where == where and err.value.fix
    assert "\n" not in err.value.one_line()


def test_shape_mismatch_is_a_clear_error(columns):
    col = columns.supercooled_stratiform_deck()
    with pytest.raises(InputError, match="broadcast"):
        diagnose_columns(**dict(col, relative_humidity=col["relative_humidity"][:30]))
    with pytest.raises(InputError, match="one value per column"):
        diagnose_columns(**dict(col, surface_pressure=[1.0, 2.0]))


def test_supersaturated_input_is_a_plausibility_note(columns):
    col = columns.supercooled_stratiform_deck()
    d = diagnose_columns(**dict(col, relative_humidity=np.full(40, 1.3)))
    assert any("120 %" in w for w in d.warnings)


def test_zero_columns_and_zero_levels():
    # an empty batch is fine (shape kept); a column without levels is an input error
    d = diagnose_columns(np.zeros((0, 40)), np.zeros((0, 40)), relative_humidity=np.zeros((0, 40)))
    assert d.lwc.shape == (0, 40) and d.freezing_level.shape == (0,)
    with pytest.raises(InputError, match="level"):
        diagnose_columns(np.zeros((3, 0)), np.zeros((3, 0)), relative_humidity=np.zeros((3, 0)))


def test_single_and_two_level_columns():
    # edge cases: a one-level column has no depth above its base (no diagnosed liquid) and
    # no 0 C crossing; two saturated levels make a layer with liquid in its upper level
    d1 = diagnose_columns([90000.0], [265.0], relative_humidity=[1.0])
    assert d1.cloud.tolist() == [True] and d1.lwc.tolist() == [0.0]
    assert np.isnan(d1.freezing_level)
    d2 = diagnose_columns([90000.0, 85000.0], [265.0, 262.0], relative_humidity=[1.0, 1.0])
    assert d2.lwc[1] > 0 and d2.basis[1] == codes.BASIS_DIAGNOSED


# --- invariants over random columns ----------------------------------------------------------


@settings(max_examples=25, deadline=None)
@given(
    t_sfc=st.floats(255.0, 295.0),
    lapse=st.floats(3e-3, 9e-3),
    rh=st.lists(st.floats(0.0, 1.05), min_size=12, max_size=12),
    w=st.floats(-2.0, 3.0),
    ql=st.floats(0.0, 1e-3),
    ice=st.floats(0.0, 5e-4),
)
def test_physical_invariants_on_random_columns(t_sfc, lapse, rh, w, ql, ice):
    # physical laws: LWC >= 0; no liquid at or below -38 C (homogeneous freezing);
    # glaciation in [0, 1]; droplet number > 0 and MVD > 0 where there is liquid; cloud
    # top not below cloud base; the larger of model and diagnosed liquid, never the sum
    p = np.linspace(100000.0, 40000.0, 12)
    z = np.linspace(0.0, 7000.0, 12)
    t = t_sfc - lapse * z
    d = diagnose_columns(
        p,
        t,
        relative_humidity=np.array(rh),
        cloud_liquid=np.full(12, ql),
        cloud_ice=np.full(12, ice),
        vertical_velocity=np.full(12, w),
    )
    assert np.all(d.lwc >= 0.0)
    assert np.all(d.lwc[t <= 235.15] == 0.0)
    g = d.glaciation[d.cloud]
    assert np.all((g >= 0.0) & (g <= 1.0))
    liquid = d.lwc >= 1e-5
    assert np.all(d.droplet_number[liquid] > 0) and np.all(d.mvd[liquid] > 0)
    assert np.all(d.cloud_top_height[d.cloud] >= d.cloud_base_height[d.cloud])
    assert np.all(d.lwc <= np.maximum(d.lwc_model, d.lwc_diagnosed) + 1e-15)


@pytest.mark.parametrize(
    "field", ["sub_adiabatic_scale_height_m", "drizzle_time_scale_s", "chunk_columns"]
)
def test_options_refuse_non_positive_values(field):
    with pytest.raises(InputError, match=field):
        ColumnOptions(**{field: 0})


def test_chunking_does_not_change_results(columns):
    # regression: diagnosing in chunks of 2 columns equals one chunk
    cols = columns.stack(*(getattr(columns, f)() for f in ALL))
    one = diagnose_columns(**cols)
    many = diagnose_columns(**cols, options=ColumnOptions(chunk_columns=2))
    np.testing.assert_array_equal(one.lwc, many.lwc)
    np.testing.assert_array_equal(one.sld_class, many.sld_class)
    assert one.warnings == many.warnings


def test_freezing_level_under_a_warm_nose_is_the_nose_base(columns):
    # definition (lowest 0 C crossing): a -3 C surface under a +3 C nose crosses 0 C first
    # at the nose's base, between 930 hPa (-1 C) and 850 hPa (+3 C)
    d = diagnose_columns(**columns.warm_nose_column())
    p_at = float(np.interp(d.freezing_level, d.height, d.pressure))
    assert 85000.0 < p_at < 93000.0


def test_cloud_fraction_turns_grid_mean_water_into_in_cloud_water(columns):
    # definition: model cloud water is a grid mean; the cloudy fraction holds all of it
    col = columns.supercooled_stratiform_deck()
    full = diagnose_columns(**col)
    half = diagnose_columns(**col, cloud_fraction=np.full(40, 0.5))
    tiny = diagnose_columns(**col, cloud_fraction=np.full(40, 0.01))
    np.testing.assert_allclose(half.lwc_model, 2 * full.lwc_model)
    np.testing.assert_allclose(tiny.lwc_model, 10 * full.lwc_model)  # floored at 0.1
    assert "cloud_fraction_floor" in half.assumptions


def test_diagnosis_does_not_alias_the_inputs(columns):
    col = columns.supercooled_stratiform_deck()
    d = diagnose_columns(**col)
    d.pressure[0] = -1.0
    d.temperature[0] = -1.0
    assert col["pressure"][0] == 100000.0 and col["temperature"][0] > 0


@pytest.mark.parametrize("model", ["meyers92", "fletcher62", "demott10"])
def test_ice_nuclei_models_through_the_column(model, columns):
    # the stated choice reaches the glaciation budget and the assumptions
    d = diagnose_columns(
        **columns.thin_minus8_deck(), options=ColumnOptions(ice_nuclei_model=model)
    )
    g = d.glaciation[d.cloud]
    assert np.all((g >= 0) & (g <= 1)) and model in json.dumps(d.assumptions)


def test_one_level_humidity_dip_does_not_split_a_deck(columns):
    # stated choice (ColumnOptions.bridge_single_level_gaps): a one-level dip to ice
    # saturation inside a saturated deck keeps one layer, so the liquid keeps growing
    col = {k: v for k, v in columns.supercooled_stratiform_deck().items() if k != "cloud_liquid"}
    dip = col["relative_humidity"].copy()
    inside = np.flatnonzero(dip >= 1.0)
    k = inside[len(inside) // 2]
    dip[k] = 0.94  # above ice saturation (~0.93 at -8 C), below the 0.95 threshold
    bridged = diagnose_columns(**dict(col, relative_humidity=dip))
    split = diagnose_columns(
        **dict(col, relative_humidity=dip), options=ColumnOptions(bridge_single_level_gaps=False)
    )
    assert bridged.cloud[k] and not split.cloud[k]
    top = inside[-1]
    assert bridged.lwc_diagnosed[top] > split.lwc_diagnosed[top]
    assert bridged.cloud_base_height[top] < split.cloud_base_height[top]


def test_layer_resting_on_a_missing_level_is_a_gap_not_thin_liquid():
    # Safety rule (ours): a deck whose level below is missing has an unknown base, so
    # its adiabatic liquid is unknown: it must read as invalid (a coverage gap), never
    # as the near-zero liquid of a base placed one level too high.
    p = np.array([100000, 95000, 90000, 85000, 80000, 75000, 70000.0])
    t = np.array([275, 272, 269, 266, 263, 262, 258.0])
    rh = np.array([0.8, 1.0, np.nan, 1.0, 1.0, 1.0, 0.5])
    d = diagnose_columns(p, t, relative_humidity=rh)
    assert not d.valid[2:6].any()
    assert d.valid[[0, 1, 6]].all()
    full = diagnose_columns(p, t, relative_humidity=np.where(np.isnan(rh), 1.0, rh))
    assert full.valid.all() and (full.lwc[2:6] > 1e-4).all()


def test_nan_surface_anchor_leaves_levels_invalid():
    # A column whose computed heights cannot be anchored has no usable level.
    p = np.array([100000, 90000, 80000.0])
    t = np.array([275, 268, 262.0])
    d = diagnose_columns(
        p, t, relative_humidity=np.ones(3), surface_pressure=np.nan, surface_height=0.0
    )
    assert not d.valid.any()


def test_results_are_frozen_with_a_docstring_per_field(columns):
    # project convention: frozen result objects, a docstring per field (no physics)
    import dataclasses

    from icing.calc.clouds import CloudLayers
    from icing.calc.column import ColumnDiagnosis
    from icing.calc.sld import SLDDiagnosis

    d = diagnose_columns(**columns.supercooled_stratiform_deck())
    with pytest.raises(dataclasses.FrozenInstanceError):
        d.lwc = None
    for cls in (ColumnDiagnosis, CloudLayers, SLDDiagnosis):
        assert dataclasses.is_dataclass(cls) and cls.__dataclass_params__.frozen
        doc = cls.__doc__ or ""
        src = __import__("inspect").getsource(cls)
        for f in dataclasses.fields(cls):
            assert f"{f.name}:" in src and (
                f"{f.name} :" in doc or '"""' in src.split(f"    {f.name}:", 1)[1].splitlines()[1]
            ), (cls.__name__, f.name)


# ----------------------------------------------------------- flight conditions
def _deck_over_moist_air(rh_below):
    """A saturated deck from 850 hPa up over sub-cloud air at ``rh_below`` (ours)."""
    from icing.calc import thermo

    p = np.linspace(100000.0, 60000.0, 41)
    t = 278.15 - 6.0e-3 * thermo.standard_atmosphere_height(p)
    rh = np.where(p <= 85000.0, 1.0, np.where(p <= 86000.0, rh_below, 0.7))
    return p, t, rh


def test_adiabatic_liquid_starts_where_the_air_saturates_not_at_the_cloud_threshold():
    # the 95 % threshold flags cloud (model grids scatter below saturation) but a
    # parcel condenses only once saturated: the liquid starts at the lifting
    # condensation level (Bolton 1980) of the layer's lowest cloudy air, so the
    # sub-cloud humidity no longer moves the liquid at the base, and a level crossing
    # the threshold changes it smoothly (a 1 % RH change moved it four-fold before)
    lwc = {}
    for r in (0.90, 0.91, 0.94, 0.95, 0.96):
        p, t, rh = _deck_over_moist_air(r)
        d = diagnose_columns(p, t, relative_humidity=rh)
        lwc[r] = float(d.lwc_diagnosed[p == 84000.0][0])
        assert d.lwc_diagnosed[(p > 85500.0) & (p < 86500.0)].max() < 1e-5  # sub-saturated
    assert lwc[0.90] == pytest.approx(lwc[0.91], rel=1e-9)  # below cloud: no effect
    # 1 % of humidity at the base moves its condensation level ~20 m (dew-point
    # depression ~0.15 K per %, ~125 m per K) and the liquid by ~0.02-0.03 g/m3 (the
    # adiabatic gradient ~1.6 g/m3 per km times the 0.77 factor; derived): across the
    # threshold and above it the steps stay that small
    assert abs(lwc[0.95] - lwc[0.94]) < 0.03e-3
    assert abs(lwc[0.96] - lwc[0.95]) < 0.03e-3


def _deep_cumulus(floor):
    from icing.calc import thermo

    p = np.linspace(95000.0, 30000.0, 60)
    t = thermo.moist_adiabat_temperature(p[None, :], np.array([293.15]), np.array([95000.0]))[0]
    rh = np.where(p <= 94000.0, 1.0, 0.8)
    w = np.where(p <= 94000.0, 3.0, 0.5)
    d = diagnose_columns(
        p,
        t,
        relative_humidity=rh,
        vertical_velocity=w,
        options=ColumnOptions(sub_adiabatic_floor_convective=floor),
    )
    return p, t, d


def test_convective_liquid_stays_within_the_published_sub_adiabatic_range():
    # Warner (1955, from memory): cumulus LWC/LWC_ad ~0.2-0.5 a few km above base;
    # the exponential alone fell to 0.04 at 4.5 km (0.77 exp(-4.5/1.5)): the floor 0.2
    from icing.calc import clouds

    p, t, d = _deep_cumulus(0.2)
    cloud = d.cloud & (d.lwc_diagnosed > 0)
    base_p = d.pressure[np.flatnonzero(d.cloud)[0]]
    ad = clouds.adiabatic_lwc(p, t, base_p, t[d.pressure == base_p][0])
    ratio = d.lwc_diagnosed[cloud] / ad[cloud]
    high = d.height[cloud] > d.height[cloud][0] + 3000.0
    assert high.any() and np.all(ratio[high] >= 0.2 - 0.02)  # 0.02: base placement
    assert np.all(ratio <= 0.77 + 0.02)


def test_appendix_c_intermittent_maximum_warns_where_convective_liquid_exceeds_it():
    # 14 CFR 25 Appendix C intermittent maximum (figure values from memory): a deep
    # warm-based cumulus at half of adiabatic passes it, and the run says so
    _, _, d = _deep_cumulus(0.5)
    assert any("intermittent maximum" in w for w in d.warnings)
    _, _, thin = _deep_cumulus(0.0)
    assert not any("intermittent maximum" in w for w in thin.warnings)


def test_model_holding_ice_and_no_liquid_marks_the_level_glaciated(columns):
    # the model's own microphysics glaciated these levels: ice (>= 0.01 g/m3, Korolev
    # et al. 2003) and no liquid; only where the model gives both fields
    col = columns.supercooled_stratiform_deck()
    ice = np.where(col["cloud_liquid"] > 0, 2e-4, 0.0)
    glaciated = dict(col, cloud_liquid=np.zeros_like(ice), cloud_ice=ice)
    d = diagnose_columns(**glaciated)
    assert np.all(d.model_glaciated[ice > 0]) and not d.model_glaciated[ice == 0].any()
    mixed = diagnose_columns(**dict(col, cloud_ice=ice))
    assert not mixed.model_glaciated.any()  # model liquid present
    no_liquid_field = {k: v for k, v in glaciated.items() if k != "cloud_liquid"}
    assert not diagnose_columns(**no_liquid_field).model_glaciated.any()


def test_a_column_lacking_an_optional_field_is_diagnosed_without_it_not_as_a_gap(columns):
    # a radiosonde (no cloud water, no vertical velocity) beside a model column that
    # has them: the field is absent for the sounding, never a gap at every level
    model = columns.supercooled_stratiform_deck()
    sounding = {k: v for k, v in columns.supercooled_stratiform_deck().items()}
    for k in ("cloud_liquid", "vertical_velocity"):
        sounding.pop(k, None)
    alone = diagnose_columns(**sounding)
    both = columns.stack(model, dict(sounding, cloud_liquid=np.nan, vertical_velocity=np.nan))
    for k in ("cloud_liquid", "vertical_velocity"):
        both[k] = np.stack(
            [
                np.asarray(model.get(k, np.zeros_like(model["pressure"]))),
                np.full_like(model["pressure"], np.nan),
            ]
        )
    d = diagnose_columns(**both)
    assert d.valid[1].all() and (d.sld_class[1] != codes.GAP).all()
    np.testing.assert_allclose(d.lwc[1], alone.lwc)
    np.testing.assert_array_equal(d.cloud[1], alone.cloud)
    # a NaN at some levels of a field the column does carry is still a gap there
    part = dict(both)
    part["cloud_liquid"] = part["cloud_liquid"].copy()
    part["cloud_liquid"][0, 5] = np.nan
    assert not diagnose_columns(**part).valid[0, 5]


def test_a_sounding_beside_a_model_column_in_one_profile_file_is_screened(tmp_path):
    # the same through the profile reader: the sounding lacks cloud_liquid_g_kg,
    # which the model profile gives; the sounding's position is screened, not a gap
    import json

    import icing

    levels = {
        "pressure_hpa": [1000, 950, 900, 850, 800, 700, 600, 500],
        "temperature_c": [3.0, 0.5, -2.0, -4.5, -7.0, -13.0, -20.0, -28.0],
        "dewpoint_c": [2.0, 0.0, -2.3, -4.7, -7.3, -18.0, -30.0, -40.0],
    }
    model = dict(levels, cloud_liquid_g_kg=[0, 0.05, 0.2, 0.25, 0.1, 0, 0, 0])
    doc = {
        "format": "icing-profiles",
        "version": 1,
        "profiles": [
            {
                "id": "SONDE",
                "lat": 51.0,
                "lon": -4.0,
                "valid_time": "2027-01-14T12:00:00Z",
                "levels": levels,
            },
            {
                "id": "MODEL",
                "lat": 53.0,
                "lon": -4.0,
                "valid_time": "2027-01-14T12:00:00Z",
                "levels": model,
            },
        ],
    }
    path = tmp_path / "mixed.json"
    path.write_text(json.dumps(doc))
    f = icing.load_forecast(path)
    cs = f.columns_at(
        np.array([51.0]), np.array([-4.0]), np.array(["2027-01-14T12:00"], dtype="datetime64[ms]")
    )
    d = diagnose_columns(**cs.columns)
    sonde = int(np.asarray(cs.candidates)[0, 0])
    assert d.valid[sonde][np.isfinite(d.pressure[sonde])].all()
