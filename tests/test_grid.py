"""``icing grid``: products per altitude band over a whole forecast, polygons, NetCDF, maps.

The Skerrow Basin fixtures are invented (a scenario of our own); the real files of
``tests/data/real`` (origins in its README.md) check that the grid path reads what
the route path reads. These are behaviour checks of the grid path, not of physics:
the physics is the route's (same functions), and the agreement with ``icing profile``
at a cell's centre is checked here level by level.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import shapely
from shapely.geometry import shape

from icing import codes
from icing.cli import main
from icing.constants import FT
from icing.hazards.bands import (
    COVERAGE_BELOW_GROUND,
    COVERAGE_GAP,
    parse_bands,
)
from icing.hazards.gridded import grid_feature_collection
from icing.runs.grid import GridOptions, grid_forecast

ROOT = Path(__file__).resolve().parents[1]
LATLON = ROOT / "fixtures" / "skerrow-latlon.nc"
LCC = ROOT / "fixtures" / "skerrow-lcc.nc"
SMALL = "0:10000:5000"  # two bands keep the runs short


def _run(forecast, bands=SMALL, **kw):
    opts = GridOptions(bands=parse_bands(bands), workers=kw.pop("workers", 1), **kw)
    return grid_forecast(forecast, airframe=kw.pop("airframe", "twin-turboprop"), options=opts)


@pytest.fixture(scope="module")
def latlon_result():
    return _run(LATLON, bands="0:20000:2000")


# ------------------------------------------------------------------ the command


@pytest.mark.parametrize("fixture", [LATLON, LCC], ids=["latlon", "lcc"])
def test_grid_command_writes_all_three(tmp_path, capsys, fixture, check_grid_polygons):
    out, nc, maps = tmp_path / "g.geojson", tmp_path / "g.nc", tmp_path / "maps"
    args = ["grid", "-f", str(fixture), "-a", "twin-turboprop", "-o", str(out), "--bands-ft",
            SMALL, "--netcdf", str(nc), "--maps", str(maps), "--workers", "1"]  # fmt: skip
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "CAUTION" in text and "0-5,000 ft" in text
    fc = json.loads(out.read_text())
    check_grid_polygons(fc)
    assert fc["caution"] and fc["provenance"]["files"] and fc["assumptions"]["products"]
    import pyogrio  # GDAL reads the polygons as one valid layer

    info = pyogrio.read_info(out)
    assert info["geometry_type"] == "MultiPolygon" and info["features"] == len(fc["features"])
    assert sorted(p.name for p in maps.iterdir()) == [
        "icing-20270114T0600Z-00000-05000ft.png",
        "icing-20270114T0600Z-05000-10000ft.png",
    ]
    _check_netcdf(nc, projected=fixture == LCC)


def _check_netcdf(path, *, projected):
    import xarray as xr

    with xr.open_dataset(path) as ds:
        assert ds.attrs["Conventions"] == "CF-1.8" and "CAUTION" in ds.attrs["caution"]
        assert ds.severity.dims == ("time", "altitude", "y", "x")
        assert ds.severity.attrs["flag_meanings"] == "none trace light moderate severe"
        assert list(ds.severity.attrs["flag_values"]) == [0, 1, 2, 3, 4]
        assert ds.sld.attrs["flag_meanings"] == "none freezing_drizzle freezing_rain"
        assert ds.lwc.attrs["units"] == "kg m-3" and ds.mvd.attrs["units"] == "m"
        assert ds.accretion_rate.attrs["units"] == "m s-1"
        assert ds.severity.attrs["grid_mapping"] == "crs"
        if projected:
            assert ds.crs.attrs["grid_mapping_name"] == "lambert_conformal_conic"
            assert "lat" in ds.coords and "lon" in ds.coords
            from pyproj import CRS, Transformer  # the cells' lon/lat, independently

            crs = CRS.from_wkt(ds.crs.attrs["crs_wkt"])
            xx, yy = np.meshgrid(ds.x.values, ds.y.values)
            lon, lat = Transformer.from_crs(crs, "EPSG:4326", always_xy=True).transform(xx, yy)
            np.testing.assert_allclose(ds.lon.values, lon, atol=1e-9)  # the same transform
            np.testing.assert_allclose(ds.lat.values, lat, atol=1e-9)
        assert ds.altitude.attrs["bounds"] == "altitude_bnds"
    with xr.open_dataset(path, mask_and_scale=False) as raw:
        assert raw.severity.dtype == np.int8 and raw.severity.attrs["_FillValue"] == -1


def test_polygons_match_the_classes(latlon_result, check_grid_polygons):
    """The icing polygons of a band cover exactly the cells of their class (before
    simplification: here compared on areas, which simplification keeps within a cell
    per boundary)."""
    r = latlon_result
    fc = grid_feature_collection(r)
    check_grid_polygons(fc)
    t, b = 0, 3
    lo, hi = r.bands.bounds_ft(b)
    area = {}
    for f in fc["features"]:
        p = f["properties"]
        if p["altitude_ft_min"] == lo and p["kind"] == "icing":
            area[codes.severity_code(p["severity"])] = (
                area.get(codes.severity_code(p["severity"]), 0.0) + shape(f["geometry"]).area
            )
    cell = 0.25 * 0.25  # the fixture's grid spacing [deg^2]
    for k, a in area.items():
        n = int(np.count_nonzero(r.severity[t, b] == k))
        assert a == pytest.approx(n * cell, rel=0.35, abs=3 * cell)


def test_polygons_built_on_threads_are_those_built_one_by_one(latlon_result, monkeypatch):
    import icing.hazards.gridded as gridded

    seen = []
    threaded = gridded.grid_features(latlon_result, progress=lambda d, n: seen.append((d, n)))
    monkeypatch.setattr(gridded, "_threads", lambda n: 1)
    serial = gridded.grid_features(latlon_result)
    assert json.dumps(threaded) == json.dumps(serial)  # the same features, the same order
    nb = latlon_result.bands.count
    assert seen == [(k, nb) for k in range(1, nb + 1)]


def test_same_products_in_every_way_of_running(latlon_result):
    """Blocks of any size and a process pool give the same arrays as one block in-process."""
    small = _run(LATLON, bands="0:20000:2000", block_columns=97)
    pooled = _run(LATLON, bands="0:20000:2000", workers=2, block_columns=300)
    for other in (small, pooled):
        for name in ("severity", "sld", "coverage", "lwc", "mvd", "accretion_rate"):
            assert np.array_equal(
                getattr(latlon_result, name), getattr(other, name), equal_nan=True
            ), name


def test_dask_scheduler_gives_the_same_products(latlon_result):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=1,
        threads_per_worker=2,
        processes=True,
        host="127.0.0.1",
        dashboard_address=":0",
    ) as cluster:
        r = _run(LATLON, bands="0:20000:2000", scheduler=cluster.scheduler_address)
    for name in ("severity", "sld", "coverage", "lwc", "mvd", "accretion_rate"):
        assert np.array_equal(getattr(latlon_result, name), getattr(r, name), equal_nan=True)


# ------------------------------------------------------------------ agreement with profile


def _profile(lat, lon, time):
    from icing.forecast import load_forecast
    from icing.runs.point import diagnose_point

    return diagnose_point(load_forecast(LATLON), lat, lon, time, airframe="twin-turboprop")


def _cells(r, n=12, seed=5):
    rng = np.random.default_rng(seed)
    icy = np.argwhere((r.severity[0] > 0).any(axis=0))
    pick = icy[rng.choice(len(icy), n // 2, replace=False)]
    other = np.argwhere(np.ones(r.severity.shape[2:], bool))
    return np.concatenate([pick, other[rng.choice(len(other), n // 2, replace=False)]])


def test_every_profile_level_in_a_band_is_at_most_the_cell(latlon_result):
    r = latlon_result
    for j, i in _cells(r):
        prof = _profile(r.y[j], r.x[i], r.times[0])
        for b in range(r.bands.count):
            lo, hi = (v * FT for v in r.bands.bounds_ft(b))
            inside = [
                codes.severity_code(lv["severity"])
                for lv in prof["levels"]
                if lv["severity"] not in (None, "coverage-gap") and lo <= lv["height_m"] <= hi
            ]
            if inside:
                assert max(inside) <= r.severity[0, b, j, i]


def test_a_band_between_two_levels_is_their_profile(latlon_result):
    """Bands whose edges are a column's own levels: the cell is the worst level between."""
    r = latlon_result
    for j, i in _cells(r, n=6, seed=11):
        prof = _profile(r.y[j], r.x[i], r.times[0])
        levels = [lv for lv in prof["levels"] if lv["valid"] and not lv["below_ground"]]
        z = [lv["height_m"] for lv in levels]
        for a, c in ((0, 2), (1, 4), (3, 6)):
            if c >= len(z) or z[c] > 12000:
                continue
            edges = f"{z[a] / FT},{z[c] / FT}"
            cell = _single_cell(LATLON, edges, j, i)
            want = max(codes.severity_code(lv["severity"]) for lv in levels[a : c + 1])
            assert cell == want, (j, i, edges)


