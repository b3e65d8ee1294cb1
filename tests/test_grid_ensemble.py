"""``icing grid`` over ensembles and parametric spreads: per-cell members and fractions.

The ensembles are the ``gfs_ensemble`` fixture's: built from the real NCEP GFS file of
tests/data/real (2011-01-15 12 UTC, origin in its README.md), the control member the
real forecast unchanged, the other members dried (relative humidity 5 %, no cloud
water), an invented perturbation of our own, never a check value. The checks compare
the member arithmetic with grids of the members themselves (a regression of this code,
not an independent physics value): where the control ices and a dried member does not,
exactly one member of four is at that word or worse. The Skerrow Basin fixtures are
invented (a scenario of our own).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from icing import codes
from icing.cli import main
from icing.forecast import load_forecast
from icing.hazards.bands import COVERAGE_BELOW_GROUND, COVERAGE_GAP, parse_bands
from icing.hazards.gridded import grid_feature_collection, member_fraction_features
from icing.runs.grid import GridOptions, grid_forecast

ROOT = Path(__file__).resolve().parents[1]
LATLON = ROOT / "fixtures" / "skerrow-latlon.nc"
BANDS = "0:20000:10000"  # two bands keep the runs short
WORDS = ("trace", "light", "moderate", "severe")


def _grid(forecast, bands=BANDS, airframe="light-piston", **kw):
    kw.setdefault("workers", 1)
    return grid_forecast(
        forecast, airframe=airframe, options=GridOptions(bands=parse_bands(bands), **kw)
    )


@pytest.fixture(scope="module")
def grids(gfs_ensemble):
    """The four-member GRIB ensemble gridded, and its control and a dried member alone."""
    return {
        "ensemble": _grid(gfs_ensemble.grib),
        "control": _grid(gfs_ensemble.gfs),
        "dried": _grid(load_forecast(gfs_ensemble.grib, member=1)),
    }


def test_one_icing_member_of_four_gives_a_quarter_at_each_level_it_reaches(grids):
    ens, control, dried = grids["ensemble"], grids["control"], grids["dried"]
    assert ens.members == 4 and ens.member_statistic == "median"
    assert ens.member_labels[0] == "number 0 (control)"
    real, dry = control.severity, dried.severity
    everyone = ens.members_covering == 4
    only_control_ices = everyone & (dry == codes.SEV_NONE)
    for word in WORDS:
        k = codes.severity_code(word)
        frac = ens.member_fraction[word]
        want = np.where(real >= k, 0.25, 0.0).astype(np.float32)
        assert np.array_equal(frac[only_control_ices], want[only_control_ices]), word
        assert ((real >= k) & only_control_ices).any() or word == "severe"
    # the check is not vacuous: the real forecast ices in thousands of cells
    assert np.count_nonzero(only_control_ices & (real >= codes.SEV_LIGHT)) > 1000
    # the median of one icing member and three dry ones is "none"; the worst is the control's
    assert np.all(ens.severity[only_control_ices] == codes.SEV_NONE)
    assert np.array_equal(ens.severity_worst_member[everyone], np.maximum(real, dry)[everyone])


def test_cells_some_members_miss_say_how_many_cover_them(grids):
    ens, control, dried = grids["ensemble"], grids["control"], grids["dried"]
    # where the dried members cannot assert "none" (part of the band unknown), only the
    # control has data: it alone makes the fractions and the word, and members says 1
    alone = (control.severity >= 0) & (dried.severity == codes.GAP)
    assert alone.any()
    assert np.all(ens.members_covering[alone] == 1)
    assert np.array_equal(ens.severity[alone], control.severity[alone])
    assert np.all(ens.coverage[alone] == 1)  # partial: some member lacks it
    # no member covers: a gap (or the ground), never "none", fractions NaN
    none = ens.members_covering == 0
    assert none.any() and np.all(ens.severity[none] == codes.GAP)
    assert np.all(np.isin(ens.coverage[none], [COVERAGE_GAP, COVERAGE_BELOW_GROUND]))
    for word in WORDS:
        assert np.isnan(ens.member_fraction[word][none]).all()
        assert not np.isnan(ens.member_fraction[word][~none]).any()


def test_statistic_member_physics_and_worst_statistic(gfs_ensemble, grids):
    ens, control = grids["ensemble"], grids["control"]
    # where only the control has data, the statistic's member is the control: its values
    alone = (ens.members_covering == 1) & (control.severity >= codes.SEV_TRACE)
    for name in ("lwc", "mvd", "accretion_rate", "sld"):
        assert np.array_equal(
            getattr(ens, name)[alone], getattr(control, name)[alone], equal_nan=True
        ), name
    worst = _grid(gfs_ensemble.grib, member_statistic="worst")
    assert np.array_equal(worst.severity, ens.severity_worst_member)
    assert worst.assumptions["members"]["statistic"] == "worst"


def test_netcdf_realization_axis_and_pool_give_the_same_cells(gfs_ensemble, grids):
    """A CF realization axis read in two worker processes: the GRIB ensemble's cells."""
    nc = _grid(gfs_ensemble.netcdf, workers=2, block_columns=3000)
    ens = grids["ensemble"]
    for name in ("severity", "severity_worst_member", "members_covering", "coverage"):
        assert np.array_equal(getattr(nc, name), getattr(ens, name)), name
    for word in WORDS:
        assert np.array_equal(nc.member_fraction[word], ens.member_fraction[word], equal_nan=True)


