"""Members in the forecast layer: how GRIB and NetCDF files code them, and how they are read.

GRIB coding of members (checked against ecCodes itself, which reads what we write):
GRIB2 product template 4.1 (4.11 for time intervals) "individual ensemble forecast,
control and perturbed" carries ``perturbationNumber`` (ecCodes alias ``number``),
``numberOfForecastsInEnsemble`` and ``typeOfEnsembleForecast`` (WMO code table 4.6:
0/1 control, 2/3 perturbed); templates 4.2 and 4.12 are products derived from all
members (ensemble mean, spread: code table 4.0). ECMWF GRIB1 codes members in its
local definition 1: ``marsType`` cf (control) or pf (perturbed) with ``number``;
em/es are the ensemble mean and standard deviation. The files are written here from
the real ECMWF GRIB1 and NCEP GFS GRIB2 files of tests/data/real; the member
perturbations (a constant added to the temperature) are invented test data.
"""

from __future__ import annotations

import numpy as np
import pytest

from icing.errors import ForecastError
from icing.forecast import load_forecast
from icing.forecast.ensemble import EnsembleForecast

ECMWF = "ecmwf_pl_regular_ll.grib"
GFS = "gfs.t12z.pgrbf120.2p5deg.grib2"


def _rewrite(path, out, edit):
    """Write every message of ``path`` through ``edit(handle) -> [handles]`` into ``out``."""
    import eccodes

    eccodes.codes_grib_multi_support_on()
    msgs = []
    with open(path, "rb") as fh:
        while (h := eccodes.codes_grib_new_from_file(fh)) is not None:
            try:
                for g in edit(h):
                    msgs.append(eccodes.codes_get_message(g))
                    if g is not h:
                        eccodes.codes_release(g)
            finally:
                eccodes.codes_release(h)
    out.write_bytes(b"".join(msgs))
    return out


def _ecmwf_members(real_data, out, numbers=(0, 1, 2), keep=None):
    """ECMWF GRIB1 written as members: number 0 the control (cf), others perturbed (pf)."""
    import eccodes

    def edit(h):
        date = eccodes.codes_get(h, "dataDate")
        if keep is not None and not keep(date):
            return []
        out_ = []
        for n in numbers:
            g = eccodes.codes_clone(h)
            eccodes.codes_set(g, "marsType", "cf" if n == 0 else "pf")
            eccodes.codes_set(g, "number", n)
            eccodes.codes_set(g, "numberOfForecastsInEnsemble", len(numbers))
            if n and eccodes.codes_get(g, "shortName") == "t":
                vals = eccodes.codes_get_values(g)
                eccodes.codes_set_values(g, vals + 0.5 * n)  # invented perturbation
            out_.append(g)
        return out_

    return _rewrite(real_data / ECMWF, out, edit)


def test_ecmwf_grib1_members_from_its_local_definition(real_data, tmp_path):
    fc = load_forecast(_ecmwf_members(real_data, tmp_path / "ens.grib"))
    assert isinstance(fc, EnsembleForecast)
    assert fc.labels == ("number 0 (control)", "number 1 (perturbed)", "number 2 (perturbed)")
    lat, lon = np.array([50.0]), np.array([10.0])
    t = np.array(["2024-06-03T12:00"], dtype="datetime64[ms]")
    cols = fc.member_columns_at(lat, lon, t)
    # the invented +0.5 K per member comes back through the reader unchanged
    t0, t1, t2 = (c.columns["temperature"][0] for c in cols)
    assert np.allclose(t1 - t0, 0.5, equal_nan=True) and np.allclose(t2 - t0, 1.0, equal_nan=True)
    d = fc.describe()
    assert (
        d["kind"] == "ensemble" and d["members"] == 3 and d["member_origin"] == "member dimension"
    )
    assert [m["member"] for m in d["member_forecasts"]] == list(fc.labels)


def test_members_of_several_lead_time_files(real_data, tmp_path):
    first = _ecmwf_members(real_data, tmp_path / "a.grib", keep=lambda d: d == 20240603)
    second = _ecmwf_members(real_data, tmp_path / "b.grib", keep=lambda d: d == 20240604)
    fc = load_forecast([first, second])
    assert len(fc.members) == 3
    assert all(len(m.forecast.files) == 2 for m in fc.members)
    other = _ecmwf_members(real_data, tmp_path / "c.grib", numbers=(0, 1), keep=lambda d: d > 0)
    with pytest.raises(ForecastError, match="members") as err:
        load_forecast([first, other])
    assert "--member N" in err.value.fix


