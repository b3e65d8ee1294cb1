"""Radiosonde soundings as forecasts: University of Wyoming text list and CSV, IGRA2.

Real data (tests/data/real/README.md gives origin and licence of each file):

- ``BOI_2010-12-09T12Z_wyoming_text.txt``: Boise, 2010-12-09 12 UTC, University of
  Wyoming text list from MetPy's test data (``staticdata/dec9_sounding.txt``);
- ``BOI_2010-12-09T12Z_wyoming.csv``: the same ascent as the archive's CSV, from
  siphon 0.11.0 (``tests/fixtures/wyoming_high_alt_sounding``);
- ``OUN_2013-01-20T12Z_wyoming_text.txt``: Norman, 2013-01-20 12 UTC, MetPy's
  ``staticdata/jan20_sounding.txt``;
- ``IGRA2_USM00070026-data_2010-06.txt``: Utqiagvik (Barrow), 2010-06-01 00 and
  12 UTC, NOAA IGRA2, from siphon 0.11.0 (``tests/fixtures/igra2_sounding``);
- ``GFS_2015-06-12T15Z_40N105W_ncss_profile.nc`` (and ``_nc4``): a THREDDS NetCDF
  Subset Service point request on GFS 0.5 degree, 40 N 105 W, 2015-06-12 15 UTC,
  CF featureType timeSeriesProfile, from siphon 0.11.0
  (``tests/fixtures/ncss_gfs_netcdf_point``, ``ncss_gfs_netcdf4_point``).

Every expected number below is read off the raw file (named beside it) or derived
from it; pages and files built here around the real tables (a title, a station
block, a mangled line) exercise the readers and are not check values.
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from icing.calc.column import diagnose_columns
from icing.calc.thermo import relative_humidity_from_dewpoint
from icing.cli import main
from icing.constants import FT, T0
from icing.errors import ForecastError, InputError, PlausibilityWarning
from icing.forecast import load_forecast
from icing.forecast.soundings import (
    SoundingSite,
    parse_station,
    read_sounding,
    read_sounding_text,
    sounding_format,
)
from icing.forecast.table import parse_time

REAL = Path(__file__).parent / "data" / "real"
BOI_TEXT = REAL / "BOI_2010-12-09T12Z_wyoming_text.txt"
BOI_CSV = REAL / "BOI_2010-12-09T12Z_wyoming.csv"
OUN_TEXT = REAL / "OUN_2013-01-20T12Z_wyoming_text.txt"
IGRA = REAL / "IGRA2_USM00070026-data_2010-06.txt"
NCSS = REAL / "GFS_2015-06-12T15Z_40N105W_ncss_profile.nc"
NCSS4 = REAL / "GFS_2015-06-12T15Z_40N105W_ncss_profile_nc4.nc"
#: Boise station: 43.56 N 116.21 W from the archive's CSV of this ascent (every row),
#: 874 m the height of the ascent's surface level (919 hPa) in both files
BOI_OPTIONS = ["--station=43.56,-116.21,874", "--time", "2010-12-09T12:00Z"]
#: Norman: 35.18 N 97.44 W as the archive's CSV of Norman ascents gives it; 345 m the
#: height of this ascent's surface level (978 hPa) in the file
OUN_OPTIONS = ["--station=35.18,-97.44,345", "--time", "2013-01-20T12:00Z"]


def _site(station, time):
    site = parse_station(station)
    return SoundingSite(site.lat, site.lon, site.elevation_m, parse_time(time))


BOI_SITE = _site("43.56,-116.21,874", "2010-12-09T12:00Z")
OUN_SITE = _site("35.18,-97.44,345", "2013-01-20T12:00Z")


def _hpa(table, i=0):
    p = table.levels["pressure"][i] / 100.0
    return p[np.isfinite(p)]


def _level(table, p_hpa, key, i=0):
    k = int(np.flatnonzero(np.isclose(table.levels["pressure"][i], p_hpa * 100.0))[0])
    return table.levels[key][i, k]


def _near(tmp_path, lat, lon, time):
    """A short route at 9000 ft MSL beside a station (for the refusals)."""
    rows = [("A", lat, lon, 9000, time), ("B", lat + 0.05, lon, 9000, "")]
    return _route(tmp_path, "r.csv", rows)


def _diagnose(tab, i=None, **surface):
    """The column diagnosis of the table's profiles (all, or profile ``i`` only)."""
    sel = slice(None) if i is None else slice(i, i + 1)
    cols = {k: v[sel] for k, v in tab.levels.items() if k not in ("wind_u", "wind_v")}
    return diagnose_columns(**cols, **{k: v[sel] for k, v in surface.items()})


def _leg(tmp_path, start, end):
    """A two-waypoint route from ``(lat, lon, ft, time)`` to ``(lat, lon, ft, time)``."""
    return _route(tmp_path, "leg.csv", [("START", *start), ("END", *end)])


