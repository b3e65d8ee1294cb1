"""The bounded pool that runs screenings and profiles away from the event loop.

Two ways of sharing forecasts between requests (the choice and its measurement
are in DEVELOPERS.md, "The service"):

``processes`` (the default)
    ``size`` worker processes, each with its own forecasts opened once
    (:class:`icing.service.jobs.ForecastStore`), one job at a time each, so the
    forecasts' tile caches are never shared between threads. A job that runs
    past the time limit is stopped by ending its worker; a worker that dies (a
    crash in a reader library, memory exhaustion) is replaced; either way the
    server keeps serving. Workers start from a fork server that has already
    imported the package, so a replacement is ready in a fraction of a second.
``inline``
    One computation at a time on a thread of the server process, sharing one
    set of open forecasts. One lock covers the computations and the opening of
    files by the catalogue: it keeps the tile caches safe, and the netCDF and
    HDF5 C libraries, which crash the process when two threads enter them.
    Nothing can stop a computation that runs too long: its client gets a 503 at
    the time limit and the next job waits for it.

Either way at most ``queue_limit`` requests wait for a worker, each at most
``queue_timeout_s``; beyond that the request is refused at once (503 with
``Retry-After``) instead of piling up.
"""

from __future__ import annotations

import asyncio
import logging
import multiprocessing
import os
import signal
import threading
from concurrent.futures import ThreadPoolExecutor

__all__ = ["FILE_LOCK", "Busy", "JobPool", "RunTimeout", "WorkerLost", "rss_mb", "worker_main"]

log = logging.getLogger("icing.service")

# modules the fork server imports once, so that workers start ready to compute
_PRELOAD = [
    "icing.service.jobs",
    "icing.runs",
    "icing.forecast",
    "icing.hazards",
    "icing.airframes",
    "icing.route",
    "icing.calc",
]
_READY_TIMEOUT_S = 120.0


#: Held by inline computations and by the catalogue while it opens files: the netCDF and
#: HDF5 C libraries crash the process when two threads enter them, so in one process one
#: thread at a time reads forecast files (worker processes have each their own).
FILE_LOCK = threading.Lock()


def rss_mb(pid: int | str = "self") -> float | None:
    """Resident memory of a process [MiB] (Linux ``/proc``; None elsewhere or when gone)."""
    try:
        with open(f"/proc/{pid}/statm") as fh:
            pages = int(fh.read().split()[1])
    except (OSError, ValueError, IndexError):
        return None
    return round(pages * os.sysconf("SC_PAGE_SIZE") / 2**20, 1)


class Busy(Exception):
    """No worker is free and too many requests wait (or the server is stopping)."""

    def __init__(self, detail: str, retry_after_s: float):
        super().__init__(detail)
        self.detail, self.retry_after_s = detail, retry_after_s


class RunTimeout(Exception):
    """The job ran past the run-time limit."""


class WorkerLost(Exception):
    """The worker ended while running the job (a crash); it has been replaced."""


