"""Humidity conventions of the models: the saturation formulas and how a source's is found.

Reference libraries: ``iapws`` (IAPWS 2011 sublimation pressure of ice) and MetPy
(Ambaum 2020 saturation over water). The model formulas are transcribed from their
documentation (ECMWF IFS Part IV; NCEP UPP ``CALRH_GFS``/``FPVSNEW``); where a test only
re-types a formula it says so, and an independent check sits beside it.
"""

from __future__ import annotations

import numpy as np
import pytest
from iapws._iapws import _Sublimation_Pressure

from icing.calc.thermo import (
    saturation_vapor_pressure,
    saturation_vapor_pressure_ifs,
    saturation_vapor_pressure_ncep_gfs,
)
from icing.forecast.conventions import CONVENTIONS, humidity_convention, water_rh_factor

COLD = [263.15, 253.15, 243.15, 233.15]


@pytest.mark.parametrize(
    "model", [saturation_vapor_pressure_ifs, saturation_vapor_pressure_ncep_gfs]
)
@pytest.mark.parametrize("temperature", COLD)
def test_model_ice_saturation_matches_iapws(model, temperature):
    # reference library: iapws 2011 sublimation pressure (MPa); the models' fits (Tetens,
    # Clausius-Clapeyron with linear latent heat) stay within 0.5 % of it down to -40 C
    ref = _Sublimation_Pressure(temperature) * 1e6
    assert model(temperature, phase="solid") == pytest.approx(ref, rel=5e-3)


@pytest.mark.parametrize(
    "model", [saturation_vapor_pressure_ifs, saturation_vapor_pressure_ncep_gfs]
)
@pytest.mark.parametrize("temperature", COLD[:3] + [283.15])
def test_model_water_saturation_matches_metpy(model, temperature):
    # reference library: MetPy (Ambaum 2020), supercooled included; within 0.6 % down to
    # -30 C (the Tetens fit drifts to about 1.3 % by -40 C, where liquid is rare)
    ref = float(saturation_vapor_pressure(temperature))
    assert model(temperature) == pytest.approx(ref, rel=6e-3)


def test_ifs_mixed_phase_follows_its_definition():
    # ECMWF: over water at and above 273.16 K, over ice at and below 250.16 K, alpha =
    # ((T - 250.16) / 23)^2 between (transcription check of the documented weights)
    f = saturation_vapor_pressure_ifs
    assert f(273.16, phase="mixed") == f(273.16)
    assert f(250.16, phase="mixed") == pytest.approx(f(250.16, phase="solid"), rel=1e-12)
    t = 250.16 + 11.5  # alpha = 0.25
    assert f(t, phase="mixed") == pytest.approx(0.25 * f(t) + 0.75 * f(t, phase="solid"))


def test_gfs_blend_follows_its_definition():
    # NCEP UPP FPVSNEW: water at and above 273.16 K, ice below 253.16 K, linear weight
    # w = (T - 253.16) / 20 between (transcription check)
    f = saturation_vapor_pressure_ncep_gfs
    t = 263.16  # w = 0.5
    assert f(t, phase="mixed") == pytest.approx(0.5 * f(t) + 0.5 * f(t, phase="solid"))
    assert f(253.0, phase="mixed") == pytest.approx(f(253.0, phase="solid"))


@pytest.mark.parametrize("name", ["ifs-mixed", "ncep-gfs", "ice"])
def test_saturated_model_air_below_minus_23_c_is_ice_saturation_over_water(name):
    # independent check: at -30 C every one of these conventions saturates over ice, so
    # 100 % of it is the water RH of ice-saturated air, e_ice / e_water = 0.75 at -30 C
    # (iapws sublimation over MetPy's water saturation; the design value "75 %" agrees)
    t = 243.15
    ref = _Sublimation_Pressure(t) * 1e6 / float(saturation_vapor_pressure(t))
    # 0.6 %: the models' own fits against the reference laws (tests above)
    assert water_rh_factor(CONVENTIONS[name], t) == pytest.approx(ref, rel=6e-3)


def test_no_conversion_above_freezing_or_for_water():
    for name in CONVENTIONS:
        assert water_rh_factor(CONVENTIONS[name], 280.0) == pytest.approx(1.0)
    assert np.all(water_rh_factor(CONVENTIONS["water"], np.array(COLD)) == 1.0)


@pytest.mark.parametrize(
    "var_attrs, file_attrs, name",
    [
        ({"GRIB_centre": "ecmf"}, {}, "ifs-mixed"),
        ({"GRIB_centre": "kwbc", "GRIB_generatingProcessIdentifier": 96}, {}, "ncep-gfs"),
        ({"GRIB_centre": "kwbc", "GRIB_generatingProcessIdentifier": 84}, {}, "water"),
        ({}, {"GRIB_centre": "ecmf"}, "ifs-mixed"),  # cfgrib writes the centre globally
        ({}, {"source": "ERA5 reanalysis"}, "ifs-mixed"),
        ({}, {"institution": "someone"}, "unknown"),
    ],
)
def test_convention_found_from_the_file(var_attrs, file_attrs, name):
    conv, how = humidity_convention(var_attrs, file_attrs)
    assert conv.name == name and how


def test_user_statement_wins():
    conv, how = humidity_convention({"GRIB_centre": "ecmf"}, {}, "water")
    assert conv.name == "water" and "user" in how