def test_grib2_derived_products_are_skipped_or_refused(real_data, tmp_path):
    import eccodes

    def members_and_mean(h):
        out = []
        template = eccodes.codes_get(h, "productDefinitionTemplateNumber")
        for n in (0, 1):
            g = eccodes.codes_clone(h)
            eccodes.codes_set(g, "productDefinitionTemplateNumber", {0: 1, 8: 11}[template])
            eccodes.codes_set(g, "perturbationNumber", n)
            eccodes.codes_set(g, "typeOfEnsembleForecast", 1 if n == 0 else 3)
            out.append(g)
        if template == 0:  # an ensemble mean beside them (template 4.2, derivedForecast 0)
            g = eccodes.codes_clone(h)
            eccodes.codes_set(g, "productDefinitionTemplateNumber", 2)
            eccodes.codes_set(g, "derivedForecast", 0)
            out.append(g)
        return out

    path = _rewrite(real_data / GFS, tmp_path / "with-mean.grib2", members_and_mean)
    fc = load_forecast(path)
    assert len(fc.members) == 2
    assert any("derived from an ensemble" in n for n in fc.describe()["notes"])

    def mean_only(h):
        g = eccodes.codes_clone(h)
        if eccodes.codes_get(g, "productDefinitionTemplateNumber") != 0:
            return []
        eccodes.codes_set(g, "productDefinitionTemplateNumber", 2)
        return [g]

    path = _rewrite(real_data / GFS, tmp_path / "mean.grib2", mean_only)
    with pytest.raises(ForecastError, match="derived from an ensemble") as err:
        load_forecast(path)
    assert "members themselves" in err.value.fix


def test_a_member_dimension_on_some_variables_only(tmp_path):
    import xarray as xr

    ds = xr.open_dataset(load_forecast_path()).load()
    ds["t"] = ds["t"].expand_dims(number=[0, 1]).copy()
    ds["t"][1] = ds["t"][1] + 1.0  # invented perturbation of the second member
    path = tmp_path / "two.nc"
    ds.to_netcdf(path)
    fc = load_forecast(path)
    assert fc.labels == ("number 0", "number 1")
    lat, lon = np.array([57.0]), np.array([-24.0])
    t = np.array(["2027-01-14T09:00"], dtype="datetime64[ms]")
    a, b = (c.columns["temperature"][0] for c in fc.member_columns_at(lat, lon, t))
    assert np.allclose(b - a, 1.0)
    one = load_forecast(path, member=1)
    assert one.sources[0].member == 1 and "ensemble member 1 of 2" in " ".join(
        one.describe()["notes"]
    )


def test_too_many_members_are_refused(monkeypatch, real_data, tmp_path):
    import icing.forecast.load as load

    monkeypatch.setattr(load, "MAX_MEMBERS", 2)
    with pytest.raises(ForecastError, match="above the limit of 2"):
        load_forecast(_ecmwf_members(real_data, tmp_path / "ens.grib"))


def load_forecast_path():
    from icing.forecast import demo_forecast_path

    return demo_forecast_path()


def _same_columns(fc, lat, lon, t):
    """The members read together equal each member read alone (values and coverage)."""
    joint = fc.member_columns_at(lat, lon, t)
    alone = [m.forecast.columns_at(lat, lon, t) for m in fc.members]
    for a, b in zip(joint, alone, strict=True):
        assert set(a.columns) == set(b.columns)
        for key in b.columns:
            # 1e-12: the corner sums run in another order with a member axis (last bits)
            assert np.allclose(a.columns[key], b.columns[key], rtol=1e-12, equal_nan=True), key
            assert np.array_equal(np.isnan(a.columns[key]), np.isnan(b.columns[key])), key
        assert np.array_equal(a.candidates, b.candidates) and np.array_equal(a.covered, b.covered)
        assert list(a.gap_reason) == list(b.gap_reason)
        for wa, wb in ((a.wind_u, b.wind_u), (a.wind_v, b.wind_v)):
            assert (wa is None) == (wb is None)
            assert wa is None or np.allclose(wa, wb, rtol=1e-12, equal_nan=True)
    return joint


def test_members_read_together_equal_each_member_read_alone(real_data, gfs_ensemble, tmp_path):
    # GRIB1 (reference time, step) pairs, and GRIB2 with fields on their own levels, relative
    # humidity converted from the GFS convention and cloud mixing ratio to a mass fraction
    ecmwf = load_forecast(_ecmwf_members(real_data, tmp_path / "ens.grib"))
    lat = np.array([50.0, 45.0, 10.0, -80.0])
    lon = np.array([10.0, 12.5, 200.0, 0.0])
    t = np.array(["2024-06-03T09:00", "2024-06-04T03:00", "2024-06-03T12:00", "2030-01-01"])
    cols = _same_columns(ecmwf, lat, lon, t.astype("datetime64[ms]"))
    assert cols[0].covered.tolist() == [True, True, True, False]  # the last: out of time
    gfs = load_forecast(gfs_ensemble.grib)
    lat, lon = np.array([43.0, 43.0, 60.0]), np.array([-88.0, -84.0, 100.0])
    _same_columns(gfs, lat, lon, np.array(["2011-01-15T12:00"] * 3, dtype="datetime64[ms]"))
    u, v = gfs.wind_at(lat, lon, 3000.0, np.array(["2011-01-15T12:00"] * 3, "datetime64[ms]"))
    one = load_forecast(gfs_ensemble.gfs).wind_at(
        lat, lon, 3000.0, np.array(["2011-01-15T12:00"] * 3, "datetime64[ms]")
    )
    assert np.allclose(u, one[0]) and np.allclose(v, one[1])  # the members share the real winds
    assert np.allclose(
        gfs.surface_height_at(lat, lon),
        load_forecast(gfs_ensemble.gfs).surface_height_at(lat, lon),
    )