def worker_main(conn, max_open: int) -> None:
    """Body of a worker process: receive jobs, send ``(status, body, media type)``."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the server stops its workers itself
    logging.basicConfig(level=logging.INFO, format="icing worker: %(levelname)s %(message)s")
    from icing.service.jobs import ForecastStore, run_job

    store = ForecastStore(max_open)
    conn.send("ready")
    while True:
        try:
            job = conn.recv()
        except (EOFError, OSError):  # the server went away
            return
        if job is None:
            return
        conn.send(run_job(job, store))


class _ProcessSlot:
    """One worker process and the pipe to it."""

    def __init__(self, ctx, max_open: int):
        parent, child = ctx.Pipe()
        self.proc = ctx.Process(
            target=worker_main, args=(child, max_open), daemon=True, name="icing-worker"
        )
        self.proc.start()
        child.close()
        self.conn = parent
        if not parent.poll(_READY_TIMEOUT_S) or parent.recv() != "ready":
            self.kill()
            raise RuntimeError("a worker process did not start")

    @property
    def pid(self):
        return self.proc.pid

    def call(self, job: dict, timeout_s: float):
        self.conn.send(job)
        if not self.conn.poll(timeout_s):
            raise TimeoutError
        return self.conn.recv()

    def kill(self) -> None:
        self.proc.kill()
        self.proc.join(5)
        self.conn.close()

    def stop(self, grace_s: float) -> None:
        try:
            self.conn.send(None)
        except OSError:
            pass
        self.proc.join(grace_s)
        if self.proc.is_alive():
            self.proc.terminate()
            self.proc.join(2)
        if self.proc.is_alive():
            self.proc.kill()
            self.proc.join(2)
        self.conn.close()


class _InlineSlot:
    """Computations on a thread of the server process, one at a time, under the file lock."""

    def __init__(self, max_open: int, file_lock):
        from icing.service.jobs import ForecastStore

        self.store = ForecastStore(max_open)
        self.pid = None
        self.file_lock = file_lock

    def call(self, job: dict, timeout_s: float):
        from icing.service.jobs import run_job

        with self.file_lock:
            return run_job(job, self.store)

    def kill(self) -> None:  # a thread cannot be stopped; it ends when its job does
        pass

    def stop(self, grace_s: float) -> None:
        pass


def _context():
    methods = multiprocessing.get_all_start_methods()
    ctx = multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")
    if ctx.get_start_method() == "forkserver":
        ctx.set_forkserver_preload(_PRELOAD)
    return ctx


class JobPool:
    """A bounded pool of workers (see the module docstring).

    Parameters
    ----------
    size : int
        Worker processes; 0 runs the jobs inline, one at a time.
    run_timeout_s : float
        Longest a job may run. [s]
    queue_limit : int
        Most requests waiting for a worker.
    queue_timeout_s : float
        Longest a request waits for a worker. [s]
    max_open : int
        Forecasts each worker keeps open.
    """

    def __init__(self, size, *, run_timeout_s, queue_limit, queue_timeout_s, max_open=16):
        self.size = max(0, int(size))
        self.mode = "processes" if self.size else "inline"
        self.run_timeout_s = float(run_timeout_s)
        self.queue_limit = max(0, int(queue_limit))
        self.queue_timeout_s = float(queue_timeout_s)
        self.max_open = int(max_open)
        self._slots = max(1, self.size)
        self._idle: asyncio.Queue | None = None
        self._threads: ThreadPoolExecutor | None = None
        self._ctx = None
        self._waiting = 0
        self._busy = 0
        self._closing = False
        self._all: set = set()  # every live slot, idle or busy
        self.file_lock = FILE_LOCK
        self.counts = {"jobs": 0, "timeouts": 0, "workers_lost": 0, "refused_busy": 0}

    def _new_slot(self):
        if self.size == 0:
            slot = _InlineSlot(self.max_open, self.file_lock)
        else:
            slot = _ProcessSlot(self._ctx, self.max_open)
        self._all.add(slot)
        return slot

    async def start(self) -> None:
        """Start the workers (and wait until each is ready)."""
        loop = asyncio.get_running_loop()
        # one thread per slot waits on its worker, plus threads for replacements
        self._threads = ThreadPoolExecutor(self._slots + 2, thread_name_prefix="icing-pool")
        self._idle = asyncio.Queue()
        if self.size:
            self._ctx = _context()
        slots = await asyncio.gather(
            *[loop.run_in_executor(self._threads, self._new_slot) for _ in range(self._slots)]
        )
        for s in slots:
            self._idle.put_nowait(s)
        log.info("job pool ready: %s, %d worker(s)", self.mode, self._slots)

    def stats(self) -> dict:
        """Workers, busy and waiting requests, counters and resident memory [MiB]."""
        workers = [rss_mb(s.pid) for s in list(self._all) if s.pid is not None]
        return {
            "mode": self.mode,
            "workers": self._slots,
            "busy": self._busy,
            "waiting": self._waiting,
            **self.counts,
            "rss_mb": {
                "server": rss_mb(),
                "workers": None if None in workers else round(sum(workers), 1),
            },
        }

    async def run(self, job: dict):
        """Run a job; return the worker's ``(status, body, media type)``.

        Raises
        ------
        Busy
            No worker free in time, too many waiting, or the server is stopping.
        RunTimeout
            The job ran past ``run_timeout_s``.
        WorkerLost
            The worker ended during the job (it is replaced).
        """
        retry = max(1.0, round(self.queue_timeout_s / 2))
        if self._closing:
            raise Busy("the server is shutting down (fix: retry on another instance)", retry)
        if self._idle.empty() and self._waiting >= self.queue_limit:
            self.counts["refused_busy"] += 1
            raise Busy(
                f"all {self._slots} workers are busy and {self._waiting} requests wait "
                f"(fix: retry after {retry:g} s)",
                retry,
            )
        self._waiting += 1
        try:
            slot = await asyncio.wait_for(self._idle.get(), self.queue_timeout_s)
        except TimeoutError:
            self.counts["refused_busy"] += 1
            raise Busy(
                f"no worker became free within {self.queue_timeout_s:g} s "
                f"(fix: retry after {retry:g} s)",
                retry,
            ) from None
        finally:
            self._waiting -= 1
        self._busy += 1
        self.counts["jobs"] += 1
        loop = asyncio.get_running_loop()
        fut = loop.run_in_executor(self._threads, slot.call, job, self.run_timeout_s)
        fut.add_done_callback(lambda f: self._release(slot, f))
        try:
            # the wait on a worker's pipe ends at the limit (the margin only guards it);
            # an inline computation cannot be stopped: its client is answered at the limit
            margin = 1.0 if self.size else 0.0
            return await asyncio.wait_for(asyncio.shield(fut), self.run_timeout_s + margin)
        except TimeoutError:
            self.counts["timeouts"] += 1
            raise RunTimeout from None
        except (EOFError, OSError):
            self.counts["workers_lost"] += 1
            raise WorkerLost from None

    def _release(self, slot, fut) -> None:
        """Give the slot back when its job is over, or replace a stopped or dead worker."""
        self._busy -= 1
        if self._closing:  # the server is stopping: close() ends every worker
            return
        if fut.cancelled() or fut.exception() is None:
            self._idle.put_nowait(slot)
            return
        err = fut.exception()
        if isinstance(err, TimeoutError):
            log.warning("a job ran past %g s: its worker is stopped", self.run_timeout_s)
        else:
            log.error("a worker ended during a job (%s): it is replaced", type(err).__name__)
        asyncio.get_running_loop().create_task(self._replace(slot))

    async def _replace(self, slot) -> None:
        loop = asyncio.get_running_loop()
        self._all.discard(slot)
        await loop.run_in_executor(self._threads, slot.kill)
        delay = 0.5
        while not self._closing:
            try:
                new = await loop.run_in_executor(self._threads, self._new_slot)
            except Exception:
                log.exception("a worker could not be started; retrying in %g s", delay)
                await asyncio.sleep(delay)
                delay = min(30.0, delay * 2)
                continue
            self._idle.put_nowait(new)
            return

    async def close(self, grace_s: float = 5.0) -> None:
        """Stop taking jobs, let idle workers end, stop busy ones, wait for the threads.

        uvicorn has already let the requests in flight finish (graceful shutdown), so a
        worker still busy here runs a warm-up or an abandoned job.
        """
        self._closing = True
        loop = asyncio.get_running_loop()
        idle = []
        while self._idle is not None and not self._idle.empty():
            idle.append(self._idle.get_nowait())
        busy = [s for s in list(self._all) if s not in idle]
        stops = [loop.run_in_executor(self._threads, s.stop, grace_s) for s in idle]
        stops += [loop.run_in_executor(self._threads, s.kill) for s in busy]
        await asyncio.gather(*stops, return_exceptions=True)
        self._all.clear()
        if self._threads is not None:
            # inline: a computation cannot be stopped; it is waited for, as reading a file
            # while the interpreter shuts down can crash it
            await asyncio.to_thread(self._threads.shutdown, wait=True)
