"""GRIB1 and GRIB2 read directly: real files screened through the CLI, and GRIB edge cases.

Real data (tests/data/real, origin and licence in its README.md):
- NCEP GFS 2.5 degree, run 2011-01-10 12 UTC + 120 h (pygrib sample data): a winter case;
- NCEP NAM analysis 2018-09-17 00 UTC on grid 211, Lambert conformal 81 km (cfgrib);
- ECMWF IFS forecasts 2024-06-03/04, steps 0 and 6 h, GRIB1 on a 10 degree grid (earthkit-data;
  source: ECMWF, CC-BY-4.0).
Expectations are read from the raw files with ecCodes directly (not through the reader):
where a level is saturated below 0 C, where a warm nose lies, where the grid ends.
The edge-case files are written here from those files with ecCodes.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from icing.calc.thermo import saturation_vapor_pressure_ifs, saturation_vapor_pressure_ncep_gfs
from icing.cli import main
from icing.forecast import load_forecast

GFS = "gfs.t12z.pgrbf120.2p5deg.grib2"
NAM = "nam.t00z.awp21100.tm00.grib2"
ECMWF = "ecmwf_pl_regular_ll.grib"


def _raw(path, short_name, level=None, type_of_level="isobaricInhPa", valid=None):
    """One field straight from the file with ecCodes: (latitudes, longitudes, values), 2-D."""
    import eccodes

    eccodes.codes_grib_multi_support_on()
    with open(path, "rb") as fh:
        while (h := eccodes.codes_grib_new_from_file(fh)) is not None:
            try:
                if (
                    eccodes.codes_get(h, "shortName") == short_name
                    and eccodes.codes_get(h, "typeOfLevel") == type_of_level
                    and (level is None or eccodes.codes_get(h, "level") == level)
                    and (valid is None or eccodes.codes_get(h, "validityTime") == valid)
                ):
                    nj = eccodes.codes_get(h, "Nj") or eccodes.codes_get(h, "Ny")
                    get = eccodes.codes_get_array
                    return tuple(
                        np.asarray(get(h, k), float).reshape(nj, -1)
                        for k in ("latitudes", "longitudes", "values")
                    )
            finally:
                eccodes.codes_release(h)
    raise LookupError(short_name)


def _profile(*args):
    import io
    import json
    from contextlib import redirect_stdout

    buf = io.StringIO()
    with redirect_stdout(buf):
        assert main(["profile", *map(str, args), "--json"]) == 0
    return json.loads(buf.getvalue())


# --------------------------------------------------------------------------- libraries


@pytest.mark.parametrize("first", ["pyproj", "eccodes"])
def test_eccodes_and_pyproj_in_one_process(first):
    # eccodeslib's wheel brings its own PROJ beside pyproj's: both must work in one
    # process whichever is imported first (a fresh interpreter per order)
    code = """
import sys
def proj():
    import pyproj
    lcc = "+proj=lcc +lat_1=25 +lat_0=25 +lon_0=-95 +R=6371229"
    t = pyproj.Transformer.from_crs("EPSG:4326", lcc, always_xy=True)
    x, y = t.transform(-100.0, 40.0)
    assert pyproj.CRS.from_epsg(3857).name == "WGS 84 / Pseudo-Mercator"
    return round(x), round(y)
def ec():
    import eccodes
    h = eccodes.codes_grib_new_from_samples("regular_ll_pl_grib2")
    v = eccodes.codes_get_values(h).size
    eccodes.codes_release(h)
    return v
