"""The whole forecast for GIS overlays (``icing grid``): block by block, on every core.

Order of work, per block of the grid (:func:`icing.forecast.blocks.plan_blocks`):
whole columns read straight from the file (no interpolation: every grid column is a
column), assembled as a route's columns are, diagnosed whole
(:func:`icing.calc.diagnose_columns`), then reduced at once to the products of each
altitude band (:func:`icing.hazards.bands.band_products`: the same read-off, speed
schedule and collector physics as ``screen`` and ``profile``). Only the small
products leave a block (int8 classes, float32 fields), so memory follows the block
size, never the grid size; the products of the whole grid go into arrays on disk
when they are large.

Where the blocks run (measured in ``benchmarks/grid.py``; see DEVELOPERS.md):

- by default a pool of worker processes, one per core (``workers``); each opens the
  forecast files itself. Processes, not threads: the HDF5 and ecCodes libraries are
  not thread-safe, so the forecast layer serialises every call into them under one
  lock per process, and threads would wait for each other's reads (and hold the GIL
  in the many small numpy steps of the column physics);
- ``workers=1`` runs them here, one after the other;
- ``scheduler="tcp://host:port"`` sends them to an existing dask.distributed cluster
  (the ``grid`` extra), whose workers open the files by the same paths.
"""

from __future__ import annotations

import contextlib
import dataclasses
import os
import threading
import warnings
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from icing import codes
from icing.errors import ForecastError, InputError
from icing.hazards.bands import COVERAGE_GAP, PRODUCT_DTYPES, Bands, band_products, parse_bands
from icing.hazards.gridded import MEMBER_PRODUCTS, PRODUCTS, GridResult

__all__ = [
    "GridOptions",
    "GridJob",
    "grid_forecast",
    "run_block",
    "start_workers",
    "DEFAULT_BANDS_FT",
]

#: The default bands: every 2,000 ft from the sea to 20,000 ft (where aircraft ice).
DEFAULT_BANDS_FT = "0:20000:2000"
#: Products larger than this live in arrays on disk (the memory stays the blocks'). [bytes]
_IN_MEMORY_BYTES = 64 * 2**20
#: Runs of blocks waiting for or in a worker, per worker: enough to keep it busy.
_IN_FLIGHT_PER_WORKER = 3
#: Consecutive blocks a worker takes at once. A NetCDF file stores its fields in chunks
#: of several rows (16 in the benchmark's file: 8 blocks of 2 rows); each worker keeps
#: one chunk per variable in its cache (:func:`icing.forecast.blocks.bound_file_caches`),
#: so a worker given every other block read every chunk again, and both workers read
#: each chunk (measured: 1.5 ms a variable and block, against 0.7 ms in runs of 8).
_RUN_BLOCKS = 8
#: glibc's allocator in the worker processes: a block's arrays (about a megabyte each)
#: are taken from and returned to the heap instead of being mapped and unmapped one by
#: one, which faulted fresh zeroed pages in for every temporary (a tenth of the run's
#: processor time went to the kernel; measured 0.5-1 s of 23 s on the benchmark's grid).
#: The mallopt(3) environment variables; ignored where the C library is another. And
#: numpy's huge-page advice off, as in the main process (:func:`plain_pages`).
_WORKER_ENVIRONMENT = {
    "MALLOC_MMAP_THRESHOLD_": str(64 * 2**20),
    "MALLOC_TRIM_THRESHOLD_": str(512 * 2**20),
    "MALLOC_TOP_PAD_": str(64 * 2**20),
    "NUMPY_MADVISE_HUGEPAGE": "0",
}
#: Grids of at least this many columns (times x members x cells) use the compiled loops
#: of the column physics (SLD included), the read-off and the bands where numba is
#: installed: importing numba and loading the loops costs about 0.5 s a process and they
#: save about 20 us a column on average (a 3,600-column block of benchmarks/grid.py's
#: case), so they pay from about 50,000 columns a worker.
_COMPILED_MIN_COLUMNS = 200_000


