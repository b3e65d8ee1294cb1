"""Run the service on uvicorn: logging, graceful shutdown.

The access log goes to standard output as JSON lines (one per request); the
server's own messages go to standard error. On SIGINT or SIGTERM uvicorn stops
accepting connections, lets the requests in flight finish (up to the run-time
limit plus a margin), then the worker processes are stopped.
"""

from __future__ import annotations

import logging
import signal
import sys

from icing.caution import CAUTION
from icing.service.config import ServiceConfig

__all__ = ["serve", "setup_logging"]


def setup_logging(level: str = "info") -> None:
    """Access log: JSON lines on stdout; everything else on stderr."""
    access = logging.getLogger("icing.service.access")
    access.handlers[:] = [logging.StreamHandler(sys.stdout)]
    access.handlers[0].setFormatter(logging.Formatter("%(message)s"))
    access.setLevel(logging.INFO)
    access.propagate = False
    service = logging.getLogger("icing.service")
    if not service.handlers:
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("icing serve: %(levelname)s %(message)s"))
        service.addHandler(handler)
    service.setLevel(level.upper())
    service.propagate = False


def _exit_cleanly(signum, frame):
    raise SystemExit(0)


def serve(config: ServiceConfig, *, host: str, port: int, log_level: str = "info") -> None:
    """Serve until interrupted."""
    import uvicorn

    from icing.service.app import create_app

    setup_logging(log_level)
    app = create_app(config)
    print(
        f"icing serve: http://{host}:{port}/v1 (OpenAPI at /openapi.json), catalogue "
        f"{config.catalog}, {config.workers or 'no'} worker process(es), keys "
        f"{'required' if config.api_keys else 'off'}\n{CAUTION}",
        file=sys.stderr,
        flush=True,
    )
    # uvicorn stops gracefully on SIGTERM, then raises the signal again for the handler it
    # found: make that a clean exit (status 0) rather than death by signal
    signal.signal(signal.SIGTERM, _exit_cleanly)
    uvicorn.run(
        app,
        host=host,
        port=port,
        log_level=log_level,
        access_log=False,  # ours is structured and never logs bodies or query strings
        server_header=False,
        proxy_headers=False,
        limit_concurrency=config.max_connections,
        timeout_graceful_shutdown=int(config.run_timeout_s + config.queue_timeout_s + 5),
        timeout_keep_alive=15,
    )