def _single_cell(path, edges, j, i):
    res = grid_forecast(
        path,
        airframe="twin-turboprop",
        options=GridOptions(bands=parse_bands(edges), workers=1),
    )
    return int(res.severity[0, 0, j, i])


# ------------------------------------------------------------------ real files


@pytest.mark.parametrize(
    "name",
    [
        "gfs.t12z.pgrbf120.2p5deg.grib2",
        "nam.t00z.awp21100.tm00.grib2",
        "ecmwf_pl_regular_ll.grib",
        "GFS_test.nc",
        "wrf_d01_allvars_cropped.nc",
    ],
)
def test_real_files(real_data, name, check_grid_polygons):
    r = _run(real_data / name, bands="0:20000:10000")
    assert r.severity.shape[:2] == (1, 2)
    fc = grid_feature_collection(r)
    check_grid_polygons(fc)
    assert (r.severity >= 0).any()
    # a gap is never "none": every cell not covered says why
    assert np.all((r.severity == codes.GAP) == np.isin(r.coverage, [2, 3]))


def test_global_grid_polygons_split_at_the_antimeridian(real_data):
    """NCEP GFS 2.5 degree (global, 0-357.5 E): polygons reach both sides of 180 degrees."""
    r = _run(real_data / "gfs.t12z.pgrbf120.2p5deg.grib2", bands="0:20000:20000")
    assert r.periodic
    fc = grid_feature_collection(r)
    xs = [shape(f["geometry"]).bounds for f in fc["features"]]
    assert min(x[0] for x in xs) == -180.0 and max(x[2] for x in xs) == 180.0