def _route(tmp_path, name, rows):
    path = tmp_path / name
    lines = ["name,lat,lon,altitude_ft,time"] + [",".join(str(c) for c in r) for r in rows]
    path.write_text("\n".join(lines) + "\n")
    return path


def _screen(tmp_path, route, forecast, *options, airframe="light-piston"):
    out = tmp_path / "out.geojson"
    args = ["screen", route, "--forecast", forecast, *options, "--airframe", airframe]
    code = main([str(a) for a in args] + ["-o", str(out), "--all-segments"])
    assert code == 0
    doc = json.loads(out.read_text())
    return doc["summaries"][0], [f["properties"] for f in doc["features"]], doc


def _refused(capsys, tmp_path, args):
    """Run the CLI, expect exit 2, one line on stderr naming a fix, nothing written."""
    out = tmp_path / "refused.geojson"
    airframe = [] if "--airframe" in args else ["--airframe", "light-piston"]
    code = main([str(a) for a in args] + airframe + ["-o", str(out)])
    err = capsys.readouterr().err.strip()
    assert code == 2
    assert len(err.splitlines()) == 1 and "fix:" in err
    assert not out.exists()
    return err


# ------------------------------------------------------------------ sniffing


def test_formats_told_apart_by_content(tmp_path):
    assert sounding_format(BOI_TEXT) == "wyoming-text"
    assert sounding_format(OUN_TEXT) == "wyoming-text"
    assert sounding_format(BOI_CSV) == "wyoming-csv"
    assert sounding_format(IGRA) == "igra2"
    assert sounding_format(NCSS) == "cf-profile"  # NetCDF classic
    assert sounding_format(NCSS4) == "cf-profile"  # NetCDF-4 / HDF5
    demo = Path(__file__).parents[1] / "icing" / "data" / "demo" / "skerrow-demo.nc"
    assert sounding_format(demo) is None  # a grid stays a grid
    # the extension does not matter
    moved = tmp_path / "sounding.dat"
    moved.write_bytes(IGRA.read_bytes())
    assert sounding_format(moved) == "igra2"
    # icing's own profile CSV is not mistaken for the archive's CSV
    assert sounding_format(Path(__file__).parents[1] / "fixtures" / "skerrow-profiles.csv") is None


# ------------------------------------------------------------------ Boise (Wyoming text)


def test_boise_text_read_from_the_raw_table():
    """Raw values of BOI_2010-12-09T12Z_wyoming_text.txt (MetPy dec9_sounding.txt)."""
    tab = read_sounding(BOI_TEXT, site=BOI_SITE)
    assert tab.size == 1
    assert (tab.lat[0], tab.lon[0]) == (43.56, -116.21)
    assert tab.time[0] == np.datetime64("2010-12-09T12:00")
    p = _hpa(tab)
    # 1000 hPa (185 m) and 925 hPa (822 m) lie below the 874 m station: dropped, and the
    # ascent starts at its surface level, 919 hPa, 874 m, -0.1 C (file line 7)
    assert p[0] == 919.0 and 1000.0 not in p and 925.0 not in p
    assert tab.scalars["surface_height"][0] == 874.0
    assert tab.scalars["surface_pressure"][0] == 91900.0
    assert _level(tab, 919.0, "temperature") - T0 == pytest.approx(-0.1, abs=1e-9)
    # the warm nose: +5.4 C at 890 hPa over the sub-freezing surface (file line 9)
    assert _level(tab, 890.0, "temperature") - T0 == pytest.approx(5.4, abs=1e-9)
    # 115.0 and 20.0 hPa are on two lines each (lines 74/75, 120/121): one kept
    assert np.sum(p == 115.0) == 1 and np.sum(p == 20.0) == 1
    assert _level(tab, 115.0, "height") == 15240.0  # the first of equals, line 74
    assert any("115 hPa repeated: line 74 kept, 75 left out" in n for n in tab.notes)
    assert np.all(np.diff(p) < 0)
    # no dew point above 606 hPa in the file: humidity unknown there, never dry
    rh = tab.levels["relative_humidity"][0][: p.size]
    assert np.all(np.isnan(rh[p < 606.0])) and np.all(np.isfinite(rh[p >= 606.0]))
    # humidity over water from the dew point: 919 hPa, T -0.1 C, Td -0.2 C
    expected = relative_humidity_from_dewpoint(T0 - 0.1, T0 - 0.2)
    assert _level(tab, 919.0, "relative_humidity") == pytest.approx(expected, rel=1e-12)
    # wind 240 deg 3 kt at the surface: from the south-west, u and v both > 0
    u, v = _level(tab, 919.0, "wind_u"), _level(tab, 919.0, "wind_v")
    assert np.hypot(u, v) == pytest.approx(3 * 1852 / 3600, rel=1e-12)
    assert u > 0 and v > 0
    assert any("over liquid water" in n for n in tab.notes)


