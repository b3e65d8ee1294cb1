"""The service's settings, with the defaults it states (README, OpenAPI, ``/v1/health``)."""

from __future__ import annotations

import os
from dataclasses import asdict, dataclass, field
from pathlib import Path

__all__ = ["ServiceConfig", "default_workers"]


def default_workers() -> int:
    """Worker processes by default: one per core the process may use, at most 8."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(8, cores))


@dataclass(frozen=True)
class ServiceConfig:
    """Settings of ``icing serve``.

    Attributes
    ----------
    catalog : Path
        Folder of forecast files (each file, or each sub-folder, is one forecast).
    api_keys : Path or None
        Key file; None serves without keys (for a trusted network only).
    workers : int
        Worker processes; 0 computes on one thread of the server process.
    run_timeout_s : float
        Longest one screening or profile may run; past it: 503. [s]
    queue_limit : int
        Most requests waiting for a worker; beyond it: 503 at once.
    queue_timeout_s : float
        Longest a request waits for a worker; past it: 503. [s]
    max_body_bytes : int
        Largest request body; beyond it: 413. [bytes]
    max_routes : int
        Most routes in one screening request.
    max_positions : int
        Most route positions (waypoints) in one request.
    max_samples : int
        Most samples along the route(s) of one request (one per km, 20 s of
        flight and 100 ft of climb), estimated before any work.
    step_km : float
        Sample spacing along the track. [km]
    rate_per_s : float
        Requests per second each key (each client address without keys) may
        make, sustained; 0 turns the limit off. [1/s]
    burst : int
        Requests a key may make at once after being idle.
    rescan_s : float
        Least time between two scans of the catalogue folder. [s]
    max_open : int
        Forecasts each worker keeps open.
    cors_origins : tuple of str
        Origins allowed by CORS; empty: CORS off.
    max_connections : int
        Most open connections; beyond it uvicorn answers 503.
    warm_up : bool
        At start, have every worker open the catalogue's forecasts and diagnose one
        column of each, so the first requests do not pay for it.
    """

    catalog: Path
    api_keys: Path | None = None
    workers: int = field(default_factory=default_workers)
    run_timeout_s: float = 30.0
    queue_limit: int = 32
    queue_timeout_s: float = 10.0
    max_body_bytes: int = 1_048_576
    max_routes: int = 20
    max_positions: int = 5_000
    max_samples: int = 20_000
    step_km: float = 1.0
    rate_per_s: float = 5.0
    burst: int = 20
    rescan_s: float = 5.0
    max_open: int = 16
    cors_origins: tuple = ()
    max_connections: int = 256
    warm_up: bool = True

    def limits(self) -> dict:
        """Return the limits a client meets (stated in ``/v1/health`` and the OpenAPI)."""
        d = asdict(self)
        keys = (
            "max_body_bytes",
            "max_routes",
            "max_positions",
            "max_samples",
            "step_km",
            "run_timeout_s",
            "queue_timeout_s",
            "rate_per_s",
            "burst",
        )
        return {k: d[k] for k in keys}