def test_memory_follows_the_block_not_the_member_count(gfs_ensemble):
    """A block of four members holds a quarter of the grid cells of a single forecast's."""
    counts = {}
    for name, path in (("single", gfs_ensemble.gfs), ("ensemble", gfs_ensemble.grib)):
        seen = []
        grid_forecast(
            path,
            airframe="light-piston",
            options=GridOptions(bands=parse_bands("0:10000:10000"), workers=1, block_columns=1440),
            progress=lambda done, total, seen=seen: seen.append(total),
        )
        counts[name] = seen[-1]
    # 73 rows of 144 cells: 10 rows a block alone, 2 rows (of four members each) together
    assert counts == {"single": 8, "ensemble": 37}


def test_ensemble_files_with_a_missing_valid_time(tmp_path):
    """Time-lagged members: the one without the last valid time is a gap there, said."""
    import xarray as xr

    short = tmp_path / "skerrow-two-times.nc"
    with xr.open_dataset(LATLON) as ds:
        ds.isel(time=slice(0, 2)).load().to_netcdf(short)
    fc = load_forecast([LATLON, short], ensemble=True)
    ens = _grid(fc, times="all", airframe="twin-turboprop", bands="0:10000:5000")
    single = _grid(LATLON, times="all", airframe="twin-turboprop", bands="0:10000:5000")
    assert ens.members == 2 and len(ens.times) == 3
    last = ens.members_covering[2]
    covered = single.severity[2] >= 0
    assert np.all(last[covered] == 1) and np.all(last[~covered] == 0)
    assert np.array_equal(ens.severity[2], single.severity[2])
    # at the first times both members are the same forecast: all or nothing, never between
    for word in WORDS:
        f = ens.member_fraction[word][:2]
        assert np.all(np.isin(f[np.isfinite(f)], [0.0, 1.0]))
    assert np.array_equal(ens.severity[:2], single.severity[:2])


def test_spread_members_differ_only_in_the_stated_choice():
    one = _grid(LATLON, airframe="twin-turboprop")
    spread = _grid(LATLON, airframe="twin-turboprop", spread="air-mass")
    assert spread.members == 2 and spread.member_labels == ("as stated", "air-mass=continental")
    assert spread.assumptions["members"]["member_list"][1]["choice"] == "air-mass"
    # two members: a fraction is 0, 1/2 or 1, and the stated member is the single grid
    for word in WORDS:
        f = spread.member_fraction[word]
        k = codes.severity_code(word)
        assert np.all(np.isin(f[np.isfinite(f)], [0.0, 0.5, 1.0]))
        assert np.all(f[one.severity >= k] >= 0.5)
    assert np.all(spread.severity_worst_member >= one.severity)


# ------------------------------------------------------------------ outputs