def test_boise_levels_without_humidity_are_invalid_not_dry():
    """Above 606 hPa the file has no dew point: the diagnosis marks the levels invalid."""
    tab = read_sounding(BOI_TEXT, site=BOI_SITE)
    diag = _diagnose(tab, **tab.scalars)
    p = tab.levels["pressure"][0] / 100.0
    assert not np.any(diag.valid[0][p < 606.0])
    assert np.all(diag.valid[0][p >= 606.0])
    assert not np.any(diag.below_ground[0][np.isfinite(p)])


def test_boise_text_screened_freezing_rain_at_the_surface(tmp_path):
    """Boise 12 UTC: freezing rain at the surface under the warm nose (raw data).

    The file has -0.1 C at the surface (919 hPa, 874 m) and +1.2 to +5.4 C from
    909 to 817 hPa, saturated at 909 hPa and from 803 hPa up: a melting layer over
    a sub-freezing surface. A sounding carries no precipitation rate; with neither a
    rate nor model hydrometeors, the column diagnosis infers precipitation from cloud
    at or above the warm layer (icing.calc.sld.diagnose_sld, stated rule), so a
    departure from the ground meets freezing rain.
    """
    route = _leg(
        tmp_path,
        (43.56, -116.21, round(874 / FT), "2010-12-09T12:00:00Z"),
        (43.62, -115.85, 9000, "2010-12-09T12:10:00Z"),
    )
    summary, segments, doc = _screen(tmp_path, route, BOI_TEXT, *BOI_OPTIONS)
    assert "freezing-rain" in summary["sld"]
    first = segments[0]
    assert first["kind"] == "icing" and first["sld"] == "freezing-rain"
    assert first["temperature_c_max"] == pytest.approx(-0.1, abs=0.05)  # file: -0.1 C
    # the climb meets the supercooled deck of 787-757 hPa (-0.8 to -3.1 C, 98-99 %)
    cold = [s for s in segments if s["kind"] == "icing" and s["sld"] == "none"]
    assert cold and min(s["temperature_c_min"] for s in cold) < -0.5
    # the freezing level lies where -0.1 C (874 m) turns into +1.2 C (962 m): linear
    # interpolation of the raw values gives 874 + 88 x 0.1 / 1.3 = 880.8 m
    assert summary["freezing_level_ft_min"] == pytest.approx(880.8 / FT, abs=10)
    assert summary["gap_km"] == 0.0
    assert doc["provenance"]["humidity"] == "relative_humidity"
    assert any("over liquid water" in n for n in doc["provenance"]["notes"])


def test_boise_high_route_is_a_gap_where_the_sounding_has_no_humidity(tmp_path):
    """16,000 ft (4877 m) lies above 606 hPa (4161 m), where the file has no dew point."""
    route = _leg(
        tmp_path,
        (43.56, -116.21, 16000, "2010-12-09T12:00:00Z"),
        (43.62, -115.85, 16000, "2010-12-09T12:10:00Z"),
    )
    summary, _, _ = _screen(tmp_path, route, BOI_TEXT, *BOI_OPTIONS)
    assert summary["worst_severity"] is None  # unknown, never "none"
    assert summary["gap_km"] > 29.0


def test_boise_profile_command_shows_freezing_rain(capsys):
    code = main(
        ["profile", "--forecast", str(BOI_TEXT), *BOI_OPTIONS, "--at=43.56,-116.21", "--json"]
    )
    assert code == 0
    result = json.loads(capsys.readouterr().out)
    lowest = result["levels"][0]
    assert lowest["pressure_hpa"] == 919.0 and lowest["sld"] == "freezing-rain"


# ------------------------------------------------------------------ Boise (Wyoming CSV)


def test_boise_csv_agrees_with_the_text_list_of_the_same_ascent():
    """Two real renderings of one ascent (text list: MetPy; CSV: siphon fixture)."""
    csv_tab = read_sounding(BOI_CSV)  # position and time from the file itself
    txt_tab = read_sounding(BOI_TEXT, site=BOI_SITE)
    assert (csv_tab.lat[0], csv_tab.lon[0]) == (43.56, -116.21)
    assert csv_tab.time[0] == np.datetime64("2010-12-09T11:06")  # launch, every row
    pc, pt = _hpa(csv_tab), _hpa(txt_tab)
    # pressures given twice (115 and 20 hPa) are resolved by each file's own order
    # (the CSV puts the 15240 m line at 114.9 hPa): compared elsewhere, not here
    common = np.setdiff1d(np.intersect1d(pc, pt), [115.0, 20.0])
    assert common.size > 100
    for key, tol in (("temperature", 0.15), ("height", 0.5)):
        # 0.15 K: the CSV was recomputed by the archive years later; temperatures
        # differ by at most one reporting step of 0.1 C
        a = np.array([_level(csv_tab, p, key) for p in common])
        b = np.array([_level(txt_tab, p, key) for p in common])
        assert np.nanmax(np.abs(a - b)) <= tol
    # the text list gives wind in knots, the CSV in m/s: the same wind
    a = _level(csv_tab, 700.0, "wind_u"), _level(csv_tab, 700.0, "wind_v")
    b = _level(txt_tab, 700.0, "wind_u"), _level(txt_tab, 700.0, "wind_v")
    # CSV 13.9 m/s, text 27 kt = 13.89 m/s: both rounded to their unit
    assert np.hypot(*a) == pytest.approx(np.hypot(*b), abs=0.06)


