"""Executors: run the chunk tasks of an assessment serially, on local processes or on Dask.

Every executor has the same small interface, :class:`Executor`: an ordered
``map(fn, items)`` used as a context manager. Results come back in the order of
the items whichever executor runs them, and each task is a pure function of its
item, so the results are identical. At most ``window`` tasks are in flight at a
time, so memory stays bounded by a few chunks however long the run is.
"""

from __future__ import annotations

import logging
import multiprocessing
import os
import sys
import threading
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import Future, ProcessPoolExecutor
from contextlib import contextmanager
from datetime import UTC, datetime
from typing import Any, Protocol

from ..errors import ParameterError

log = logging.getLogger(__name__)

#: with ``workers=0`` (auto) a run of fewer chunks than this stays serial: starting
#: processes costs more than it saves on a short line
AUTO_POOL_MIN_CHUNKS = 3
#: tasks kept in flight per worker (keeps every worker busy, bounds memory)
IN_FLIGHT_PER_WORKER = 2


#: Settings fields that choose how a run is executed, not what it computes; they are
#: left out of the run metadata so every executor writes the same GeoPackage
EXECUTION_FIELDS = ("chunk_size", "workers", "scheduler", "dem_cache")


def run_time() -> datetime:
    """The run's time stamp (UTC): now, or ``SOURCE_DATE_EPOCH`` where that is set.

    ``SOURCE_DATE_EPOCH`` (seconds since 1970, the reproducible-builds convention)
    pins the time stamp so two runs can be compared byte for byte.
    """
    fixed = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if fixed:
        try:
            return datetime.fromtimestamp(int(fixed), tz=UTC)
        except ValueError as exc:
            raise ParameterError(f"SOURCE_DATE_EPOCH must be whole seconds since 1970, "
                                 f"got {fixed!r}") from exc
    return datetime.now(UTC)


@contextmanager
def geopackage_write_options(iso_time: str) -> Iterator[None]:
    """GDAL options while the GeoPackage is written: pinned time stamps, no per-step sync.

    The GeoPackage driver records a last-change time per layer (GDAL config option
    ``OGR_CURRENT_DATE``); pinning it to the run time leaves the run time as the
    only thing that differs between two runs of the same inputs. SQLite's
    synchronous writes (``OGR_SQLITE_SYNCHRONOUS``) are turned off: the file is
    written under a temporary name and renamed only when complete, so a crash
    cannot leave a half-written result, and the many disk syncs would otherwise
    cost more than the whole assessment of a long line.
    """
    import pyogrio

    stamp = datetime.fromisoformat(iso_time).astimezone(UTC)
    pyogrio.set_gdal_config_options({
        "OGR_CURRENT_DATE": stamp.strftime("%Y-%m-%dT%H:%M:%S.000Z"),
        "OGR_SQLITE_SYNCHRONOUS": "OFF"})
    try:
        yield
    finally:
        pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": None,
                                         "OGR_SQLITE_SYNCHRONOUS": None})


class ExecutionError(ParameterError):
    """An executor cannot be set up as asked (missing extra, unreachable scheduler)."""


class Executor(Protocol):
    """Ordered map over tasks; a context manager that releases its workers."""

    workers: int

    def map(self, fn: Callable[[Any], Any], items: Iterable[Any]) -> Iterator[Any]: ...

    def __enter__(self) -> Executor: ...

    def __exit__(self, *exc: object) -> None: ...


class SerialExecutor:
    """Run every task in this process, one after the other (the reference)."""

    workers = 1

    def map(self, fn: Callable[[Any], Any], items: Iterable[Any]) -> Iterator[Any]:
        return map(fn, items)

    def __enter__(self) -> SerialExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        return None


def _bounded_map(submit: Callable[[Any], Any], items: Iterable[Any], window: int,
                 result: Callable[[Any], Any]) -> Iterator[Any]:
    """Ordered results of ``submit(item)`` with at most ``window`` futures in flight."""
    pending: deque = deque()
    it = iter(items)
    for item in it:
        pending.append(submit(item))
        if len(pending) >= window:
            break
    while pending:
        fut = pending.popleft()
        out = result(fut)
        for item in it:
            pending.append(submit(item))
            break
        yield out


def _pool_context() -> multiprocessing.context.BaseContext:
    """Start method for the pool: fork where it is safe and cheap, else a fresh server.

    Forking copies the already imported modules (fast start); it is used on
    Linux when this process runs no other Python thread (forking a threaded
    process can deadlock). Otherwise workers come from a fork server where the
    platform has one, else they are spawned.
    """
    methods = multiprocessing.get_all_start_methods()
    if fork_is_safe():
        return multiprocessing.get_context("fork")
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


def fork_is_safe() -> bool:
    """True where a task can run in a forked copy of this process (Linux, no other thread)."""
    return sys.platform.startswith("linux") and threading.active_count() == 1


