"""The HTTP service for flight-planning systems (``icing serve``).

An entry point like the command line: it imports every other layer and nothing
imports it. Needs the ``service`` extra (FastAPI, uvicorn):
``pip install "icing-hazard[service]"``. The Python library stays the first way
in; the service is for callers that are not Python, or not one process.
"""

__all__ = ["ServiceConfig", "create_app"]


def __getattr__(name):
    # lazy: `icing serve-key` and the command line's parser must not import FastAPI
    if name == "create_app":
        from icing.service.app import create_app

        return create_app
    if name == "ServiceConfig":
        from icing.service.config import ServiceConfig

        return ServiceConfig
    raise AttributeError(f"module 'icing.service' has no attribute {name!r}")