def test_archive_relative_humidity_is_over_water_below_zero():
    """The archive's CSV states the convention the reader relies on.

    BOI_2010-12-09T12Z_wyoming.csv gives 'relative humidity_%' and, separately,
    'humidity wrt ice_%'. Below 0 C its relative humidity matches e_s,water(Td) /
    e_s,water(T) from its own dew point, and the ice value is the larger one.
    """
    import csv

    rows = list(csv.DictReader(BOI_CSV.read_text().splitlines()))
    worst, checked = 0.0, 0
    for r in rows:
        t, td = r["temperature_C"].strip(), r["dew point temperature_C"].strip()
        rh, rhi = r["relative humidity_%"].strip(), r["humidity wrt ice_%"].strip()
        if not (t and td and rh and rhi) or float(t) >= 0.0:
            continue
        ours = 100 * relative_humidity_from_dewpoint(float(t) + T0, float(td) + T0)
        worst = max(worst, abs(ours - float(rh)))
        assert float(rhi) >= float(rh)
        checked += 1
    assert checked > 20
    # whole percent in the file (0.5) + dew point to 0.1 C (<= 0.4 % at these RH)
    assert worst <= 1.0


# ------------------------------------------------------------------ Norman


def test_norman_below_ground_level_dropped_not_a_gap(tmp_path):
    """OUN_2013-01-20T12Z_wyoming_text.txt (MetPy jan20_sounding.txt): cold and dry.

    1000 hPa is written at -7 m with no data: below the 345 m surface (978 hPa,
    7.8 C). It is dropped, so the column is whole: every level from the surface up
    has temperature and dew point, none is a gap, none is cloud (RH <= 87 % in the
    file's RELH column).
    """
    tab = read_sounding(OUN_TEXT, site=OUN_SITE)
    p = _hpa(tab)
    assert p[0] == 978.0 and 1000.0 not in p
    diag = _diagnose(tab, surface_height=tab.scalars["surface_height"])
    n = p.size
    assert np.all(diag.valid[0][:n]) and not np.any(diag.below_ground[0][:n])
    assert not np.any(diag.cloud[0][:n])
    route = _leg(
        tmp_path,
        (35.18, -97.44, 2000, "2013-01-20T12:00:00Z"),
        (35.45, -97.44, 9000, "2013-01-20T12:10:00Z"),
    )
    summary, _, _ = _screen(tmp_path, route, OUN_TEXT, *OUN_OPTIONS)
    assert summary["worst_severity"] == "none"
    assert summary["gap_km"] == 0.0
    assert summary["sld"] == ["none"]


# ------------------------------------------------------------------ Utqiagvik (IGRA2)


def test_igra2_two_complete_ascents_and_the_cut_one_left_out():
    """IGRA2_USM00070026-data_2010-06.txt (NOAA IGRA2 via siphon's fixture)."""
    tab = read_sounding(IGRA)
    assert list(tab.time) == [np.datetime64("2010-06-01T00:00"), np.datetime64("2010-06-01T12:00")]
    # header LAT 712889, LON -1567833 in ten-thousandths of a degree
    assert tab.lat.tolist() == [71.2889, 71.2889] and tab.lon.tolist() == [-156.7833] * 2
    # the third header (line 318, 147 levels announced) has no data records
    assert any("line 318: 0 of 147 levels" in n for n in tab.notes)
    # surface record "21     0 100980B   12     0B 1000     0    20    51" (line 2)
    assert tab.scalars["surface_height"][0] == 12.0
    assert tab.scalars["surface_pressure"][0] == 100980.0
    # 925 hPa record "10   242  92500   712B  -12B  954     7    41    26" (line 6)
    assert _level(tab, 925.0, "height") == 712.0
    assert _level(tab, 925.0, "temperature") - T0 == pytest.approx(-1.2, abs=1e-9)
    assert _level(tab, 925.0, "relative_humidity") == pytest.approx(0.954, abs=1e-12)
    # wind 41 deg 2.6 m/s: from the north-east, u and v both < 0
    u, v = _level(tab, 925.0, "wind_u"), _level(tab, 925.0, "wind_v")
    assert np.hypot(u, v) == pytest.approx(2.6, rel=1e-12) and u < 0 and v < 0
    # height-only records (LVLTYP1 = 3) are not levels
    assert np.all(np.isfinite(tab.levels["pressure"][0][: _hpa(tab).size]))
    assert any("without pressure" in n for n in tab.notes)