class Forked:
    """``fn()`` running in a forked copy of this process; :meth:`result` waits for it.

    The child inherits the caller's memory (nothing is pickled on the way in); its
    return value must be picklable, and an exception it raises is raised again by
    :meth:`result`. Used to write independent output files side by side.
    """

    def __init__(self, fn: Callable[[], Any]):
        ctx = multiprocessing.get_context("fork")
        self._recv, send = ctx.Pipe(duplex=False)
        self._proc = ctx.Process(target=_forked_main, args=(fn, send), daemon=True)
        self._proc.start()
        send.close()

    def result(self) -> Any:
        try:
            ok, value = self._recv.recv()
        except EOFError:
            self._proc.join()
            raise RuntimeError(f"a writer process ended without a result "
                               f"(exit code {self._proc.exitcode})") from None
        finally:
            self._recv.close()
        self._proc.join()
        if not ok:
            raise value
        return value

    def cancel(self) -> None:
        """Stop the child (after an error or an interrupt in the parent)."""
        if self._proc.is_alive():
            self._proc.kill()
        self._proc.join()


def _forked_main(fn: Callable[[], Any], send: Any) -> None:
    try:
        out = (True, fn())
    except BaseException as exc:  # noqa: BLE001 - handed to the parent, raised there
        out = (False, exc)
    try:
        send.send(out)
    except Exception:  # an unpicklable exception: its text still reaches the parent
        send.send((False, RuntimeError(f"{type(out[1]).__name__}: {out[1]}")))
    send.close()


def side_by_side(tasks: list[Callable[[], Any]], *, parallel: bool) -> list[Any]:
    """Run independent ``tasks``; with ``parallel`` all but the last in forked children.

    Results in task order. Falls back to one after the other where forking is not
    safe. Any error stops the other tasks and is raised.
    """
    if not parallel or len(tasks) < 2 or not fork_is_safe():
        return [t() for t in tasks]
    children = [Forked(t) for t in tasks[:-1]]
    try:
        last = tasks[-1]()
        return [c.result() for c in children] + [last]
    except BaseException:
        for c in children:
            c.cancel()
        raise


class ProcessExecutor:
    """Run tasks on a pool of local worker processes."""

    def __init__(self, workers: int):
        self.workers = max(int(workers), 1)
        self._pool: ProcessPoolExecutor | None = None

    def __enter__(self) -> ProcessExecutor:
        self._pool = ProcessPoolExecutor(max_workers=self.workers, mp_context=_pool_context())
        return self

    def __exit__(self, *exc: object) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None

    def map(self, fn: Callable[[Any], Any], items: Iterable[Any]) -> Iterator[Any]:
        if self._pool is None:
            raise RuntimeError("use the executor as a context manager")
        pool = self._pool
        return _bounded_map(lambda item: pool.submit(fn, item), items,
                            IN_FLIGHT_PER_WORKER * self.workers, Future.result)


class DaskExecutor:
    """Run tasks on a Dask distributed cluster (optional extra ``trajectory[distributed]``).

    The workers must be able to import trajectory and open the DEM at the same
    path (a shared or object-store file system).
    """

    def __init__(self, address: str, *, timeout: float = 30.0):
        try:
            from distributed import Client
        except ImportError as exc:
            raise ExecutionError(
                "running on a Dask scheduler needs the optional extra: "
                "pip install 'trajectory[distributed]'") from exc
        self.address = address
        try:
            self._client = Client(address, timeout=timeout, set_as_default=False)
        except (OSError, TimeoutError) as exc:
            raise ExecutionError(f"cannot reach the Dask scheduler at {address} ({exc}); "
                                 "check the address and that the scheduler runs") from exc
        self.workers = max(sum(w.get("nthreads", 1) for w in
                               self._client.scheduler_info()["workers"].values()), 1)

    def __enter__(self) -> DaskExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self._client.close()

    def map(self, fn: Callable[[Any], Any], items: Iterable[Any]) -> Iterator[Any]:
        client = self._client

        def result(fut: Any) -> Any:
            try:
                return fut.result()
            finally:
                fut.release()

        # pure=False: every task runs (no de-duplication by content across runs)
        return _bounded_map(lambda item: client.submit(fn, item, pure=False), items,
                            IN_FLIGHT_PER_WORKER * self.workers, result)


def resolve_workers(workers: int, n_tasks: int) -> int:
    """Worker processes to use: ``workers``, or with 0 (auto) all cores for long runs."""
    if workers > 0:
        return min(workers, max(n_tasks, 1))
    if n_tasks < AUTO_POOL_MIN_CHUNKS:
        return 1
    return min(os.cpu_count() or 1, n_tasks)


def make_executor(*, workers: int, scheduler: str = "", n_tasks: int) -> Executor:
    """The executor for a run: Dask at ``scheduler``, else a process pool, else serial."""
    if scheduler:
        log.info("running %d chunks on the Dask scheduler at %s", n_tasks, scheduler)
        return DaskExecutor(scheduler)
    n = resolve_workers(workers, n_tasks)
    if n <= 1:
        return SerialExecutor()
    log.info("running %d chunks on %d worker processes", n_tasks, n)
    return ProcessExecutor(n)
