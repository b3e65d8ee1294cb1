"""Per-client token buckets: a steady rate with a burst allowance.

Each client (the API key's name, or the client address when keys are off) has a
bucket of ``burst`` tokens refilled at ``rate_per_s``; a request takes one token
or, when the bucket is empty, is refused with the time until the next token
(the ``Retry-After`` of a 429). Buckets live in the server's event loop (one
thread), so they need no lock; full buckets of idle clients are forgotten.

Examples
--------
>>> clock = iter([0.0, 0.0, 0.0, 0.5]).__next__
>>> bucket = RateLimiter(rate_per_s=2.0, burst=2, clock=clock)
>>> bucket.take("a"), bucket.take("a"), round(bucket.take("a"), 2), bucket.take("a")
(0.0, 0.0, 0.5, 0.0)
"""

from __future__ import annotations

import time

__all__ = ["RateLimiter"]

_MAX_CLIENTS = 10_000  # forget idle clients beyond this many buckets


class RateLimiter:
    """Token buckets, one per client.

    Parameters
    ----------
    rate_per_s : float
        Tokens added per second; 0 or less turns the limit off. [1/s]
    burst : int
        Bucket size: requests a client may make at once after being idle.
    clock : callable
        Monotonic time in seconds (tests pass their own).
    """

    def __init__(self, *, rate_per_s: float, burst: int, clock=time.monotonic):
        self.rate = float(rate_per_s)
        self.burst = max(1, int(burst))
        self._clock = clock
        self._buckets: dict[str, tuple[float, float]] = {}

    @property
    def enabled(self) -> bool:
        """True when requests are limited."""
        return self.rate > 0

    def take(self, client: str) -> float:
        """Take a token; return 0 when granted, else the seconds until one is available."""
        if not self.enabled:
            return 0.0
        now = self._clock()
        tokens, last = self._buckets.get(client, (float(self.burst), now))
        tokens = min(float(self.burst), tokens + (now - last) * self.rate)
        if tokens >= 1.0:
            self._buckets[client] = (tokens - 1.0, now)
            if len(self._buckets) > _MAX_CLIENTS:
                self._forget(now)
            return 0.0
        self._buckets[client] = (tokens, now)
        return (1.0 - tokens) / self.rate

    def _forget(self, now: float) -> None:
        """Drop buckets that have refilled (their clients are idle)."""
        full = [
            k
            for k, (tokens, last) in self._buckets.items()
            if tokens + (now - last) * self.rate >= self.burst
        ]
        for k in full:
            del self._buckets[k]
