"""Where independent units of work run: in this process, a local process pool, or a Dask cluster.

One seam for sweeps and multi-case runs.  An executor's ``map_blocks(fn, args_list)``
yields ``(args, result)`` as units finish (any order); a unit that raises is retried
once and then yielded with the exception as its result.  Dask (https://dask.org) is an
optional extra: ``pip install ".[cluster]"``.
"""
from __future__ import annotations

import os
import sys
import threading
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Callable, Iterator, Sequence

from . import settings
from .errors import InputError, Problem


def parse_scheduler(address: str) -> str:
    """``local:N`` (N from 1 to ``settings.MAX_LOCAL_WORKERS``) or a scheduler address
    (``tcp://HOST:PORT``, ``HOST:PORT``); anything else is refused before any work starts."""
    address = address.strip()
    if address.startswith("local:"):
        n = address.split(":", 1)[1].strip()
        if not (n.isdigit() and 1 <= int(n) <= settings.MAX_LOCAL_WORKERS):
            raise InputError(Problem("--scheduler", f"local:N takes a number of workers from 1 to "
                                     f"{settings.MAX_LOCAL_WORKERS} (settings.MAX_LOCAL_WORKERS), got {address!r}"))
        return address
    rest = address.split("://", 1)[-1]
    host, _, port = rest.rpartition(":")
    if not host or not (port.isdigit() and 1 <= int(port) <= 65535):
        raise InputError(Problem("--scheduler", f"expected tcp://HOST:PORT (a port from 1 to 65535) or local:N, "
                                 f"got {address!r}"))
    return address


def _probe_scheduler(host: str, port: int, wait: float) -> str:
    """Why ``host:port`` is not a Dask scheduler ("" when it looks like one), within ``wait``
    seconds: a scheduler greets each connection with a handshake frame (8-byte little-endian
    total length, 8-byte frame count, then the frames)."""
    import socket
    import struct
    import time
    try:
        conn = socket.create_connection((host, port), timeout=wait)
    except ConnectionRefusedError:
        return "nothing listens there; is the scheduler running?"
    except OSError as exc:
        return f"no connection within {wait:g} s ({exc.strerror or type(exc).__name__}; settings.SCHEDULER_CONNECT_S)"
    data, deadline = b"", time.monotonic() + wait
    try:
        while len(data) < 16 and time.monotonic() < deadline:
            conn.settimeout(max(deadline - time.monotonic(), 0.01))
            chunk = conn.recv(16 - len(data))
            if not chunk:
                break
            data += chunk
    except OSError:
        pass
    finally:
        conn.close()
    if len(data) < 16:
        return (f"something listens there but sent no Dask greeting within {wait:g} s "
                "(settings.SCHEDULER_CONNECT_S); is it another service?")
    total, frames = struct.unpack("<QQ", data)
    if not (16 <= total <= 1_000_000 and 1 <= frames <= 64):
        return "another service answers there (its greeting is not a Dask handshake)"
    return ""


def _end_with_parent(parent: int) -> None:
    """In a worker process: end when the process that started the pool ends, whatever ended it
    (SIGKILL included).  On Linux the kernel sends SIGKILL at the parent's death
    (PR_SET_PDEATHSIG); everywhere a thread checks the parent every
    ``settings.WORKER_PARENT_POLL_S`` and ends the worker once it is gone."""
    if sys.platform.startswith("linux"):
        try:
            import ctypes
            import signal
            ctypes.CDLL(None, use_errno=True).prctl(1, int(signal.SIGKILL), 0, 0, 0)   # PR_SET_PDEATHSIG = 1
        except (OSError, AttributeError):
            pass
    if os.getppid() != parent:       # the parent was gone before this worker started
        os._exit(1)

    def watch():
        import time
        while os.getppid() == parent:
            time.sleep(settings.WORKER_PARENT_POLL_S)
        os._exit(1)

    threading.Thread(target=watch, name="end-with-parent", daemon=True).start()


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
        self._pool = self._new_pool()

    def _new_pool(self) -> ProcessPoolExecutor:
        return ProcessPoolExecutor(max_workers=self.workers, initializer=_end_with_parent, initargs=(os.getpid(),))

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
                    self._pool = self._new_pool()
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
        address = parse_scheduler(address)
        self.address = address
        if address.startswith("local:"):
            n = int(address.split(":", 1)[1])
            self._cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                         dashboard_address=None, host="127.0.0.1")
            self.client = Client(self._cluster)
        else:
            self.client = self._connect(Client, address)
        self._wait_for_workers()
        self.workers = max(1, len(self.client.scheduler_info().get("workers", {})))

    @staticmethod
    def _connect(Client, address: str):
        """A client of the scheduler at ``address``, within ``settings.SCHEDULER_CONNECT_S``."""
        wait = settings.SCHEDULER_CONNECT_S
        if address.split("://", 1)[0] in ("tcp", address):      # a plain TCP address: probe it first
            host, _, port = address.split("://", 1)[-1].rpartition(":")
            why = _probe_scheduler(host.strip("[]"), int(port), wait)
            if why:
                raise InputError(Problem("--scheduler", f"cannot use {address} as a Dask scheduler: {why}"))
        try:
            return Client(address, timeout=f"{wait}s")
        except Exception as exc:
            from .errors import one_line
            why = "nothing answered" if isinstance(exc, (OSError, TimeoutError)) else one_line(exc, 120)
            raise InputError(Problem("--scheduler", f"cannot reach a Dask scheduler at {address} within {wait:g} s "
                                     f"(settings.SCHEDULER_CONNECT_S): {why}; is the scheduler running there?")) \
                from None

    def _wait_for_workers(self) -> None:
        """At least one worker within ``settings.SCHEDULER_WORKERS_WAIT_S``, else an error naming the scheduler."""
        wait = settings.SCHEDULER_WORKERS_WAIT_S
        try:
            self.client.wait_for_workers(1, timeout=wait)
        except Exception:
            self.close()
            raise InputError(Problem("--scheduler", f"the Dask scheduler at {self.address} has no worker after "
                                     f"{wait:g} s (settings.SCHEDULER_WORKERS_WAIT_S); start workers with "
                                     f"'dask worker {self.address}'")) from None

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