def test_antimeridian_split_of_a_regional_grid():
    from icing.hazards.areas import class_polygons

    codes_ = np.zeros((4, 8), int)
    codes_[1:3, 2:7] = 1  # cells 172..182 E (0.. 2 E beyond 180)
    lon = np.arange(168.0, 184.0, 2.0)
    lat = np.array([50.0, 52.0, 54.0, 56.0])
    g = class_polygons(codes_, lon, lat, wanted=[1])[1]
    parts = list(g.geoms)
    assert len(parts) == 2
    west = [p for p in parts if p.bounds[0] < 0][0]
    east = [p for p in parts if p.bounds[0] > 0][0]
    assert east.bounds[2] == 180.0 and west.bounds[0] == -180.0
    assert east.area + west.area == pytest.approx(5 * 2 * 2 * 2.0, rel=0.1)


def test_a_ring_round_the_pole_is_closed_along_it():
    from icing.hazards.areas import _unwrapped_ring

    lon = np.linspace(-180, 170, 36)
    ring = _unwrapped_ring(np.r_[lon, lon[0]], np.full(37, 80.0))
    assert shapely.Polygon(ring).is_valid and ring[-2:, 1].tolist() == [90.0, 90.0]


# ------------------------------------------------------------------ coverage


def test_missing_data_is_a_gap_never_none(tmp_path):
    import xarray as xr

    with xr.open_dataset(LATLON) as ds:
        ds = ds.load()
    name = next(
        k for k, v in ds.data_vars.items() if v.attrs.get("standard_name") == "air_temperature"
    )
    north = ds["latitude"].values >= 58.0  # the north of the grid has no temperature
    ds[name].values[..., north, :] = np.nan
    bad = tmp_path / "holes.nc"
    ds.to_netcdf(bad)
    r = _run(bad)
    rows = r.y >= 58.0
    assert np.all(r.severity[0][:, rows] == codes.GAP)
    assert np.all(r.coverage[0][:, rows] == COVERAGE_GAP)
    assert np.all(r.severity[0][:, ~rows] >= 0)
    fc = grid_feature_collection(r)
    gaps = [f for f in fc["features"] if f["properties"]["kind"] == "coverage-gap"]
    assert gaps and all(f["properties"]["gap_reason"] == "missing-values" for f in gaps)
    assert all(shape(f["geometry"]).bounds[1] >= 57.8 for f in gaps)


def test_bands_below_the_ground_say_so(real_data):
    """WRF over the Tibetan plateau (terrain 4.5-5.5 km): low bands are under the ground."""
    r = _run(real_data / "wrf_d01_allvars_cropped.nc", bands="0:20000:5000")
    assert np.all(r.coverage[0, 0] == COVERAGE_BELOW_GROUND)
    assert np.all(r.severity[0, 0] == codes.GAP)
    assert (r.severity[0, 3] >= 0).all()  # 15,000-20,000 ft: partly above the ground
    fc = grid_feature_collection(r)
    reasons = {f["properties"].get("gap_reason") for f in fc["features"]}
    assert "below-ground" in reasons


