"""Tiles of a gridded forecast read around the samples, and a lock-safe cache of them.

A route touches a few tiles of the grid; only those are read from the file (the
cost follows the route, not the grid). Blocks read once are kept in a
:class:`TileCache` so that several routes screened against one forecast (a
service, a batch) do not read them again. The cache is one object with its own
lock: threads may share a forecast; each read and each update of the cache and
of its counters happens under the lock, and a block is never handed out while
another thread evicts it (the cache holds references, never views that change).
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

__all__ = ["TileCache", "ReadStats", "tile_windows"]


@dataclass(frozen=True)
class ReadStats:
    """Counters of a :class:`TileCache` at one moment."""

    reads: int
    """Blocks read from the files."""
    values: int
    """Values read from the files (the cost of the reads)."""
    cache_hits: int
    """Blocks served from the cache."""

    def as_dict(self) -> dict:
        """Return the counters as a plain dict."""
        return {"reads": self.reads, "values": self.values, "cache_hits": self.cache_hits}


class TileCache:
    """A least-recently-used store of blocks, bounded in bytes, safe across threads.

    Parameters
    ----------
    max_bytes : int
        Blocks are evicted, oldest use first, when the total passes this. [bytes]

    Notes
    -----
    ``get_or_read(key, read)`` returns the cached block or calls ``read()`` and
    stores its result. The read itself happens outside the lock, so one slow
    read does not stall other threads; two threads that miss the same key at
    once both read it (the same values) and the second store wins.
    """

    def __init__(self, max_bytes: int = 256 * 2**20):
        self.max_bytes = int(max_bytes)
        self._lock = threading.Lock()
        self._blocks: OrderedDict = OrderedDict()
        self._bytes = 0
        self._reads = 0
        self._values = 0
        self._hits = 0

    def get_or_read(self, key, read):
        """Return the block stored under ``key``, reading it with ``read()`` when absent."""
        with self._lock:
            block = self._blocks.get(key)
            if block is not None:
                self._blocks.move_to_end(key)
                self._hits += 1
                return block
        block = read()
        block.setflags(write=False)  # shared between callers: never changed in place
        with self._lock:
            self._reads += 1
            self._values += block.size
            old = self._blocks.pop(key, None)
            if old is not None:
                self._bytes -= old.nbytes
            self._blocks[key] = block
            self._bytes += block.nbytes
            while self._bytes > self.max_bytes and len(self._blocks) > 1:
                _, gone = self._blocks.popitem(last=False)
                self._bytes -= gone.nbytes
        return block

    def stats(self) -> ReadStats:
        """Return the counters now."""
        with self._lock:
            return ReadStats(self._reads, self._values, self._hits)


def tile_windows(iy0, ix0, tile, ny, nx, *, periodic):
    """Group samples by tile and give each tile's window on the grid.

    Yields ``(sel, ys, xs, ly, lx)``: the sample indices in the tile, the y
    slice and the x slice (an index array on periodic grids, wrapping round),
    and the samples' corner offsets inside the window.
    """
    tiles = (iy0 // tile) * (nx // tile + 2) + ix0 // tile
    for t in np.unique(tiles):
        sel = np.flatnonzero(tiles == t)
        y0 = (iy0[sel[0]] // tile) * tile
        x0 = (ix0[sel[0]] // tile) * tile
        ys = slice(int(y0), int(min(y0 + tile + 1, ny)))
        if periodic:
            xs = np.arange(x0, x0 + tile + 1) % nx
        else:
            xs = slice(int(x0), int(min(x0 + tile + 1, nx)))
        yield sel, ys, xs, iy0[sel] - y0, ix0[sel] - x0
