"""One executor interface for work that splits into independent tasks.

Screening many series, simulating critical values and bootstraps go through :func:`get_executor`.
Three backends: ``serial`` (default), ``processes`` (a local process pool) and ``dask`` (a
``distributed.Client`` on a local cluster or at a scheduler address). Results come back in task
order, and each task carries its own seed (:func:`task_seeds`), so the output is identical whichever
backend runs it.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any, Protocol, TypeVar, cast

import numpy as np

from evidence._typing import Seed
from evidence._validation import check_choice
from evidence.errors import SpecError

__all__ = ["BACKENDS", "Executor", "SerialExecutor", "ProcessExecutor", "DaskExecutor",
           "get_executor", "using_executor", "task_seeds", "run_tasks", "ExecutorLike",
           "one_blas_thread", "reporting", "unit_progress"]

BACKENDS = ("serial", "processes", "dask")
T = TypeVar("T")
R = TypeVar("R")
Progress = Callable[[int, int], None]


_REPORTER: ContextVar[Callable[[str, int, int], None] | None] = ContextVar("evidence_reporter",
                                                                          default=None)


@contextmanager
def reporting(callback: Callable[[str, int, int], None] | None) -> Iterator[None]:
    """Inside the block, long per-unit steps call ``callback(label, done, total)`` (units done so
    far of ``total``); the command line draws it as a progress line with rate and time left."""
    token = _REPORTER.set(callback)
    try:
        yield
    finally:
        _REPORTER.reset(token)


def unit_progress(label: str, sizes: Sequence[int]) -> Progress | None:
    """An executor ``progress`` callback that reports units (not tasks) under ``label``, or
    ``None`` when nothing listens; ``sizes`` holds the number of units of each task."""
    callback = _REPORTER.get()
    if callback is None:
        return None
    done = np.cumsum([0, *sizes])
    total = int(done[-1])
    callback(label, 0, total)
    return lambda finished, _tasks: callback(label, int(done[finished]), total)


@contextmanager
def one_blas_thread() -> Iterator[None]:
    """Limit the BLAS library to one thread inside the block (``threadpoolctl``).

    The package's linear algebra is many small products in batches; a threaded BLAS spends more
    time starting threads than computing on them, and with another busy core (a second worker, a
    second job) it oversubscribes: a recession-design calibration of the grade took 0.56 s with two
    BLAS threads beside a busy core and 0.09 s with one. Parallel work goes through the executors.
    """
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        yield


def _worker_start() -> None:
    """Each process worker keeps BLAS to one thread (see :func:`one_blas_thread`)."""
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1, user_api="blas")


class Executor(Protocol):
    """Runs ``func`` on each task and returns the results in task order."""

    name: str

    def map(self, func: Callable[[T], R], tasks: Sequence[T], *,
            progress: Progress | None = None) -> list[R]: ...

    def close(self) -> None: ...


class SerialExecutor:
    """Runs tasks one after another in this process."""

    name = "serial"

    def map(self, func: Callable[[T], R], tasks: Sequence[T], *,
            progress: Progress | None = None) -> list[R]:
        out = []
        for i, task in enumerate(tasks, start=1):
            out.append(func(task))
            if progress is not None:
                progress(i, len(tasks))
        return out

    def close(self) -> None:
        """Nothing to release."""

    def __enter__(self) -> SerialExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


class ProcessExecutor:
    """Runs tasks in a pool of local processes (``jobs`` workers; default: the CPU count)."""

    name = "processes"

    def __init__(self, jobs: int | None = None) -> None:
        self.jobs = jobs or os.cpu_count() or 1
        self._pool = ProcessPoolExecutor(max_workers=self.jobs, initializer=_worker_start)

    def map(self, func: Callable[[T], R], tasks: Sequence[T], *,
            progress: Progress | None = None) -> list[R]:
        futures = [self._pool.submit(func, task) for task in tasks]
        out = []
        for i, future in enumerate(futures, start=1):
            out.append(future.result())
            if progress is not None:
                progress(i, len(futures))
        return out

    def close(self) -> None:
        """Shut the pool down."""
        self._pool.shutdown(wait=True)

    def __enter__(self) -> ProcessExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


class DaskExecutor:
    """Runs tasks on Dask distributed: a new local cluster, or the scheduler at ``scheduler``."""

    name = "dask"

    def __init__(self, jobs: int | None = None, scheduler: str | None = None, *,
                 processes: bool = True, client: Any = None) -> None:
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise SpecError("executor='dask' needs dask.distributed; install it with: "
                            "pip install 'decoupling-evidence[scale]'.") from None
        self._cluster = None
        self._owns_client = client is None
        if client is not None:
            self._client = client
        elif scheduler:
            self._client = Client(scheduler)
        else:
            # no dashboard, and the cluster listens on this machine only (random ports)
            local = {"host": "127.0.0.1", "dashboard_address": "127.0.0.1:0"} if processes \
                else {"dashboard_address": "127.0.0.1:0"}
            self._cluster = LocalCluster(n_workers=jobs or os.cpu_count() or 1,
                                         threads_per_worker=1, processes=processes,
                                         scheduler_kwargs={"dashboard": False}, **local)
            self._client = Client(self._cluster)

    def map(self, func: Callable[[T], R], tasks: Sequence[T], *,
            progress: Progress | None = None) -> list[R]:
        futures = self._client.map(func, list(tasks), pure=False)
        out = []
        for i, future in enumerate(futures, start=1):
            out.append(future.result())
            if progress is not None:
                progress(i, len(futures))
        return out

    def close(self) -> None:
        """Close the client and the local cluster if this executor started them (a client the
        caller passed in stays open)."""
        if self._owns_client:
            self._client.close()
        if self._cluster is not None:
            self._cluster.close()

    def __enter__(self) -> DaskExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def get_executor(backend: str = "serial", *, jobs: int | None = None,
                 scheduler: str | None = None) -> SerialExecutor | ProcessExecutor | DaskExecutor:
    """Make an executor: ``serial``, ``processes`` (``jobs`` workers) or ``dask``.

    With ``dask``, ``scheduler`` is the address of a running scheduler (``tcp://host:8786``);
    without it a local cluster of ``jobs`` workers is started. Use as a context manager so the
    workers are released.
    """
    backend = check_choice("backend", backend, BACKENDS)
    if jobs is not None and (isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1):
        raise SpecError(f"jobs={jobs!r} must be a positive integer.")
    if scheduler is not None and backend != "dask":
        raise SpecError("scheduler= is only used with backend='dask'.")
    if backend == "serial":
        return SerialExecutor()
    if backend == "processes":
        return ProcessExecutor(jobs)
    return DaskExecutor(jobs, scheduler)


#: What an ``executor=`` option accepts: a backend name, a scheduler address (``tcp://...``), an
#: executor of this module, or a running ``dask.distributed.Client``.
ExecutorLike = Any


@contextmanager
def using_executor(executor: ExecutorLike = "serial") -> Iterator[Any]:
    """An executor for ``executor=`` options; closes only what it opened itself.

    ``"serial"``, ``"processes"`` or ``"dask"`` (a new local cluster) start a new executor;
    ``"tcp://host:8786"`` (or ``tls://``) connects to that Dask scheduler; an executor object is
    used as given; a ``dask.distributed.Client`` is wrapped and never closed by the callee.
    """
    if isinstance(executor, str):
        address = executor.strip()
        made: SerialExecutor | ProcessExecutor | DaskExecutor
        if address.startswith(("tcp://", "tls://", "inproc://", "ucx://")):
            made = DaskExecutor(scheduler=address)
        else:
            made = get_executor(address)
        try:
            yield made
        finally:
            made.close()
        return
    if hasattr(executor, "map") and hasattr(executor, "close") and hasattr(executor, "name"):
        yield executor
        return
    if type(executor).__name__ == "Client" and hasattr(executor, "submit"):
        yield DaskExecutor(client=executor)
        return
    raise SpecError(f"executor={executor!r} is not an option; use 'serial', 'processes', 'dask', a "
                    "Dask scheduler address (tcp://host:8786), or a dask.distributed Client.")


def task_seeds(seed: Seed, n: int) -> list[np.random.SeedSequence]:
    """Independent seeds for ``n`` tasks, derived from ``seed`` (so any backend gives one answer).

    ``seed`` may be an int, a ``numpy.random.Generator`` (its bit generator's seed sequence is
    used) or ``None`` (fresh entropy; record the result's seed to reproduce it).
    """
    if isinstance(seed, np.random.Generator):
        # numpy types seed_seq as the ISeedSequence protocol; a Generator's is a SeedSequence
        root = cast(np.random.SeedSequence, seed.bit_generator.seed_seq)
    elif seed is None or isinstance(seed, (int, np.integer)):
        root = np.random.SeedSequence(None if seed is None else int(seed))
    else:
        raise SpecError(f"seed={seed!r} must be an int, a numpy Generator or None.")
    return list(root.spawn(n))


def run_tasks(func: Callable[[Any], R], tasks: Sequence[Any], *, backend: str = "serial",
              jobs: int | None = None, scheduler: str | None = None,
              progress: Progress | None = None) -> list[R]:
    """Run ``func`` over ``tasks`` on a fresh executor of the given backend and close it."""
    executor = get_executor(backend, jobs=jobs, scheduler=scheduler)
    try:
        return executor.map(func, tasks, progress=progress)
    finally:
        executor.close()