def test_igra2_dewpoint_depression_agrees_with_reported_humidity():
    """Where the file gives both, RH from TEMP - DPDP matches the reported RH (over water)."""
    lines = IGRA.read_text().splitlines()
    worst, checked = 0.0, 0
    for line in lines:
        if line.startswith("#") or line[:1] == "3":
            continue
        temp, rh, dpdp = int(line[22:27]), int(line[28:33]), int(line[34:39])
        if min(temp, rh, dpdp) < -8000 or temp >= 0:
            continue
        t = temp / 10 + T0
        ours = 100 * relative_humidity_from_dewpoint(t, t - dpdp / 10)
        worst = max(worst, abs(ours - rh / 10))
        checked += 1
    assert checked > 50
    # DPDP to 0.1 C moves RH by up to ~1 % near saturation at these temperatures,
    # more where the air is dry and cold (where relative errors, not percent, matter)
    assert worst <= 2.0


def test_igra2_arctic_stratus_supercooled_liquid(tmp_path):
    """Utqiagvik 2010-06-01 12 UTC: saturated below 0 C from the surface to ~2 km.

    The raw records give RH 95-96 % at -2.0 to -6.5 C from 1000 to 784 hPa: the
    diagnosis finds supercooled liquid there, and a route through it ices.
    """
    tab = read_sounding(IGRA)
    diag = _diagnose(tab, 1, surface_height=tab.scalars["surface_height"])
    t = diag.temperature[0] - T0
    layer = (diag.pressure[0] <= 100000.0) & (diag.pressure[0] >= 78380.0)
    assert np.all(t[layer] < 0.0) and np.all(diag.cloud[0][layer])
    assert np.all(diag.lwc[0][layer & (diag.height[0] > 300.0)] > 1e-5)  # > 0.01 g/m3
    route = _leg(
        tmp_path,
        (71.29, -156.78, 3000, "2010-06-01T12:00:00Z"),
        (71.25, -157.50, 4000, "2010-06-01T12:15:00Z"),
    )
    summary, segments, _ = _screen(tmp_path, route, IGRA)
    assert summary["worst_severity"] in ("light", "moderate", "severe")
    icing = [s for s in segments if s["kind"] == "icing"]
    assert icing and all(-7.0 < s["temperature_c_min"] < 0.0 for s in icing)
    assert summary["gap_km"] == 0.0


def test_igra2_filled_height_recovers_a_reported_one():
    """Blank the 850 hPa GPH (1383 m, line 7) and let the reader fill it.

    Hypsometric thickness between the reported neighbours (712 m at 925 hPa,
    2105 m at 775.6 hPa), scaled to meet both, lands within 10 m of the reported
    value (the reported heights are whole metres; the scaling spreads the
    residual over the layer).
    """
    lines = IGRA.read_text().splitlines()
    assert lines[6][16:21] == " 1383"
    lines[6] = lines[6][:16] + "-9999" + lines[6][21:]
    tab = read_sounding_text("\n".join(lines) + "\n", path="igra.txt")
    assert _level(tab, 850.0, "height") == pytest.approx(1383.0, abs=10.0)
    assert any("filled hypsometrically" in n for n in tab.notes)


# ------------------------------------------------------------------ the whole page


def _page(table_text, *, title="72681 BOI Boise Observations at 12Z 09 Dec 2010", info=None):
    """The archive's page layout around a real table (our assembly, not a check value)."""
    info = info or {
        "Station identifier": "BOI",
        "Station number": "72681",
        "Observation time": "101209/1200",
        "Station latitude": "43.56",
        "Station longitude": "-116.21",
        "Station elevation": "874.0",
        "Showalter index": "7.22",
    }
    block = "\n".join(f"{k:>43}: {v}" for k, v in info.items())
    return (
        "<HTML>\n<TITLE>University of Wyoming - Radiosonde Data</TITLE>\n"
        f'<BODY BGCOLOR="white">\n<H2>{title}</H2>\n<PRE>\n{table_text.rstrip()}\n'
        "</PRE><H3>Station information and sounding indices</H3><PRE>\n"
        f"{block}\n</PRE>\n"
    )


def test_full_page_gives_position_and_time_itself():
    tab = read_sounding_text(_page(BOI_TEXT.read_text()), path="boi.html")
    assert (tab.lat[0], tab.lon[0]) == (43.56, -116.21)
    assert tab.time[0] == np.datetime64("2010-12-09T12:00")
    assert tab.ids[0] == "72681 BOI 2010-12-09T12Z"
    assert _hpa(tab)[0] == 919.0  # the two below-ground levels dropped by elevation


def test_page_with_two_ascents_gives_two_profiles():
    first = _page(BOI_TEXT.read_text())
    second = _page(
        BOI_TEXT.read_text(),
        title="72681 BOI Boise Observations at 00Z 10 Dec 2010",
        info={"Observation time": "101210/0000", "Station latitude": "43.56"}
        | {"Station longitude": "-116.21", "Station elevation": "874.0"},
    )
    tab = read_sounding_text(first + second, path="two.html")
    assert tab.size == 2
    assert list(tab.time) == [np.datetime64("2010-12-09T12:00"), np.datetime64("2010-12-10T00:00")]


