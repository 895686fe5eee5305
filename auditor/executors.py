"""Where independent units of work run: in this process, a local process pool, or a Dask cluster.

One seam for sweeps and multi-case runs.  An executor's ``map_blocks(fn, args_list)``
yields ``(args, result)`` as units finish (any order); a unit that raises is retried
once and then yielded with the exception as its result.  Dask (https://dask.org) is an
optional extra: ``pip install ".[cluster]"``.
"""
from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Callable, Iterator, Sequence

from .errors import InputError, Problem


class InProcess:
    name = "in-process"
    workers = 1
    blocks_per_worker = 8       # progress and resume granularity; no scheduling cost here

    def map_blocks(self, fn: Callable, args_list: Sequence[tuple]) -> Iterator[tuple[tuple, object]]:
        for args in args_list:
            result = None
            for attempt in range(2):
                try:
                    result = fn(*args)
                    break
                except Exception as exc:  # retried once, then reported as data
                    result = exc
            yield args, result

    def close(self):
        pass


class ProcessPool:
    name = "process-pool"
    blocks_per_worker = 8       # a pool hand-off costs ~0.1 ms: small blocks balance the load

    def __init__(self, workers: int | None = None):
        self.workers = workers or os.cpu_count() or 1
        self._pool = ProcessPoolExecutor(max_workers=self.workers)

    def map_blocks(self, fn, args_list):
        from concurrent.futures.process import BrokenProcessPool
        pending = {self._pool.submit(fn, *args): (args, 0) for args in args_list}
        while pending:
            for fut in as_completed(list(pending)):
                args, tries = pending.pop(fut)
                try:
                    yield args, fut.result()
                except BrokenProcessPool as exc:
                    # a worker died: start a fresh pool and retry this unit once
                    self._pool.shutdown(cancel_futures=True)
                    self._pool = ProcessPoolExecutor(max_workers=self.workers)
                    rest = [(a, t) for a, t in pending.values()]
                    pending.clear()
                    for a, t in rest + ([(args, tries + 1)] if tries == 0 else []):
                        pending[self._pool.submit(fn, *a)] = (a, t)
                    if tries:
                        yield args, exc
                    break
                except Exception as exc:
                    if tries == 0:
                        pending[self._pool.submit(fn, *args)] = (args, 1)
                    else:
                        yield args, exc

    def close(self):
        self._pool.shutdown(cancel_futures=True)


class DaskCluster:
    """A Dask distributed client: ``tcp://HOST:PORT`` of a running scheduler, or ``local:N``."""

    name = "dask"
    blocks_per_worker = 2       # a task round trip costs ~10-20 ms and workers share the cores with the
                                # scheduler: few, large blocks (a 2000-point sweep on 2 workers: 4 of 500)

    def __init__(self, address: str):
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise InputError(Problem("--scheduler", "Dask is not installed; install the cluster extra with "
                                     "python -m pip install -e \".[cluster]\"")) from None
        import dask
        # the statistical profiler samples the task thread every 10 ms and competes with it
        # for the interpreter lock; a sweep does not need it
        dask.config.set({"distributed.worker.profile.enabled": False})
        self._cluster = None
        if address.startswith("local:"):
            try:
                n = int(address.split(":", 1)[1])
            except ValueError:
                raise InputError(Problem("--scheduler", f"expected local:N with N a number of workers, got {address!r}")) from None
            self._cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                         dashboard_address=None, host="127.0.0.1")
            self.client = Client(self._cluster)
        else:
            try:
                self.client = Client(address, timeout="20s")
            except Exception as exc:
                raise InputError(Problem("--scheduler", f"cannot reach the Dask scheduler {address}: {exc}")) from None
        self.workers = max(1, len(self.client.scheduler_info().get("workers", {})))

    def map_blocks(self, fn, args_list):
        from dask.distributed import as_completed as dask_completed
        futures, owner = [], {}
        for args in args_list:
            # retries=1: a unit whose worker dies or that raises is run once more
            fut = self.client.submit(fn, *args, pure=False, retries=1)
            futures.append(fut)
            owner[fut.key] = args
        for fut in dask_completed(futures):
            args = owner[fut.key]
            try:
                yield args, fut.result()
            except Exception as exc:
                yield args, exc

    def close(self):
        self.client.close()
        if self._cluster is not None:
            self._cluster.close()


def make_executor(jobs: int | None, scheduler: str | None):
    if scheduler:
        return DaskCluster(scheduler)
    if jobs == 1:
        return InProcess()
    return ProcessPool(jobs)