def test_command_writes_fractions_polygons_and_maps(gfs_ensemble, tmp_path, capsys,
                                                    check_grid_polygons):  # fmt: skip
    import xarray as xr

    out, nc, maps = tmp_path / "g.geojson", tmp_path / "g.nc", tmp_path / "maps"
    args = ["grid", "-f", str(gfs_ensemble.grib), "-a", "light-piston", "-o", str(out),
            "--bands-ft", BANDS, "--netcdf", str(nc), "--maps", str(maps)]  # fmt: skip
    args += ["--workers", "1"]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "4 members" in text and "median" in text and "any member" in text
    fc = json.loads(out.read_text())
    check_grid_polygons(fc)
    assert fc["members"] == 4 and fc["member_statistic"] == "median"
    icy = [f["properties"] for f in fc["features"] if f["properties"]["kind"] == "icing"]
    assert icy and all(p["members"] == 4 and 1 <= p["members_covering"] <= 4 for p in icy)
    for p in icy:  # the largest fraction in the area reaches at least the area's word
        assert p["member_fraction"][p["severity"]] > 0
        assert codes.severity_code(p["severity_worst_member"]) >= codes.severity_code(
            p["severity"]
        )
    layer = json.loads((tmp_path / "g.member-fraction.geojson").read_text())
    check_grid_polygons(layer)
    assert layer["product"] == "icing grid member fractions"
    kinds = {
        (f["properties"]["kind"], f["properties"].get("threshold")) for f in layer["features"]
    }
    assert {("member-fraction", "light"), ("member-fraction", "moderate")} <= kinds
    assert ("coverage-gap", None) in kinds
    quarter = [f for f in layer["features"] if f["properties"].get("fraction_class") == 1]
    assert quarter and all(f["properties"]["member_fraction_max"] <= 0.25 for f in quarter)
    with xr.open_dataset(nc) as ds:
        assert (
            ds.attrs["ensemble_members"] == 4 and ds.severity.attrs["member_statistic"] == "median"
        )
        for word in WORDS:
            v = ds[f"member_fraction_{word}"]
            assert v.dtype == np.float32 and v.attrs["units"] == "1"
            assert "fraction of members" in v.attrs["long_name"]
            assert float(v.min()) >= 0.0 and float(v.max()) <= 1.0
        assert int(ds["members"].max()) == 4 and ds["severity_worst_member"].dims[0] == "time"
    names = sorted(p.name for p in maps.iterdir())
    assert names == [
        "icing-20110115T1200Z-00000-10000ft-members.png",
        "icing-20110115T1200Z-00000-10000ft.png",
        "icing-20110115T1200Z-10000-20000ft-members.png",
        "icing-20110115T1200Z-10000-20000ft.png",
    ]


def test_fraction_polygons_cover_the_cells_of_their_class(grids):
    from shapely.geometry import shape

    ens = grids["ensemble"]
    layer = grid_feature_collection(ens, member_fraction_features(ens))
    area = sum(
        shape(f["geometry"]).area
        for f in layer["features"]
        if f["properties"].get("threshold") == "light"
        and f["properties"]["altitude_ft_min"] == 0.0
        and f["properties"]["fraction_class"] == 1
    )
    cells = np.argwhere(
        (ens.member_fraction["light"][0, 0] > 0) & (ens.member_fraction["light"][0, 0] <= 0.25)
    )
    assert cells.size
    # 2.5 degree cells, in square degrees: simplification moves edges by under a cell and
    # the polar rows are half cells
    assert area == pytest.approx(len(cells) * 2.5 * 2.5, rel=0.35)


# ------------------------------------------------------------------ bad input


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--spread"], "--spread applies to a single forecast"),
        (["--member-statistic", "p20"], "--member-statistic"),
    ],
)
def test_bad_member_options_one_line_exit_2(gfs_ensemble, tmp_path, capsys, extra, words):
    out = tmp_path / "g.geojson"
    args = ["grid", "-f", str(gfs_ensemble.grib), "-a", "light-piston", "-o", str(out), *extra]
    assert main(args) == 2
    err = capsys.readouterr().err.strip()
    assert words in err and len(err.splitlines()) == 1 and "fix" in err
    assert list(tmp_path.iterdir()) == []


def test_members_on_other_grids_or_alone_are_refused(gfs_ensemble, tmp_path, capsys):
    out = tmp_path / "g.geojson"
    base = ["grid", "-a", "light-piston", "-o", str(out), "--ensemble"]
    assert main([*base, "-f", str(gfs_ensemble.control), str(gfs_ensemble.cropped)]) == 2
    err = capsys.readouterr().err.strip()
    assert "on another grid" in err and len(err.splitlines()) == 1 and "regrid" in err
    assert main([*base, "-f", str(gfs_ensemble.control)]) == 2
    err = capsys.readouterr().err.strip()
    assert "member" in err and len(err.splitlines()) == 1
    prof = ROOT / "fixtures" / "skerrow-profiles.json"
    assert main([*base, "-f", str(prof), str(LATLON)]) == 2
    assert "not a gridded forecast" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_fractions_map_names_band_airframe_members_statistic_and_caution(grids, tmp_path):
    from icing.outputs.plot.gridmembers import plot_grid_member_map

    path = plot_grid_member_map(grids["ensemble"], 0, 1, tmp_path / "m.svg")
    text = path.read_text()
    for words in ("Fraction of 4 members", "light-piston", "10,000-20,000 ft MSL",
                  "median member", "members at light or worse", "members at moderate or worse",
                  "some members without data", "Estimate only"):  # fmt: skip
        assert words in text, words