def test_title_time_used_when_the_station_block_has_none():
    text = _page(BOI_TEXT.read_text(), info={"Station number": "72681"})
    with pytest.raises(ForecastError, match="no station position"):
        read_sounding_text(text, path="t.html")
    tab = read_sounding_text(text, path="t.html", site=parse_station("43.56,-116.21,874"))
    assert tab.time[0] == np.datetime64("2010-12-09T12:00")  # from the title line


def test_missing_markers_are_missing_values_not_numbers():
    """999.0, 9999 and -9999 in a text list are missing values (blank cells are too)."""
    lines = BOI_TEXT.read_text().splitlines()
    assert lines[9].startswith("  880.7   1219    5.1    2.2")  # line 10 of the file
    lines[9] = "  880.7   1219  999.0 -9999     82   5.12   9999      7  288.5  303.3  289.4"
    tab = read_sounding_text("\n".join(lines), path="m.txt", site=BOI_SITE)
    assert np.isnan(_level(tab, 880.7, "temperature"))
    assert np.isnan(_level(tab, 880.7, "wind_u"))
    # RELH 82 is kept where the dew point is missing
    assert _level(tab, 880.7, "relative_humidity") == pytest.approx(0.82)


def test_station_option_far_from_the_file_is_refused():
    with pytest.raises(ForecastError, match="km from the position the file gives"):
        read_sounding(BOI_CSV, site=parse_station("40.0,-105.0,1600"))


def test_site_position_close_to_the_file_is_accepted():
    tab = read_sounding(BOI_CSV, site=parse_station("43.57,-116.21,874"))
    assert tab.lat[0] == 43.56  # the file's own position wins


def test_load_forecast_reads_soundings_beside_profile_files():
    fc = load_forecast([IGRA, BOI_CSV])
    assert fc.table.size == 3
    assert fc.describe()["kind"] == "profiles"


# ------------------------------------------------------------------ CF profiles (NCSS)


def test_ncss_profile_without_a_surface_is_refused(capsys, tmp_path):
    """The NCSS file has no surface: its lowest levels are the model's extrapolation.

    Raw file: relative humidity is 73.6 % on each of the six levels 1000-850 hPa
    (the model's values carried below the ground at 40 N 105 W); with no surface
    pressure and no heights they cannot be told from air, so the read is refused.
    """
    import netCDF4

    with netCDF4.Dataset(NCSS) as nc:
        p = nc["isobaric3"][0, 0, :]
        rh = nc["Relative_humidity_isobaric"][0, 0, :]
    assert np.all(rh[p >= 85000.0] == np.float32(73.6))
    route = _near(tmp_path, 40.0, -105.0, "2015-06-12T15:00:00Z")
    err = _refused(capsys, tmp_path, ["screen", route, "--forecast", NCSS])
    assert "levels below the ground cannot be told apart" in err and "Pressure_surface" in err


def _ncss_with_surface(tmp_path, pressure_pa):
    """The real NCSS file plus a surface pressure (an invented value of this test)."""
    import xarray as xr

    with xr.open_dataset(NCSS) as ds:
        ds = ds.load()
    ds["Pressure_surface"] = (("station", "profile"), np.array([[pressure_pa]], "f4"))
    ds["Pressure_surface"].attrs["units"] = "Pa"
    path = tmp_path / "ncss-with-surface.nc"
    ds.to_netcdf(path)
    return path


def test_ncss_profile_read_with_a_surface_pressure(tmp_path):
    """Values of the raw NCSS file; the 835 hPa surface is the test's own, not the file's."""
    tab = read_sounding(_ncss_with_surface(tmp_path, 83500.0))
    assert (tab.lat[0], tab.lon[0]) == (40.0, -105.0)
    assert tab.time[0] == np.datetime64("2015-06-12T15:00")  # 3 "Hour since" 12 UTC
    p = _hpa(tab)
    assert p[0] == 800.0 and p[-1] == 10.0 and p.size == 20  # 1000-850 hPa dropped
    assert tab.scalars["surface_pressure"][0] == 83500.0
    # 700 hPa: Temperature_isobaric 278.4 K, Relative_humidity_isobaric 72.5 %
    assert _level(tab, 700.0, "temperature") == pytest.approx(278.4, abs=1e-4)
    assert _level(tab, 700.0, "relative_humidity") == pytest.approx(0.725, abs=1e-6)
    assert "netCDF-Java GRIB name" in tab.sources["temperature"]
    assert any("does not state over which phase" in n for n in tab.notes)
    assert any("6 level(s) below the model surface" in n for n in tab.notes)


def test_ncss_profile_screened(tmp_path):
    route = _leg(
        tmp_path,
        (40.0, -105.0, 12000, "2015-06-12T15:00:00Z"),
        (40.2, -104.8, 12000, "2015-06-12T15:10:00Z"),
    )
    summary, _, doc = _screen(tmp_path, route, _ncss_with_surface(tmp_path, 83500.0))
    # 12,000 ft lies between 700 hPa (72.5 %) and 600 hPa (45.6 %): no cloud, no gap
    assert summary["worst_severity"] == "none" and summary["gap_km"] == 0.0
    assert doc["provenance"]["variables"]["temperature"]["name"].startswith("Temperature_")