@dataclass(frozen=True)
class GridOptions:
    """Choices of a grid run (stated in the outputs' provenance and assumptions).

    Attributes
    ----------
    bands : Bands
        The altitude bands [ft MSL] (default every 2,000 ft to 20,000 ft).
    times : None, "all" or sequence of datetime64
        Valid times gridded: the first (None), every one ("all"), or these (each
        must be one of the forecast's valid times).
    workers : int or None
        Worker processes; None: one per core; 1: in this process.
    scheduler : str or None
        Address of a dask.distributed scheduler to run the blocks on instead.
    block_columns : int
        Most columns diagnosed at once: grid columns of a block, times the members of
        an ensemble (the column physics holds a block at once).
    member_statistic : str
        Ensembles and spreads: the statistic whose word is each cell's severity
        (``"median"``, ``"worst"``, ``"pNN"``; :class:`icing.hazards.ensemble.MemberStatistic`).
    spread : str or None
        A parametric spread of a single forecast (``"all"`` or choices of
        :data:`icing.runs.spread.SPREAD_CHOICES`): its variants are the members.
    """

    bands: Bands = field(default_factory=lambda: parse_bands(DEFAULT_BANDS_FT))
    times: object = None
    workers: int | None = None
    scheduler: str | None = None
    block_columns: int = 4000
    member_statistic: str = "median"
    spread: str | None = None

    def describe(self) -> dict:
        """Return the options as a JSON-serialisable dict."""
        return {
            "bands": self.bands.describe(),
            "block_columns": self.block_columns,
            "runs_on": (
                f"dask.distributed scheduler {self.scheduler}"
                if self.scheduler
                else f"{_workers(self.workers)} worker process(es)"
            ),
        }


@dataclass(frozen=True)
class GridJob:
    """What every worker needs to compute any block (small, picklable)."""

    paths: tuple
    """The forecast files."""
    load: tuple
    """``load_forecast`` keyword arguments as sorted (name, value) pairs."""
    airframe: object
    """The Airframe."""
    bands: Bands
    """The altitude bands."""
    column_options: object
    """The ColumnOptions."""
    members: object = None
    """The members (:class:`icing.runs.gridmembers.MemberPlan`), None for one forecast."""
    opened: object = None
    """What opening the files taught this process (:func:`icing.forecast.memo.export`), so
    that a worker opens them without looking it all up again."""
    compiled: bool = False
    """Use the compiled loops where numba is installed (large grids): the read-off and the
    bands (the same values), the column physics and the SLD diagnosis (continuous fields
    to a few units in the last place, classes the same: see DEVELOPERS.md)."""


def _workers(workers):
    return max(1, int(workers if workers is not None else (os.cpu_count() or 1)))


# ---------------------------------------------------------------- worker side

_OPEN = {}  # (paths, load) -> forecast, in each worker process
_OPEN_LOCK = threading.Lock()


def _forecast_of(job: GridJob):
    """Return the job's forecast, opened once per process (a dask worker's threads share it)."""
    from icing.forecast import load_forecast, memo

    key = (job.paths, job.load)
    with _OPEN_LOCK:
        if key not in _OPEN:
            while len(_OPEN) >= 2:  # a long-lived dask worker may serve several runs
                _OPEN.pop(next(iter(_OPEN)))
            memo.adopt(job.opened)
            forecast = load_forecast(list(job.paths), **dict(job.load))
            _bound_caches(forecast)
            _OPEN[key] = forecast
        return _OPEN[key]


def _bound_caches(forecast):
    """Bound the file caches of a forecast, or of every member of an ensemble."""
    from icing.forecast.blocks import bound_file_caches

    if getattr(forecast, "joint", None) is not None:
        bound_file_caches(forecast.joint)
    elif hasattr(forecast, "members"):
        for m in forecast.members:
            bound_file_caches(m.forecast)
    else:
        bound_file_caches(forecast)


def block_products(forecast, block, job: GridJob):
    """Return the band products of one block (see the module docstring)."""
    from icing.calc.column import diagnose_columns
    from icing.forecast.blocks import read_block_columns

    if job.members is not None:
        from icing.runs.gridmembers import member_block_products

        return member_block_products(forecast, block, job)

    bc = read_block_columns(forecast, block, compiled=job.compiled)
    diag = diagnose_columns(
        **bc.columns,
        saturation=bc.saturation,
        options=job.column_options,
        compiled=job.compiled,
    )
    ground = bc.columns.get("surface_height")
    return band_products(diag, job.airframe, job.bands, ground=ground, compiled=job.compiled)


def run_block(job: GridJob, block):
    """Compute one block in this process: ``(block, BandProducts)`` (dask tasks call this)."""
    with warnings.catch_warnings():  # the reader's warnings were shown once, by the run
        warnings.simplefilter("ignore")
        return block, block_products(_forecast_of(job), block, job)


