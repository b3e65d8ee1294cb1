"""Grid blocks on an existing dask.distributed cluster (``icing grid --scheduler``).

The cluster's workers must have ``icing`` installed and see the forecast files at
the same paths; each worker process opens them once
(:func:`icing.runs.grid.run_block`). Blocks are submitted a few per worker thread at
a time, so the products waiting in the cluster stay few.
"""

from __future__ import annotations

from icing.errors import InputError

__all__ = ["dask_results"]

#: Seconds to wait for the scheduler before saying it cannot be reached.
CONNECT_TIMEOUT_S = 10


def _client(address):
    try:
        from distributed import Client
    except ImportError:
        raise InputError(
            "--scheduler needs the dask.distributed package",
            where="--scheduler",
            fix="pip install 'icing-hazard[grid]', or leave out --scheduler",
        ) from None
    try:
        return Client(address, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as err:
        raise InputError(
            f"cannot reach the dask scheduler at {address!r} ({type(err).__name__})",
            where="--scheduler",
            fix="start the cluster first, or check the address (tcp://HOST:PORT)",
        ) from None


def dask_results(run_block, job, blocks, address):
    """Yield ``run_block(job, block)`` for every block as the cluster finishes them (any order)."""
    from distributed import as_completed

    client = _client(address)
    try:
        threads = max(1, sum(client.nthreads().values()))
        todo = iter(blocks)
        first = [b for _, b in zip(range(3 * threads), todo, strict=False)]
        remote_job = client.scatter(job, broadcast=True)
        ac = as_completed(
            [client.submit(run_block, remote_job, b, pure=False) for b in first], loop=client.loop
        )
        for fut in ac:
            block, prod = fut.result()
            fut.release()
            yield block, prod
            nxt = next(todo, None)
            if nxt is not None:
                ac.add(client.submit(run_block, remote_job, nxt, pure=False))
    finally:
        client.close()