def test_ragged_profiles_are_refused(tmp_path):
    """An invented contiguous ragged-array file (CF appendix H.3.4 layout)."""
    import xarray as xr

    ds = xr.Dataset(
        {
            "row_size": (("profile",), np.array([2], "i4"), {"sample_dimension": "obs"}),
            "pressure": (("obs",), np.array([900.0, 800.0]), {"units": "hPa", "axis": "Z"}),
            "t": (("obs",), np.array([1.0, -3.0]), {"units": "degC"}),
        },
        attrs={"featureType": "profile"},
    )
    path = tmp_path / "ragged.nc"
    ds.to_netcdf(path)
    with pytest.raises(ForecastError, match="ragged-array profiles are not read"):
        read_sounding(path)


# ------------------------------------------------------------------ refusals (CLI)


def _wyoming_lines():
    return BOI_TEXT.read_text().splitlines()


def _refused_boise(capsys, tmp_path, lines):
    """Screen a route against the edited Boise lines; expect a one-line refusal."""
    bad = tmp_path / "edited.txt"
    bad.write_text("\n".join(lines))
    route = _near(tmp_path, 43.56, -116.21, "2010-12-09T12:00:00Z")
    return _refused(capsys, tmp_path, ["screen", route, "--forecast", bad, *BOI_OPTIONS])


def test_no_position_names_the_station_option(capsys, tmp_path):
    route = _near(tmp_path, 43.56, -116.21, "2010-12-09T12:00:00Z")
    err = _refused(capsys, tmp_path, ["screen", route, "--forecast", BOI_TEXT])
    assert str(BOI_TEXT) in err and "--station" in err


def test_no_time_names_the_time_option(capsys, tmp_path):
    route = _near(tmp_path, 43.56, -116.21, "2010-12-09T12:00:00Z")
    args = ["screen", route, "--forecast", BOI_TEXT, "--station=43.56,-116.21,874"]
    err = _refused(capsys, tmp_path, args)
    assert "no observation time" in err and "--time" in err


def test_repeats_that_disagree_are_refused(capsys, tmp_path):
    lines = _wyoming_lines()
    assert lines[73].startswith("  115.0  15240  -57.9")  # file line 74
    lines[74] = lines[74].replace("-57.9", "-50.0")  # line 75, same pressure
    err = _refused_boise(capsys, tmp_path, lines)
    assert "lines 74, 75" in err and "115 hPa given 2 times" in err


def test_missing_pressure_marker_is_refused(capsys, tmp_path):
    lines = _wyoming_lines()
    lines[20] = "-9999.0" + lines[20][7:]  # file line 21 (700 hPa)
    err = _refused_boise(capsys, tmp_path, lines)
    assert "line 21" in err and "missing pressure" in err


def test_every_level_below_the_station_is_refused(capsys, tmp_path):
    route = _near(tmp_path, 43.56, -116.21, "2010-12-09T12:00:00Z")
    args = ["screen", route, "--forecast", BOI_TEXT, "--station=43.56,-116.21,40000"]
    err = _refused(capsys, tmp_path, args + ["--time", "2010-12-09T12:00Z"])
    assert "--station" in err and "out of range" in err
    # a plausible elevation above every level of a cut-down file
    cut = tmp_path / "low.txt"
    cut.write_text("\n".join(_wyoming_lines()[:8]))  # 1000 to 909 hPa only (185-962 m)
    args = ["screen", route, "--forecast", cut, "--station=43.56,-116.21,2000"]
    err = _refused(capsys, tmp_path, args + ["--time", "2010-12-09T12:00Z"])
    assert "no level with a temperature above the station" in err


def test_pressure_rising_with_height_is_refused(capsys, tmp_path):
    lines = _wyoming_lines()
    lines[12], lines[13] = lines[13], lines[12]  # swap 862 and 850 hPa (lines 13, 14)
    err = _refused_boise(capsys, tmp_path, lines)
    assert "pressure must decrease with height" in err and "line 14" in err


@pytest.mark.parametrize(
    "name, text, words",
    [
        ("garbage.txt", "this is not a forecast\nat all\n", "unknown forecast format"),
        (
            "garbage-table.txt",
            "   PRES   HGHT   TEMP   DWPT\n    hPa     m      C      C\n 1000.0  1x5 abc\n",
            "line 3, column HGHT",
        ),
        (
            "garbage.csv",
            "time,longitude,latitude,pressure_hPa,temperature_C,relative humidity_%\n"
            "2010-12-09 11:06:00,-116.21,43.56,919.0,oops,99\n",
            "line 2, column temperature_C",
        ),
        (
            "garbage-igra.txt",
            IGRA.read_text().splitlines()[0] + "\n21     0 100980X   12     0B 1000     0\n",
            "line 2",
        ),
    ],
)
def test_garbage_files_one_line_exit_2(capsys, tmp_path, name, text, words):
    bad = tmp_path / name
    bad.write_text(text)
    route = _near(tmp_path, 43.56, -116.21, "2010-12-09T12:00:00Z")
    err = _refused(capsys, tmp_path, ["screen", route, "--forecast", bad, *BOI_OPTIONS])
    assert words in err and str(bad) in err