first = sys.argv[1]
out = (proj(), ec(), proj()) if first == "pyproj" else (ec(), proj(), ec())
print(out)
"""
    r = subprocess.run([sys.executable, "-c", code, first], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    # the same Lambert point whichever library came first (pyproj's PROJ is the one used)
    assert "(-441547, 1696174)" in r.stdout


# --------------------------------------------------------------------------- GFS GRIB2


def test_gfs_grib2_screens_without_conversion(screen_cli, real_data):
    code, fc, rows = screen_cli(
        [[-88.0, 43.0, 3000.0], [-84.0, 43.0, 3000.0]],
        real_data / GFS,
        departure="2011-01-15T11:30:00Z",
        name="lakes shuttle",
    )
    assert code == 0 and rows and all(r["covered"] == "True" for r in rows)
    var = fc["provenance"]["variables"]
    assert all(v["found_by"].startswith("GRIB parameter GRIB2") for v in var.values())
    # three level sets in the file (26, 25 and 21 levels): nothing dropped
    assert {"relative_humidity", "vertical_velocity", "cloud_liquid"} <= set(var)
    assert var["cloud_liquid"]["missing_levels"] == "70, 50, 30, 20, 10 hPa"
    assert var["relative_humidity"]["humidity_convention"].startswith("ncep-gfs")
    assert "mass fraction" in var["cloud_liquid"]["converted"]
    assert fc["provenance"]["format"] == "GRIB2"


def test_gfs_saturation_below_zero_is_read_over_water(real_data):
    # a 700 hPa point the GFS calls saturated (its RH is over a water-ice blend below 0 C,
    # NCEP UPP CALRH_GFS): read over water it is below saturation by e_blend / e_water
    lat, lon, rh = _raw(real_data / GFS, "r", 700)
    _, _, t = _raw(real_data / GFS, "t", 700)
    region = (np.abs(lat - 45) <= 15) & (lon >= 230) & (lon <= 300)
    pick = np.argwhere(region & (rh >= 99.5) & (t < 263.0) & (t > 253.2))
    assert pick.size, "the raw file has saturated sub-zero 700 hPa points over North America"
    j, i = pick[0]
    out = _profile("--forecast", real_data / GFS, f"--at={lat[j, i]},{lon[j, i] - 360}")
    level = next(lv for lv in out["levels"] if lv["pressure_hpa"] == 700.0)
    tk = t[j, i]
    factor = saturation_vapor_pressure_ncep_gfs(
        tk, phase="mixed"
    ) / saturation_vapor_pressure_ncep_gfs(tk)
    # RH printed to 0.1 % and the raw RH to 0.1 % (GRIB packing): 0.3 % points
    assert level["relative_humidity_pct"] == pytest.approx(rh[j, i] * factor, abs=0.3)
    assert level["relative_humidity_pct"] < 96.0  # not saturated over water


def test_gfs_warm_nose_gives_freezing_rain_and_its_freezing_level(real_data, screen_cli):
    # raw column at 40 N, 92.5 W: -3.1 C at 950 hPa under +0.7 C at 925 hPa (a warm nose)
    lat, lon, t950 = _raw(real_data / GFS, "t", 950)
    j, i = np.argwhere((lat == 40.0) & (lon == 267.5))[0]
    t925 = _raw(real_data / GFS, "t", 925)[2][j, i]
    z950, z925 = (_raw(real_data / GFS, "gh", lev)[2][j, i] for lev in (950, 925))
    assert t950[j, i] < 273.15 < t925
    crossing = z950 + (273.15 - t950[j, i]) / (t925 - t950[j, i]) * (z925 - z950)
    out = _profile("--forecast", real_data / GFS, "--at=40.0,-92.5", "--airframe", "light-piston")
    # the freezing level is the base of the warm nose, linear in height between the levels
    assert out["freezing_level_m"] == pytest.approx(crossing, abs=1.0)  # printed to 0.1 m
    code, fc, rows = screen_cli(
        [[-95.0, 40.0, 600.0], [-87.5, 40.0, 600.0]],
        real_data / GFS,
        departure="2011-01-15T11:00:00Z",
        name="nose run",
    )
    assert code == 0
    near = [r for r in rows if abs(float(r["lon"]) + 92.5) < 0.05]
    assert near and all(r["sld"] == "freezing-rain" for r in near)


# --------------------------------------------------------------------------- NAM Lambert


def test_nam_lambert_grid_built_from_the_grid_definition(real_data):
    fc = load_forecast(real_data / NAM)
    src = fc.sources[0]
    gm = src.grid_mapping
    assert gm["grid_mapping_name"] == "lambert_conformal_conic"
    assert gm["earth_radius"] == 6371229.0  # shape of the earth 6 as coded
    assert np.allclose(np.diff(src.x), 81271.0) and np.allclose(np.diff(src.y), 81271.0)
    # every grid point back to latitude/longitude matches ecCodes' own coordinates
    from pyproj import Transformer

    lat, lon, _ = _raw(real_data / NAM, "t", 500)
    inv = Transformer.from_crs(src.crs, src.crs.geodetic_crs, always_xy=True)
    xx, yy = np.meshgrid(src.x, src.y)
    glon, glat = inv.transform(xx, yy)
    # 1e-4 degree: ecCodes' coordinates and ours come from the same sphere and
    # projection; what is left is floating-point round-off in both computations
    assert np.max(np.abs(glat - lat)) < 1e-4
    assert np.max(np.abs((glon - lon + 180) % 360 - 180)) < 1e-4


def test_nam_grid_relative_winds_are_rotated_to_earth_relative(real_data):
    # NCEP's Lambert rotation (Office Note 388, from memory): the grid's y axis leans
    # from true north by n (lon - LoV), n = sin(25 deg) for a cone tangent at 25 N
    fc = load_forecast(real_data / NAM)
    lat, lon, ug = _raw(real_data / NAM, "u", 500)
    vg = _raw(real_data / NAM, "v", 500)[2]
    j, i = 30, 80  # a point well east of the central meridian (265 E)
    a = np.sin(np.radians(25.0)) * np.radians(lon[j, i] - 265.0)
    u_e = ug[j, i] * np.cos(a) + vg[j, i] * np.sin(a)
    v_e = -ug[j, i] * np.sin(a) + vg[j, i] * np.cos(a)
    cs = fc.columns_at([lat[j, i]], [lon[j, i] - 360.0], [fc.valid_times[0]])
    k = int(np.flatnonzero(cs.columns["pressure"][0] == 50000.0)[0])
    # 0.05 m/s: bilinear interpolation at a grid point returns that point (round-off)
    assert cs.wind_u[0, k] == pytest.approx(u_e, abs=0.05)
    assert cs.wind_v[0, k] == pytest.approx(v_e, abs=0.05)
    assert abs(u_e - ug[j, i]) > 0.5  # the rotation matters here


def test_nam_route_leaving_the_grid_becomes_a_gap_where_the_grid_ends(real_data, screen_cli):
    # westward at 45 N over the Pacific; the grid's west edge (ecCodes' longitudes of
    # its first column) is crossed between the edge points around 45 N
    lat, lon, _ = _raw(real_data / NAM, "t", 500)
    edge_lat, edge_lon = lat[:, 0], lon[:, 0] - 360.0
    west = np.interp(45.0, edge_lat, edge_lon)
    code, fc, rows = screen_cli(
        [[-142.0, 45.0, 3000.0], [-152.0, 45.0, 3000.0]],
        real_data / NAM,
        departure="2018-09-17T00:00:00Z",
        name="coast run",
        airframe="twin-turboprop",
    )
    assert code == 0
    gaps = [float(r["lon"]) for r in rows if r["gap_reason"] == "outside-grid"]
    covered = [float(r["lon"]) for r in rows if r["covered"] == "True"]
    # samples about 1 km apart (0.013 deg of longitude here); the edge is on a great circle
    # of the projection, the route on a geodesic: 0.2 degree apart at most at 45 N
    assert min(covered) == pytest.approx(west, abs=0.2)
    assert max(gaps) == pytest.approx(west, abs=0.2) and max(gaps) < min(covered)


# --------------------------------------------------------------------------- ECMWF GRIB1


def test_ecmwf_grib1_time_and_step_become_valid_times(real_data):
    fc = load_forecast(real_data / ECMWF)
    # 2 runs a day for 2 days x steps 0 and 6 h: 8 valid times, 6 h apart
    assert fc.valid_times.size == 8
    assert np.all(np.diff(fc.valid_times).astype("timedelta64[h]").astype(int) == 6)
    var = fc.describe()["variables"]
    assert var["height"]["units"] == "m**2 s**-2"  # geopotential, divided by g
    assert var["relative_humidity"]["humidity_convention"].startswith("ifs-mixed")


def test_ecmwf_relative_humidity_is_converted_from_the_mixed_phase(real_data):
    # ECMWF defines RH over water above 0 C, over ice below -23 C, quadratic between
    # (ECMWF parameter database, paramId 157; IFS doc. Part IV): read over water it is
    # RH * e_mixed / e_water, with the IFS Tetens formulas
    lat, lon, r = _raw(real_data / ECMWF, "r", 500, valid=0)
    t = _raw(real_data / ECMWF, "t", 500, valid=0)[2]
    j, i = np.argwhere((t > 250.5) & (t < 270.0) & (np.abs(lat) < 60) & (r > 30))[0]
    fc = load_forecast(real_data / ECMWF)
    cs = fc.columns_at([lat[j, i]], [(lon[j, i] + 180) % 360 - 180], [fc.valid_times[0]])
    k = int(np.flatnonzero(cs.columns["pressure"][0] == 50000.0)[0])
    factor = saturation_vapor_pressure_ifs(t[j, i], phase="mixed") / saturation_vapor_pressure_ifs(
        t[j, i]
    )
    assert factor < 0.99
    # 1e-6: the same arithmetic on the same decoded values (GRIB1 packing is exact here)
    assert cs.columns["relative_humidity"][0, k] == pytest.approx(
        min(r[j, i] / 100 * factor, 1.0), rel=1e-6
    )


def test_ecmwf_grib1_screens_through_the_cli(real_data, screen_cli):
    code, fc, rows = screen_cli(
        [[0.0, 50.0, 5500.0], [20.0, 50.0, 5500.0]],
        real_data / ECMWF,
        departure="2024-06-03T11:00:00Z",
        name="channel hop",
        airframe="twin-turboprop",
    )
    assert code == 0 and all(r["covered"] == "True" for r in rows)
    assert fc["provenance"]["format"] == "GRIB1"
    assert "ECMWF" in (real_data / "README.md").read_text()  # the source is named


# --------------------------------------------------------------------------- edge cases


def _messages(path, keep):
    """Raw GRIB messages of a file (ecCodes, one field each) that ``keep(handle)`` accepts."""
    import eccodes

    eccodes.codes_grib_multi_support_on()
    out = []
    with open(path, "rb") as fh:
        while (h := eccodes.codes_grib_new_from_file(fh)) is not None:
            try:
                if keep(h):
                    out.append(eccodes.codes_get_message(h))
            finally:
                eccodes.codes_release(h)
    return out


def _cli_error(capsys, path, *extra):
    code = main(["screen", str(path), "--forecast", str(path), *extra])
    err = capsys.readouterr().err.strip()
    return code, err


def _one_line_refusal(capsys, tmp_path, grib, *extra):
    route = tmp_path / "r.geojson"
    route.write_text(
        '{"type":"Feature","properties":{"name":"edge","departure_time":"2024-06-03T00:00:00Z"},'
        '"geometry":{"type":"LineString","coordinates":[[0,50,3000],[5,50,3000]]}}'
    )
    out = tmp_path / "o.geojson"
    code = main(
        [
            "screen",
            str(route),
            "--forecast",
            str(grib),
            "-a",
            "light-piston",
            "-o",
            str(out),
            *extra,
        ]
    )
    err = capsys.readouterr().err.strip()
    assert code == 2 and "\n" not in err and str(grib) in err and "fix:" in err
    assert not out.exists()
    return err


def test_truncated_grib_is_one_line(real_data, tmp_path, capsys):
    data = (real_data / ECMWF).read_bytes()
    bad = tmp_path / "cut.grib"
    bad.write_bytes(data[: len(data) // 2 + 77])  # ends inside a message
    err = _one_line_refusal(capsys, tmp_path, bad)
    assert "GRIB1" in err and "truncated" in err


def test_grib_without_humidity_is_one_line_listing_what_it_has(real_data, tmp_path, capsys):
    import eccodes

    msgs = _messages(real_data / ECMWF, lambda h: eccodes.codes_get(h, "shortName") != "r")
    bad = tmp_path / "dry.grb"
    bad.write_bytes(b"".join(msgs))
    err = _one_line_refusal(capsys, tmp_path, bad)
    assert "no humidity" in err and "t_isobaric" in err and "--var" in err


def test_thinned_grid_is_refused_in_one_line(tmp_path, capsys):
    import eccodes

    h = eccodes.codes_grib_new_from_samples("reduced_gg_pl_32_grib2")
    msgs = []
    for name, level in (("t", 850), ("t", 700), ("r", 850), ("r", 700)):
        eccodes.codes_set(h, "shortName", name)
        eccodes.codes_set(h, "typeOfLevel", "isobaricInhPa")
        eccodes.codes_set(h, "level", level)
        msgs.append(eccodes.codes_get_message(h))
    eccodes.codes_release(h)
    bad = tmp_path / "thinned.bin"  # told apart by content, not by its name
    bad.write_bytes(b"".join(msgs))
    err = _one_line_refusal(capsys, tmp_path, bad)
    assert "GRIB2" in err and "reduced (thinned) grid" in err and "regular" in err


def _ensemble_file(real_data, tmp_path, members=(1, 2)):
    """NAM temperature, humidity and heights written as ensemble members."""
    import eccodes

    keep = lambda h: (  # noqa: E731
        eccodes.codes_get(h, "shortName") in ("t", "r", "gh")
        and eccodes.codes_get(h, "typeOfLevel") == "isobaricInhPa"
    )
    out = []
    for number in members:
        for msg in _messages(real_data / NAM, keep):
            h = eccodes.codes_new_from_message(msg)
            eccodes.codes_set(h, "productDefinitionTemplateNumber", 1)
            eccodes.codes_set(h, "perturbationNumber", number)
            eccodes.codes_set(h, "numberOfForecastsInEnsemble", len(members))
            out.append(eccodes.codes_get_message(h))
            eccodes.codes_release(h)
    path = tmp_path / "members.grib2"
    path.write_bytes(b"".join(out))
    return path


def test_ensemble_is_screened_as_its_members(real_data, tmp_path, screen_cli):
    # a GRIB number axis forms members (docs/contracts.md, section 8)
    path = _ensemble_file(real_data, tmp_path)
    code, fc, rows = screen_cli(
        [[-100.0, 40.0, 3000.0], [-98.0, 40.0, 3000.0]],
        path,
        departure="2018-09-17T00:00:00Z",
    )
    assert code == 0 and all(r["members_covering"] == "2" for r in rows)
    assert fc["summaries"][0]["members"] == 2
    assert fc["provenance"]["kind"] == "ensemble" and fc["provenance"]["members"] == 2


def test_one_member_of_an_ensemble_is_read_with_member(real_data, tmp_path, screen_cli):
    path = _ensemble_file(real_data, tmp_path)
    code, fc, rows = screen_cli(
        [[-100.0, 40.0, 3000.0], [-98.0, 40.0, 3000.0]],
        path,
        departure="2018-09-17T00:00:00Z",
        extra=("--member", "2"),
    )
    assert code == 0 and all(r["covered"] == "True" for r in rows)
    assert any("ensemble member 2 of 2" in n for n in fc["provenance"]["notes"])


def test_grib_told_apart_by_content_not_name(real_data, tmp_path):
    # a GRIB1 file named as GRIB2 (and as NetCDF) is still read as GRIB1
    for name in ("pressure.grib2", "pressure.nc"):
        p = tmp_path / name
        p.write_bytes((real_data / ECMWF).read_bytes())
        assert load_forecast(p).describe()["format"] == "GRIB1"


# --------------------------------------------------------------------------- other grids


def _write_grid(path, sample, geometry):
    """A small GRIB2 file on one grid (ecCodes sample + our geometry): constant fields.

    Invented values, for the geometry only: 260/250 K, 80/70 %, 1500/3000 m at 850/700
    hPa, and a grid-relative wind of 10 m/s along the grid's x axis.
    """
    import eccodes

    msgs = []
    values = [("t", 260.0, 250.0), ("r", 80.0, 70.0), ("gh", 1500.0, 3000.0)]
    values += [("u", 10.0, 10.0), ("v", 0.0, 0.0)]
    for name, low, high in values:
        for level, value in ((850, low), (700, high)):
            h = eccodes.codes_grib_new_from_samples(sample)
            for key, v in geometry.items():
                eccodes.codes_set(h, key, v)
            eccodes.codes_set(h, "shortName", name)
            eccodes.codes_set(h, "typeOfLevel", "isobaricInhPa")
            eccodes.codes_set(h, "level", level)
            eccodes.codes_set(h, "resolutionAndComponentFlags", 56)  # winds grid-relative
            nx = geometry.get("Nx", geometry.get("Ni"))
            ny = geometry.get("Ny", geometry.get("Nj"))
            eccodes.codes_set_values(h, np.full(nx * ny, value))
            msgs.append(eccodes.codes_get_message(h))
            eccodes.codes_release(h)
    path.write_bytes(b"".join(msgs))
    return path


GRIDS = {
    "polar_stereographic_pl_grib2": {
        "Nx": 20,
        "Ny": 20,
        "latitudeOfFirstGridPointInDegrees": 45.0,
        "longitudeOfFirstGridPointInDegrees": 230.0,
        "LaDInDegrees": 60.0,
        "orientationOfTheGridInDegrees": 255.0,
        "DxInMetres": 100000.0,
        "DyInMetres": 100000.0,
        "jScansPositively": 1,
    },
    "rotated_ll_pl_grib2": {
        "Ni": 16,
        "Nj": 11,
        "latitudeOfSouthernPoleInDegrees": -40.0,
        "longitudeOfSouthernPoleInDegrees": 10.0,
        "latitudeOfFirstGridPointInDegrees": -10.0,
        "longitudeOfFirstGridPointInDegrees": -10.0,
        "latitudeOfLastGridPointInDegrees": 10.0,
        "longitudeOfLastGridPointInDegrees": 20.0,
        "iDirectionIncrementInDegrees": 2.0,
        "jDirectionIncrementInDegrees": 2.0,
        "jScansPositively": 1,
    },
}


@pytest.mark.parametrize("sample", sorted(GRIDS))
def test_polar_stereographic_and_rotated_grids_with_earth_relative_winds(tmp_path, sample):
    from pyproj import Geod

    path = _write_grid(tmp_path / "grid.grib2", sample, GRIDS[sample])
    fc = load_forecast(path)  # refused if our corners missed ecCodes' coordinates
    lat, lon, _ = _raw(path, "t", 850)
    j, i = 5, 7
    cs = fc.columns_at([lat[j, i]], [(lon[j, i] + 180) % 360 - 180], [fc.valid_times[0]])
    np.testing.assert_allclose(cs.columns["temperature"][0], [260.0, 250.0])
    # grid north measured on ecCodes' own coordinates: the azimuth from the point below
    # to the point above along the grid's y axis (WGS 84 geodesic; the grids use a
    # sphere, which moves the azimuth by under 0.2 degree at these latitudes)
    az, _, _ = Geod(ellps="WGS84").inv(lon[j - 1, i], lat[j - 1, i], lon[j + 1, i], lat[j + 1, i])
    a = np.radians(az)
    k = int(np.flatnonzero(cs.columns["pressure"][0] == 85000.0)[0])
    assert cs.wind_u[0, k] == pytest.approx(10.0 * np.cos(a), abs=0.05)
    assert cs.wind_v[0, k] == pytest.approx(-10.0 * np.sin(a), abs=0.05)
    if sample.startswith("polar"):
        # polar stereographic: grid north leans by lon - orientation (from memory)
        assert np.degrees(a) == pytest.approx(lon[j, i] - 255.0, abs=0.3)


def test_model_level_grib_is_refused_in_one_line(tmp_path, capsys):
    # hybrid model levels need the vertical coordinate table and surface pressure to
    # place them; they are refused, never read as if they were pressure levels
    import eccodes

    msgs = []
    for name in ("t", "q"):
        for level in (1, 2, 3):
            h = eccodes.codes_grib_new_from_samples("regular_ll_pl_grib2")
            eccodes.codes_set(h, "shortName", name)
            eccodes.codes_set(h, "typeOfLevel", "hybrid")
            eccodes.codes_set(h, "level", level)
            msgs.append(eccodes.codes_get_message(h))
            eccodes.codes_release(h)
    path = tmp_path / "model-levels.grib2"
    path.write_bytes(b"".join(msgs))
    err = _one_line_refusal(capsys, tmp_path, path)
    assert "GRIB2" in err and "hybrid" in err and "model levels" in err


def test_profile_levels_without_data_are_unknown_not_zero(real_data):
    """GFS gives cloud water and vertical velocity only up to 100 hPa (real NCEP GFS file,
    origin in tests/data/real/README.md): the levels above are coverage gaps, and their
    liquid, basis and ice type read unknown (null), never 0 or "none"."""
    from icing import load_forecast
    from icing.runs import diagnose_point

    fc = load_forecast(real_data / "gfs.t12z.pgrbf120.2p5deg.grib2")
    result = diagnose_point(fc, 45.0, -90.0, airframe="light-piston")
    gaps = [lv for lv in result["levels"] if not lv["valid"] and not lv["below_ground"]]
    assert [lv["pressure_hpa"] for lv in gaps] == [70.0, 50.0, 30.0, 20.0, 10.0]
    for lv in gaps:
        assert lv["severity"] == "coverage-gap" and lv["sld"] == "coverage-gap"
        assert lv["lwc_g_m3"] is None and lv["basis"] == "coverage-gap"
        assert lv["ice_type"] is None and lv["accretion_rate_mm_h"] is None
    known = [lv for lv in result["levels"] if lv["valid"] and lv["severity"] == "none"]
    assert known and all(lv["lwc_g_m3"] == 0.0 and lv["ice_type"] == "none" for lv in known)


ERA5_EDA = "era5_eda_members_2017-01-01T00Z.grib"


def test_grib1_members_of_an_assimilation_ensemble_are_members(real_data):
    """ERA5's ensemble of data assimilations (real ECMWF file, origin in
    tests/data/real/README.md): ten analyses numbered 0-9 (marsType "an", not cf/pf).
    They are members, never ten fields for one place of which the last was taken."""
    from icing.forecast.grib import scan

    fields = scan(real_data / ERA5_EDA, 1)[0]
    assert {f.number for f in fields} == set(range(10))
    assert {f.product for f in fields} == {"member"}


def test_a_repeated_field_is_said_not_taken_for_an_earlier_run(real_data, tmp_path):
    """A field repeated in a real file (ECMWF open data, origin in the README; the
    repetition is ours): the first is kept and the provenance says so, instead of
    calling the repeat a field of an earlier run."""
    msgs = _messages(real_data / ECMWF, lambda h: True)
    twice = tmp_path / "twice.grib"
    twice.write_bytes(b"".join(msgs) + msgs[0])
    notes = load_forecast(twice).describe()["notes"]
    assert any("1 field(s) repeating another of the same run" in n for n in notes), notes
    assert not any("earlier runs" in n for n in notes), notes