_POOL_JOB = None


def _init_pool_worker(job):
    global _POOL_JOB
    _POOL_JOB = job
    warnings.simplefilter("ignore")
    _forecast_of(job)  # open the files once, before the first block


def _pool_blocks(blocks):
    return [run_block(_POOL_JOB, block) for block in blocks]


# ---------------------------------------------------------------- the run


def grid_forecast(
    forecast,
    *,
    airframe,
    options: GridOptions | None = None,
    column_options=None,
    load_options=None,
    progress=None,
) -> GridResult:
    """Grid the icing hazard over a whole forecast for one airframe.

    Parameters
    ----------
    forecast : GridForecast or path or list of paths
        The forecast (``icing.load_forecast``) or its files.
    airframe : Airframe or str
        Preset name, airframe TOML file or :class:`icing.airframes.Airframe`.
    options : GridOptions, optional
        Bands, valid times, workers or a dask scheduler, block size.
    column_options : ColumnOptions, optional
        Column-physics choices (air mass, ...).
    load_options : dict, optional
        ``load_forecast`` keywords the files were read with (``var_map``, ``member``,
        ``rh_convention``): worker processes open the files again with them.
    progress : callable, optional
        ``progress(done, total)`` after each block.

    Returns
    -------
    GridResult
        Arrays (time, band, y, x) of severity, SLD class, coverage, LWC, MVD and
        accretion rate, with the provenance and the assumptions.
    """
    from icing.forecast.blocks import cell_lonlat, plan_blocks

    options = options or GridOptions()
    forecast, airframe, column_options, plan, job = _prepared(
        forecast, airframe, options, column_options, load_options
    )
    times = _time_indices(forecast, options.times)
    ref = _reference(forecast)
    src = ref.sources[0]
    chunk = max(1, min(int(options.block_columns), int(column_options.chunk_columns)))
    cells = max(1, chunk // (plan.count if plan is not None else 1))
    blocks = plan_blocks(src.y.size, src.x.size, times, columns=cells)
    columns = len(times) * src.y.size * src.x.size * (plan.count if plan is not None else 1)
    job = dataclasses.replace(job, compiled=columns >= _COMPILED_MIN_COLUMNS)
    shape = (len(times), options.bands.count, src.y.size, src.x.size)
    # made in a thread while the workers start (filling a continental grid's takes 0.3 s,
    # bringing its cells to lon/lat for the NetCDF 0.2 s)
    with plain_pages(), ThreadPoolExecutor(max_workers=1) as pool:
        making = pool.submit(_store, *shape, members=plan is not None)
        lonlat = None if src.crs is None else pool.submit(cell_lonlat, src)
        position = {t: i for i, t in enumerate(times)}
        for done, (block, prod) in enumerate(_results(forecast, job, blocks, options), 1):
            _put(making.result()[0], position[block.time_index], block, prod)
            if progress is not None:
                progress(done, len(blocks))
        store, scratch = making.result()
    return GridResult(
        airframe=airframe.name,
        bands=options.bands,
        times=np.asarray(forecast.valid_times)[times],
        x=np.asarray(src.x, float),
        y=np.asarray(src.y, float),
        crs=src.crs,
        grid_mapping=src.grid_mapping,
        periodic=bool(getattr(ref, "periodic", False)),
        provenance=_provenance(forecast, times),
        assumptions=_assumptions(column_options, options, airframe, plan),
        scratch=scratch,
        lonlat=None if lonlat is None else lonlat.result(),
        **_member_fields(store, plan),
    )


def _prepared(forecast, airframe, options, column_options, load_options):
    """Open what is given by name; return the forecast, airframe, options, members, job."""
    from icing.airframes import load_airframe
    from icing.calc.column import ColumnOptions
    from icing.forecast import load_forecast, memo
    from icing.runs.gridmembers import job_files, member_plan

    column_options = column_options or ColumnOptions()
    load_options = dict(load_options or {})
    if not hasattr(forecast, "columns_at"):
        forecast = load_forecast(forecast, **load_options)
    _check_gridded(forecast)
    if not hasattr(airframe, "collectors"):
        airframe = load_airframe(airframe)
    plan = member_plan(
        forecast,
        statistic=options.member_statistic,
        spread=options.spread,
        column_options=column_options,
    )
    paths, extra = job_files(forecast, plan)
    job = GridJob(
        paths,
        tuple(sorted({**load_options, **extra}.items())),
        airframe,
        options.bands,
        column_options,
        plan,
        memo.export(paths),
    )
    return forecast, airframe, column_options, plan, job


def _reference(forecast):
    from icing.runs.gridmembers import reference_grid

    return reference_grid(forecast)


def _member_fields(store, plan):
    """Return the GridResult keywords of the stores (member fractions gathered, the plan)."""
    from icing.hazards.ensemble import FRACTION_WORDS
    from icing.hazards.gridmembers import fraction_key

    out = dict(store)
    if plan is None:
        return out
    out["member_fraction"] = {w: out.pop(fraction_key(w)) for w in FRACTION_WORDS}
    out.update(
        members=plan.count,
        member_labels=tuple(plan.labels),
        member_statistic=plan.statistic.name,
    )
    return out


def _check_gridded(forecast):
    if hasattr(forecast, "member_columns_at"):
        return  # an ensemble: every member is checked (runs.gridmembers.member_plan)
    if getattr(forecast, "kind", None) != "grid":
        files = getattr(forecast, "files", None) or [None]
        raise ForecastError(
            "icing grid needs a gridded forecast; profile and sounding files are points",
            path=files[0],
            where="--forecast",
            fix="give GRIB, NetCDF or WRF files, or use `icing profile` / `icing screen`",
        )


def _time_indices(forecast, times):
    """Return the indices of the valid times to grid (see :class:`GridOptions`)."""
    vt = np.asarray(forecast.valid_times).astype("datetime64[ms]")
    if times is None:
        return [0]
    if isinstance(times, str) and times == "all":
        return list(range(vt.size))
    out = []
    for t in times:
        t = np.datetime64(t, "ms")
        hit = np.flatnonzero(vt == t)
        if hit.size == 0:
            from icing.forecast.columns import iso_time

            listed = ", ".join(iso_time(v) for v in vt[:6]) + (" ..." if vt.size > 6 else "")
            raise InputError(
                f"{iso_time(t)} is not a valid time of the forecast",
                where="--time",
                fix=f"give one of its valid times ({listed}) or --all-times",
            )
        out.append(int(hit[0]))
    return sorted(set(out))


def _store(nt, nb, ny, nx, *, members=False):
    """Arrays for the whole grid's products: in memory, or on disk when large."""
    shape = (nt, nb, ny, nx)
    fill = {
        "severity": codes.GAP,
        "sld": codes.GAP,
        "coverage": COVERAGE_GAP,
        "lwc": np.nan,
        "mvd": np.nan,
        "accretion_rate": np.nan,
    }
    dtypes = {k: PRODUCT_DTYPES[k] for k in fill}
    if members:  # an ensemble's cells: the worst member, the members with data, fractions
        from icing.hazards.gridmembers import MEMBER_FILL, MEMBER_PRODUCT_DTYPES

        fill.update(MEMBER_FILL)
        dtypes.update(MEMBER_PRODUCT_DTYPES)
    total = sum(np.dtype(d).itemsize for d in dtypes.values()) * int(np.prod(shape))
    scratch = None
    if total > _IN_MEMORY_BYTES:
        import tempfile

        scratch = tempfile.TemporaryDirectory(prefix="icing-grid-")
    store = {}
    for name, dtype in dtypes.items():
        if scratch is None:
            store[name] = np.full(shape, fill[name], dtype=dtype)
        else:
            path = os.path.join(scratch.name, f"{name}.npy")
            store[name] = np.lib.format.open_memmap(path, mode="w+", dtype=dtype, shape=shape)
            store[name][...] = fill[name]
    return store, scratch


def _put(store, t, block, prod):
    """Write a block's products (band, m) into the grid's arrays."""
    ny, nx = block.shape
    arrays = prod.arrays() if hasattr(prod, "arrays") else None
    for name in store:
        a = arrays[name] if arrays is not None else getattr(prod, name)
        store[name][t, :, block.ys, block.xs] = a.reshape(a.shape[0], ny, nx)


def _results(forecast, job, blocks, options):
    """``(block, products)`` pairs from wherever the blocks run."""
    if options.scheduler:
        from icing.runs._dask import dask_results

        yield from dask_results(run_block, job, blocks, options.scheduler)
        return
    n = _workers(options.workers)
    if n == 1 or len(blocks) == 1:
        _bound_caches(forecast)
        for block in blocks:
            yield block, block_products(forecast, block, job)
        return
    yield from _pool_results(job, blocks, n)


def _pool_results(job, blocks, n):
    """Run the blocks on ``n`` worker processes (started from a clean fork server).

    Each worker takes runs of consecutive blocks (:data:`_RUN_BLOCKS`, fewer on a small
    grid so that every worker has several runs), which read the file's chunks once; the
    last few blocks go one by one, so that no worker is left with a whole run at the end.
    """
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    size = max(1, min(_RUN_BLOCKS, len(blocks) // (4 * n)))
    runs = [blocks[i : i + size] for i in range(0, len(blocks), size)]
    # the last runs one block at a time, so that the workers finish together
    split = len(runs) - 2 * n if len(runs) > 2 * n else len(runs)
    todo = iter(runs[:split] + [[b] for run in runs[split:] for b in run])
    ctx = start_workers(warm=job.compiled)
    with ProcessPoolExecutor(
        n, mp_context=ctx, initializer=_init_pool_worker, initargs=(job,)
    ) as pool:
        pending = set()
        for run in todo:
            pending.add(pool.submit(_pool_blocks, run))
            if len(pending) >= n * _IN_FLIGHT_PER_WORKER:
                break
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                yield from fut.result()
                nxt = next(todo, None)
                if nxt is not None:
                    pending.add(pool.submit(_pool_blocks, nxt))


def start_workers(*, warm=True):
    """Start the fork server the grid's worker processes come from, if not yet running.

    Called by ``icing grid`` before it opens the forecast, so that the server's start
    (and, with ``warm``, the imports and compiled loops of :mod:`icing.runs._warm`)
    overlaps the main process's own work; the pool calls it again (a no-op then).
    Workers get the allocator settings of :data:`_WORKER_ENVIRONMENT`. Returns the
    multiprocessing context.
    """
    import multiprocessing as mp
    from multiprocessing import forkserver

    ctx = mp.get_context("forkserver")
    ctx.set_forkserver_preload(["icing.runs.grid"] + (["icing.runs._warm"] if warm else []))
    with _environment(_WORKER_ENVIRONMENT):
        forkserver.ensure_running()  # no-op when running (its preloads are then kept)
    return ctx


@contextlib.contextmanager
def plain_pages():
    """Make the arrays inside without numpy's huge-page advice (restored after).

    numpy advises the kernel to back each array of 4 MiB or more with huge pages. A
    grid's products (hundreds of MB for a continental grid, written once) gain nothing
    from them, and where the kernel compacts memory on demand for advised ranges
    (transparent huge pages with ``defrag`` at ``madvise``, a common default) their
    first touch can stall: filling the benchmark grid's products took 1.6-2.0 s of
    system time with the advice and 0.2 s without, on the benchmark's machine. Where
    numpy has no such switch, nothing changes.
    """
    try:
        from numpy._core.multiarray import _set_madvise_hugepage
    except ImportError:  # another numpy: its own default
        yield
        return
    before = _set_madvise_hugepage(False)
    try:
        yield
    finally:
        _set_madvise_hugepage(before)


@contextlib.contextmanager
def _environment(values):
    """Set environment variables the caller has not set, for the processes started inside."""
    added = {k: v for k, v in values.items() if k not in os.environ}
    os.environ.update(added)
    try:
        yield
    finally:
        for k in added:
            os.environ.pop(k, None)


def _provenance(forecast, times):
    prov = dict(forecast.describe())
    vt = np.asarray(forecast.valid_times)
    from icing.forecast.columns import iso_time

    prov["valid_times_gridded"] = [iso_time(vt[t]) for t in times]
    prov["columns"] = "every grid column, read from the file (no interpolation)"
    return prov


def _assumptions(column_options, options, airframe, plan=None):
    from icing.calc.airframe import assumptions as collector_assumptions

    out = {
        "column": column_options.describe(),
        "collectors": collector_assumptions(),
        "airframe": airframe.describe(),
        "grid": options.describe(),
        "products": dict(PRODUCTS) if plan is None else {**PRODUCTS, **MEMBER_PRODUCTS},
        "airspeed": "the airframe's level-flight speed schedule at each altitude, in the "
        "forecast's air (as icing profile)",
        "altitude_reference_note": "every altitude is above mean sea level (feet MSL); the "
        "part of a band below the ground is left out, a band wholly below it is a gap "
        "(below-ground)",
    }
    if plan is not None:
        out["members"] = plan.describe()
    return out
