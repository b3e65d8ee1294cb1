"""The bundled demo stays a copy of the example routes and the lat-lon fixture."""

from pathlib import Path

import pytest

from icing.demo import demo_dir, demo_scenario

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("name", [r["file"] for r in demo_scenario()["routes"]])
def test_demo_routes_are_copies_of_routes_folder(name):
    bundled = Path(name)
    assert bundled.read_bytes() == (ROOT / "routes" / bundled.name).read_bytes(), (
        f"copy routes/{bundled.name} to icing/data/demo/ after changing it"
    )


def test_demo_forecast_is_the_latlon_fixture():
    assert (demo_dir() / "skerrow-demo.nc").read_bytes() == (
        ROOT / "fixtures" / "skerrow-latlon.nc"
    ).read_bytes(), "rerun fixtures/make_fixtures.py, which writes both"


def test_every_demo_route_names_a_preset():
    from icing.airframes import load_airframe

    for r in demo_scenario()["routes"]:
        load_airframe(r["airframe"])