# ------------------------------------------------------------------ bad input


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--bands-ft", "0:20000:0"], "--bands-ft"),
        (["--bands-ft", "5000,1000"], "--bands-ft"),
        (["--bands-ft", "0:1000000:10"], "limit"),
        (["--time", "2030-01-01T00:00Z"], "not a valid time"),
        (["--scheduler", "tcp://127.0.0.1:9"], "scheduler"),
    ],
)
def test_bad_input_one_line_exit_2_nothing_written(tmp_path, capsys, monkeypatch, extra, words):
    monkeypatch.setattr("icing.runs._dask.CONNECT_TIMEOUT_S", 1)
    out = tmp_path / "g.geojson"
    args = ["grid", "-f", str(LATLON), "-a", "twin-turboprop", "-o", str(out), *extra]
    assert main(args) == 2
    err = capsys.readouterr().err.strip()
    assert words in err and len(err.splitlines()) == 1 and "fix" in err
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_profile_files_and_outputs_over_inputs_are_refused(tmp_path, capsys):
    prof = ROOT / "fixtures" / "skerrow-profiles.json"
    assert (
        main(["grid", "-f", str(prof), "-a", "twin-turboprop", "-o", str(tmp_path / "g.geojson")])
        == 2
    )
    assert "gridded forecast" in capsys.readouterr().err
    out = str(tmp_path / "g.geojson")
    assert main(["grid", "-f", str(LATLON), "-a", "twin-turboprop", "-o", out,
                 "--netcdf", str(LATLON)]) == 2  # fmt: skip
    assert "would overwrite" in capsys.readouterr().err
    (tmp_path / "afile").write_text("x")
    assert main(["grid", "-f", str(LATLON), "-a", "twin-turboprop", "-o", out,
                 "--maps", str(tmp_path / "afile")]) == 2  # fmt: skip
    assert not (tmp_path / "g.geojson").exists()


def test_usage_errors_exit_2(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["grid", "-f", str(LATLON), "-a", "twin-turboprop", "-o", "x.geojson",
              "--workers", "0"])  # fmt: skip
    assert stop.value.code == 2 and "--workers" in capsys.readouterr().err


def test_parse_bands():
    assert parse_bands("0:20000:2000").count == 10
    assert parse_bands("-1000,0,500").edges_ft == (-1000.0, 0.0, 500.0)
    assert parse_bands("0:5000:2000").edges_ft == (0.0, 2000.0, 4000.0)


def test_a_hole_at_the_antimeridian_of_a_projected_grid_stays_inside_its_shell():
    """A face with a hole on a Lambert grid centred on 180 (invented geometry; the
    check is geometric): each ring is unwrapped from its own first point, so a hole
    starting east of 180 came out a whole turn from a shell starting west of it
    ("hole lies outside shell"), and the cut at 180 failed on it."""
    from pyproj import CRS

    from icing.hazards.areas import _projected_to_lonlat, class_polygons

    crs = CRS.from_proj4("+proj=lcc +lat_1=42 +lat_2=42 +lat_0=42 +lon_0=180 +R=6371229")
    xe = (np.arange(13) - 6.0) * 20_000.0  # cell edges: 180 E is edge 6
    ye = (np.arange(9) - 4.0) * 20_000.0
    shell = [(1, 1), (11, 1), (11, 7), (1, 7)]  # starts west of 180
    hole = [(8, 3), (8, 5), (4, 5), (4, 3)]  # starts east of 180
    face = shapely.Polygon(shell, [hole])
    (lonlat,) = _projected_to_lonlat(np.array([face], dtype=object), xe, ye, crs)
    assert lonlat.is_valid, shapely.is_valid_reason(lonlat)
    assert lonlat.interiors[0].bounds[0] > lonlat.exterior.bounds[0]
    # and through the whole path: icing round a clear block astride 180
    codes_ = np.zeros((8, 12), int)
    codes_[1:7, 1:11] = 1
    codes_[3:5, 4:8] = 0
    x, y = 0.5 * (xe[1:] + xe[:-1]), 0.5 * (ye[1:] + ye[:-1])
    g = class_polygons(codes_, x, y, crs=crs, wanted=[1])[1]
    full = class_polygons(np.where(codes_ == 0, 1, codes_), x, y, crs=crs, wanted=[1])[1]
    assert g.is_valid and g.area < full.area


def test_polygons_failing_while_the_netcdf_is_written_leave_nothing(tmp_path, latlon_result):
    """The NetCDF is written while the polygons are built; if they fail, no file remains."""
    from icing.outputs.write import write_grid_outputs

    def fail():
        raise RuntimeError("polygons failed")

    out, nc = tmp_path / "g.geojson", tmp_path / "g.nc"
    with pytest.raises(RuntimeError, match="polygons failed"):
        write_grid_outputs(latlon_result, out_geojson=out, netcdf=nc, features=fail)
    assert list(tmp_path.iterdir()) == []
    fc, written = write_grid_outputs(latlon_result, out_geojson=out, netcdf=nc, features=list)
    assert written == [out, nc] and fc["features"] == [] and out.exists() and nc.exists()
