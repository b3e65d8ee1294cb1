"""The bundled demo scenario: invented routes over an invented region.

"The Skerrow Basin" is a scenario of our own over open water, with a synthetic
forecast made by ``fixtures/make_fixtures.py``. It shows what the tool does; its
numbers are not observations and not check values.
"""

from __future__ import annotations

import tomllib
from importlib import resources
from pathlib import Path

__all__ = ["demo_dir", "demo_scenario", "run_demo"]


def demo_dir() -> Path:
    """Return the folder of the bundled demo files (package data)."""
    return Path(str(resources.files("icing") / "data" / "demo"))


def demo_scenario() -> dict:
    """Return the demo's routes, airframes and forecast, from ``data/demo/scenario.toml``."""
    d = demo_dir()
    with open(d / "scenario.toml", "rb") as fh:
        sc = tomllib.load(fh)
    sc["forecast"] = [str(d / f) for f in sc["forecast"]]
    for r in sc["routes"]:
        r["file"] = str(d / r["file"])
    return sc


def run_demo(out) -> tuple[list[dict], list[Path]]:
    """Screen every demo route and write GeoJSON, summary, pictures and a report to ``out``.

    Returns
    -------
    (summaries, written)
        The route summaries and the paths written.
    """
    from icing.forecast import load_forecast
    from icing.outputs.write import write_outputs
    from icing.route import load_routes
    from icing.runs.screen import screen_route

    out = Path(out)
    sc = demo_scenario()
    forecast = load_forecast(sc["forecast"])
    screenings = []
    for r in sc["routes"]:
        for route in load_routes(r["file"]):
            screenings.append(
                screen_route(route, forecast, airframe=route.airframe or r["airframe"])
            )
    fc, written = write_outputs(
        screenings,
        out_geojson=out / "demo.geojson",
        samples=out / "demo-samples.csv",
        plot=out / "cross-section.png",  # one per route: cross-section-<route>.png
        map_=out / "map.png",
        report=out / "report.html",
    )
    return fc["summaries"], written
