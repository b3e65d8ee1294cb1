"""ASGI middleware of the service: access log, keys, rate limit, body size.

Pure ASGI (no request objects) so that a refused request costs almost nothing:
the key and the rate are checked before the body is read, and the body is read
at most to its limit. The access log writes one JSON line per request (time,
request id, key name, method, path, status, duration, bytes sent); never the key,
the query string or a body.
"""

from __future__ import annotations

import json
import logging
import math
import time
import uuid
from datetime import UTC, datetime

__all__ = ["AccessLog", "Gate", "problem_response"]

access_log = logging.getLogger("icing.service.access")

#: Paths open without a key (``/v1/health`` only: monitors must reach it).
OPEN_PATHS = frozenset({"/v1/health"})
_BODY_METHODS = frozenset({"POST", "PUT", "PATCH"})


async def problem_response(send, status: int, detail: str, field=None, headers=()) -> None:
    """Send a JSON error (``detail``, ``field``) straight from the middleware."""
    body = json.dumps({"detail": detail, "field": field}).encode()
    head = [
        (b"content-type", b"application/json"),
        (b"content-length", str(len(body)).encode()),
        *((k.encode(), v.encode()) for k, v in headers),
    ]
    await send({"type": "http.response.start", "status": status, "headers": head})
    await send({"type": "http.response.body", "body": body})


def _header(scope, name: bytes) -> str | None:
    for k, v in scope.get("headers", ()):
        if k.lower() == name:
            return v.decode("latin-1")
    return None


class AccessLog:
    """Outermost layer: request id (``X-Request-ID``), status and timing, one JSON line."""

    def __init__(self, app):
        self.app = app

    async def __call__(self, scope, receive, send):
        """Handle one ASGI connection."""
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        start = time.perf_counter()
        rid = uuid.uuid4().hex[:16]
        state = scope.setdefault("state", {})
        state["request_id"] = rid
        seen = {"status": 0, "bytes": 0}

        async def logged_send(message):
            if message["type"] == "http.response.start":
                seen["status"] = message["status"]
                message = dict(message)
                message["headers"] = [*message.get("headers", ()), (b"x-request-id", rid.encode())]
            elif message["type"] == "http.response.body":
                seen["bytes"] += len(message.get("body", b""))
            await send(message)

        try:
            await self.app(scope, receive, logged_send)
        finally:
            record = {
                "time": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z",
                "request_id": rid,
                "key": state.get("key_name", "-"),
                "method": scope.get("method"),
                "path": scope.get("path"),
                "status": seen["status"] or 500,
                "duration_ms": round((time.perf_counter() - start) * 1000.0, 1),
                "bytes": seen["bytes"],
            }
            access_log.info(json.dumps(record))


class Gate:
    """Key check (401), per-key rate limit (429) and body size (413), in that order.

    Parameters
    ----------
    app : ASGI app
    keyring : KeyRing or None
        None: no keys required; the rate limit then applies per client address.
    limiter : RateLimiter
    max_body_bytes : int
    """

    def __init__(self, app, *, keyring, limiter, max_body_bytes):
        self.app = app
        self.keyring = keyring
        self.limiter = limiter
        self.max_body = int(max_body_bytes)

    async def __call__(self, scope, receive, send):
        """Handle one ASGI connection."""
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        state = scope.setdefault("state", {})
        path = scope.get("path", "")
        if path in OPEN_PATHS:
            return await self.app(scope, receive, send)
        if self.keyring is not None:
            auth = _header(scope, b"authorization") or ""
            scheme, _, token = auth.partition(" ")
            name = self.keyring.verify(token.strip()) if scheme.lower() == "bearer" else None
            if name is None:
                return await problem_response(
                    send,
                    401,
                    "missing or unknown API key (fix: send the header "
                    "'Authorization: Bearer <key>' with a key from the operator)",
                    "Authorization",
                    headers=[("www-authenticate", 'Bearer realm="icing"')],
                )
            state["key_name"] = client = name
        else:
            client = (scope.get("client") or ("-", 0))[0]
        wait = self.limiter.take(client)
        if wait > 0:
            retry = max(1, math.ceil(wait))
            return await problem_response(
                send,
                429,
                f"rate limit of {self.limiter.rate:g} requests/s (burst {self.limiter.burst}) "
                f"reached (fix: retry after {retry} s)",
                None,
                headers=[("retry-after", str(retry))],
            )
        if scope.get("method") not in _BODY_METHODS:
            return await self.app(scope, receive, send)
        return await self._with_body(scope, receive, send)

    async def _with_body(self, scope, receive, send):
        too_big = (
            f"request body larger than {self.max_body} bytes (fix: send fewer or shorter "
            "routes in several requests)"
        )
        declared = _header(scope, b"content-length")
        if declared is not None and declared.isdigit() and int(declared) > self.max_body:
            return await problem_response(send, 413, too_big, "body")
        chunks, size = [], 0
        while True:
            message = await receive()
            if message["type"] == "http.disconnect":
                return
            chunk = message.get("body", b"")
            size += len(chunk)
            if size > self.max_body:
                return await problem_response(send, 413, too_big, "body")
            chunks.append(chunk)
            if not message.get("more_body", False):
                break
        body = b"".join(chunks)
        sent = False

        async def replay():
            nonlocal sent
            if not sent:
                sent = True
                return {"type": "http.request", "body": body, "more_body": False}
            return await receive()

        return await self.app(scope, replay, send)
