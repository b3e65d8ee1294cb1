"""The ``icing serve`` and ``icing serve-key`` commands (argument parsing and running).

Kept here so that the command line only registers them: nothing in this module
imports FastAPI or uvicorn until ``icing serve`` runs.
"""

from __future__ import annotations

import sys
from pathlib import Path

from icing.errors import InputError

__all__ = ["add_service_commands"]


def _positive(kind):
    def parse(text):
        value = kind(text)
        if value < 0:
            raise ValueError(text)
        return value

    parse.__name__ = kind.__name__
    return parse


def cmd_serve(args) -> int:
    """Run the HTTP service until interrupted (Ctrl-C or SIGTERM: graceful stop)."""
    from icing.service.config import ServiceConfig, default_workers

    try:
        from icing.service.server import serve
    except ImportError as err:  # FastAPI or uvicorn missing
        raise InputError(
            f"the service needs FastAPI and uvicorn ({err.name} is missing)",
            where="serve",
            fix='pip install "icing-hazard[service]"',
        ) from None
    config = ServiceConfig(
        catalog=Path(args.catalog),
        api_keys=None if args.api_keys is None else Path(args.api_keys),
        workers=default_workers() if args.workers is None else args.workers,
        run_timeout_s=args.run_timeout,
        max_body_bytes=args.max_body_bytes,
        max_samples=args.max_samples,
        rate_per_s=args.rate_limit,
        burst=args.burst,
        cors_origins=tuple(args.cors_origin or ()),
    )
    if config.api_keys is not None and not config.api_keys.is_file():
        raise InputError(
            "key file not found",
            path=config.api_keys,
            where="--api-keys",
            fix=f"make one with `icing serve-key add --api-keys {config.api_keys} --name NAME`",
        )
    if config.api_keys is None and args.host not in ("127.0.0.1", "localhost", "::1"):
        print(
            f"icing serve: warning: serving on {args.host} without --api-keys: anyone who "
            "reaches this address can use the service",
            file=sys.stderr,
        )
    serve(config, host=args.host, port=args.port, log_level=args.log_level)
    return 0


def cmd_serve_key(args) -> int:
    """Add, list or remove API keys in a key file."""
    from icing.service.keys import add_key, read_key_file, remove_key

    if args.action == "add":
        if not args.name:
            raise InputError("no key name", where="--name", fix="give --name NAME")
        key = add_key(args.api_keys, args.name)
        print(key)
        print(
            f"added key {args.name!r} to {args.api_keys}; this is the only time the key is "
            "shown: hand it to its holder now",
            file=sys.stderr,
        )
    elif args.action == "list":
        for r in read_key_file(args.api_keys):
            print(f"{r.name}\t{r.created or '-'}")
    else:
        if not args.name:
            raise InputError("no key name", where="--name", fix="give --name NAME")
        remove_key(args.api_keys, args.name)
        print(f"removed key {args.name!r} from {args.api_keys}", file=sys.stderr)
    return 0


def add_service_commands(sub) -> None:
    """Register ``serve`` and ``serve-key`` on the command line's subparsers."""
    sv = sub.add_parser(
        "serve",
        help="HTTP service for flight-planning systems (needs the 'service' extra)",
        description="Serve screenings and profiles over HTTP (OpenAPI at /openapi.json) "
        "against the forecast files of a catalogue folder.",
    )
    sv.add_argument("--catalog", required=True, metavar="DIR", help="folder of forecast files")
    sv.add_argument("--host", default="127.0.0.1", help="address to listen on (127.0.0.1)")
    sv.add_argument("--port", type=int, default=8080, help="port (8080)")
    sv.add_argument(
        "--api-keys",
        default=None,
        metavar="FILE",
        help="key file: every endpoint but /v1/health then needs 'Authorization: Bearer KEY'",
    )
    sv.add_argument(
        "--workers",
        type=_positive(int),
        default=None,
        help="worker processes (default: one per core, at most 8); 0 computes in the "
        "server process, one request at a time",
    )
    sv.add_argument(
        "--run-timeout",
        type=_positive(float),
        default=30.0,
        metavar="S",
        help="longest run of one request before 503 (30 s)",
    )
    sv.add_argument(
        "--max-body-bytes",
        type=_positive(int),
        default=1_048_576,
        help="largest request body before 413 (1 MiB)",
    )
    sv.add_argument(
        "--max-samples",
        type=_positive(int),
        default=20_000,
        help="most route samples per request before 422 (20,000: ~20,000 km at 1 km; "
        "a worker needs about 50 MB per 1,000 samples at its peak)",
    )
    sv.add_argument(
        "--rate-limit",
        type=_positive(float),
        default=5.0,
        metavar="PER_S",
        help="requests per second per key, sustained (5; 0: off)",
    )
    sv.add_argument(
        "--burst", type=_positive(int), default=20, help="requests per key at once (20)"
    )
    sv.add_argument(
        "--cors-origin",
        action="append",
        metavar="ORIGIN",
        help="allow browser calls from this origin (repeatable; CORS is off without it)",
    )
    sv.add_argument("--log-level", default="info", choices=["debug", "info", "warning", "error"])
    sv.set_defaults(func=cmd_serve)

    k = sub.add_parser(
        "serve-key",
        help="add, list or remove API keys of `icing serve`",
        description="Manage the key file of `icing serve --api-keys FILE`. `add` prints the "
        "new key once (only its SHA-256 is stored).",
    )
    k.add_argument("action", choices=["add", "list", "remove"])
    k.add_argument("--api-keys", required=True, metavar="FILE", help="the key file")
    k.add_argument("--name", default=None, help="who holds the key (shown in the access log)")
    k.set_defaults(func=cmd_serve_key)