@pytest.mark.parametrize(
    "edit, words",
    [
        (lambda ls: ls[:1] + ["x" + ls[1]] + ls[2:], "not an IGRA2 data record"),
        (lambda ls: ls[:2] + [ls[2][:15] + "Q" + ls[2][16:]] + ls[3:], "quality flag 'Q'"),
        (lambda ls: ls[:159] + ls[1:2] + ls[159:], "more data records than the 158"),
        (
            lambda ls: ["21     0 100980B   12     0B 1000     0    20    51"] + ls,
            "before the first",
        ),
    ],
)
def test_igra2_bad_records_one_line(tmp_path, edit, words):
    lines = edit(IGRA.read_text().splitlines())
    with pytest.raises(ForecastError) as info:
        read_sounding_text("\n".join(lines) + "\n", path="igra.txt", kind="igra2")
    assert words in info.value.one_line() and "\n" not in info.value.one_line()


def test_station_option_without_a_sounding_is_refused(capsys, tmp_path):
    demo = Path(__file__).parents[1] / "icing" / "data" / "demo" / "skerrow-demo.nc"
    route = _near(tmp_path, 57.0, -24.5, "2027-01-14T09:00:00Z")
    args = ["screen", route, "--forecast", demo, "--station=57,-24.5,0"]
    err = _refused(capsys, tmp_path, args)
    assert "--station applies to sounding files only" in err


def test_station_option_syntax(capsys, tmp_path):
    route = _near(tmp_path, 43.56, -116.21, "2010-12-09T12:00:00Z")
    args = ["screen", route, "--forecast", BOI_TEXT, "--station=43.56,-116.21"]
    err = _refused(capsys, tmp_path, args + ["--time", "2010-12-09T12:00Z"])
    assert "is not LAT,LON,ELEV_M" in err
    args = ["screen", route, "--forecast", BOI_TEXT, "--station=43.56,-116.21,874"]
    err = _refused(capsys, tmp_path, args + ["--time", "2010-12-09T12:00"])
    assert "no time zone" in err


# ------------------------------------------------------------------ never anything but InputError


def _mangle(lines, data):
    """Replace, cut, duplicate or scramble one line (Hypothesis draws which and how)."""
    i = data.draw(st.integers(0, len(lines) - 1))
    how = data.draw(st.sampled_from(["replace", "cut", "dup", "insert", "delete"]))
    line = lines[i]
    junk = data.draw(st.text(alphabet=" 0123456789.-+eE#ABQxZ,:/<>", max_size=80))
    if how == "replace":
        lines[i] = junk
    elif how == "cut":
        lines[i] = line[: data.draw(st.integers(0, len(line)))]
    elif how == "dup":
        lines.insert(i, line)
    elif how == "insert":
        k = data.draw(st.integers(0, len(line)))
        lines[i] = line[:k] + junk[:6] + line[k:]
    else:
        del lines[i]
    return lines


def _read_or_input_error(text, kind, site):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", PlausibilityWarning)  # a warned value is fine
            read_sounding_text(text, path="mangled", kind=kind, site=site)
    except InputError as err:
        assert "\n" not in err.one_line()


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_wyoming_text_parser_raises_only_input_errors(data):
    lines = _mangle(BOI_TEXT.read_text().splitlines(), data)
    if data.draw(st.booleans()):
        lines = _mangle(lines, data)
    _read_or_input_error("\n".join(lines), "wyoming-text", BOI_SITE)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_wyoming_page_and_csv_parsers_raise_only_input_errors(data):
    page = data.draw(st.booleans())
    text = _page(BOI_TEXT.read_text()) if page else BOI_CSV.read_text()
    lines = _mangle(text.splitlines(), data)
    _read_or_input_error("\n".join(lines), "wyoming-text" if page else "wyoming-csv", None)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_igra2_parser_raises_only_input_errors(data):
    lines = _mangle(IGRA.read_text().splitlines(), data)
    if data.draw(st.booleans()):
        lines = _mangle(lines, data)
    _read_or_input_error("\n".join(lines) + "\n", "igra2", None)


def test_too_many_soundings_in_one_file_are_refused(monkeypatch):
    """The cap keeps every candidate column in memory bounded; lowered here to 1."""
    import icing.forecast.soundings.common as common

    monkeypatch.setattr(common, "MAX_SOUNDINGS", 1)
    with pytest.raises(ForecastError, match="2 soundings in one file"):
        read_sounding(IGRA)
