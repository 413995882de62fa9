"""Where batch work runs: a local process pool, or a dask.distributed cluster.

Both look like a :class:`concurrent.futures.Executor` (``submit`` returning futures),
so the batch runner does not care which it has. Processes, never threads: the
integrators keep per-process state and scipy's LSODA is not thread-safe.

Examples
--------
>>> with open_executor(workers=1) as ex:
...     ex.submit(pow, 2, 10).result()
1024
"""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Iterator
from concurrent.futures import Executor, ProcessPoolExecutor
from contextlib import contextmanager

from mechfit.errors import MechfitError


class ExecutorError(MechfitError):
    """The requested executor cannot be started (bad address, dask not installed...)."""


def _limit_threads() -> None:
    # one BLAS thread per worker process: the workers are the parallelism
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")


@contextmanager
def open_executor(*, workers: int | None = None, scheduler: str | None = None,
                  cluster: str | None = None) -> Iterator[Executor]:
    """Open an executor for batch work and close it afterwards.

    Parameters
    ----------
    workers
        Local worker processes (default: the number of CPUs).
    scheduler
        Address of a running dask.distributed scheduler (``tcp://host:8786``).
    cluster
        ``"local:N"`` starts a dask LocalCluster with N worker processes here.

    Raises
    ------
    ExecutorError
        When dask is needed but not installed, or the scheduler cannot be reached.
    """
    if scheduler and cluster:
        raise ExecutorError("give either --scheduler or --cluster, not both")
    if scheduler or cluster:
        try:
            from distributed import Client, LocalCluster
        except ImportError:
            raise ExecutorError("dask.distributed is not installed: pip install "
                                "'mechfit[batch]'") from None
        local = None
        try:
            if cluster:
                kind, _, n = cluster.partition(":")
                if kind != "local" or not n.isdigit() or int(n) < 1:
                    raise ExecutorError(f"--cluster {cluster!r}: expected 'local:N' with N >= 1")
                local = LocalCluster(n_workers=int(n), threads_per_worker=1, processes=True,
                                     dashboard_address=None, host="127.0.0.1")
                client = Client(local)
            else:
                client = Client(scheduler, timeout="10s")
        except ExecutorError:
            raise
        except (OSError, TimeoutError) as exc:
            raise ExecutorError(f"cannot reach the dask scheduler {scheduler!r}: {exc}") from None
        try:
            yield client.get_executor(pure=False)
        finally:
            client.close()
            if local is not None:
                local.close()
        return
    _limit_threads()
    n = workers or os.cpu_count() or 1
    if n < 1:
        raise ExecutorError(f"--workers {workers}: expected a positive number")
    ctx = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=n, mp_context=ctx) as pool:
        yield pool
