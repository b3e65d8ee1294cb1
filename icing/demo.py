"""The bundled demo scenario: invented routes over an invented region.

"The Skerrow Basin" is a scenario of our own over open water, with a synthetic
forecast made by ``fixtures/make_fixtures.py``. It shows what the tool does; its
numbers are not observations and not check values.
"""

from __future__ import annotations

import json
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
    from .cli import _atomic_picture, _safe, _samples_csv, atomic_write
    from .forecast import load_forecast
    from .hazards import feature_collection
    from .pipeline import screen_route
    from .plot import plot_cross_section, plot_route_map
    from .report import write_report
    from .route import load_routes

    out = Path(out)
    sc = demo_scenario()
    forecast = load_forecast(sc["forecast"] if len(sc["forecast"]) > 1 else sc["forecast"][0])
    screenings = []
    for i, r in enumerate(sc["routes"]):
        for route in load_routes(r["file"]):
            screenings.append(
                screen_route(route, forecast, airframe=r["airframe"], segment_prefix=f"R{i + 1}-")
            )
    fc = feature_collection(screenings)
    written = [
        atomic_write(out / "demo.geojson", json.dumps(fc, indent=1, allow_nan=False)),
        atomic_write(
            out / "demo.summary.json",
            json.dumps(
                {k: v for k, v in fc.items() if k not in ("type", "features")},
                indent=1,
                allow_nan=False,
            ),
        ),
        atomic_write(out / "demo-samples.csv", _samples_csv(screenings)),
    ]
    for s in screenings:
        written.append(
            _atomic_picture(
                plot_cross_section, s, out / f"cross-section-{_safe(s.route_name)}.png"
            )
        )
    written.append(_atomic_picture(plot_route_map, screenings, out / "map.png"))
    written.append(write_report(screenings, out / "report.html"))
    return fc["summaries"], written
