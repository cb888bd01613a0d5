"""One way to run many independent jobs (grid-study levels, sweep points): an executor.

``executor(workers)`` gives a ``SerialExecutor`` (in this process, in order) for one worker, or a
``ProcessExecutor`` (a local pool of worker processes, started fresh with "spawn" so that no
Gmsh or linear-algebra state is shared, each with one BLAS/OpenMP thread so that the workers do
not fight over the cores) for more. Both offer ``run(fn, items)``, which yields
``(index, result, error)`` as jobs finish; a failing job gives its error text and does not stop
the others. ``fn`` and the items must be picklable for the process pool (module-level functions).

``DaskExecutor`` runs the same jobs on dask.distributed: a LocalCluster of worker processes bound
to 127.0.0.1 (dashboard off), or an existing cluster (``scheduler``: an address such as
``tcp://10.0.0.5:8786`` or a scheduler file). A job whose worker dies is run again elsewhere by
the scheduler; after repeated losses it fails with the others going on.
"""

from __future__ import annotations

import traceback
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any, Callable, Iterable, Iterator


class SchedulerError(ValueError):
    """A --scheduler that names no reachable Dask scheduler."""


@dataclass(frozen=True)
class JobError:
    message: str  # "TypeName: message"
    traceback: str


def _call(fn: Callable, item: Any):
    try:
        return fn(item), None
    except Exception as exc:  # reported with the job, the others go on
        return None, JobError(f"{type(exc).__name__}: {exc}", traceback.format_exc())


class SerialExecutor:
    workers = 1

    def run(self, fn: Callable, items: Iterable) -> Iterator[tuple[int, Any, JobError | None]]:
        for i, item in enumerate(items):
            result, error = _call(fn, item)
            yield i, result, error


# Each worker process gets one math-library thread unless the user set these: N workers with
# N threads each oversubscribe the cores (measured on 2 cores: a 9-run uncertainty study 16.1 s
# with the libraries' default threads, 11.3 s with one). dask.distributed's nanny does the same
# for its workers (its "pre-spawn-environ" setting).
_ONE_THREAD = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


@contextmanager
def _one_thread_in_children():
    """Children started inside this block inherit one math-library thread (spawn copies os.environ)."""
    import os

    added = [k for k in _ONE_THREAD if k not in os.environ]
    for k in added:
        os.environ[k] = "1"
    try:
        yield
    finally:
        for k in added:
            os.environ.pop(k, None)


class ProcessExecutor:
    def __init__(self, workers: int):
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        self.workers = workers
        self._pool = ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))

    def run(self, fn: Callable, items: Iterable) -> Iterator[tuple[int, Any, JobError | None]]:
        from concurrent.futures import as_completed

        with _one_thread_in_children():  # the pool starts its processes as jobs are submitted
            futures = {self._pool.submit(_call, fn, item): i for i, item in enumerate(items)}
        for fut in as_completed(futures):
            try:
                result, error = fut.result()
            except Exception as exc:  # the worker process died
                result, error = None, JobError(f"{type(exc).__name__}: {exc}", traceback.format_exc())
            yield futures[fut], result, error

    def close(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)


class DaskExecutor:
    remote = True  # its workers may not share the client's filesystem

    def __init__(self, workers: int = 1, scheduler: str | None = None, timeout: float = 30.0):
        import logging
        from pathlib import Path

        from distributed import Client, LocalCluster

        self.cluster = None
        if scheduler:
            looks_like_file = "://" not in scheduler and (scheduler.endswith(".json") or "/" in scheduler)
            if looks_like_file and not Path(scheduler).is_file():
                raise SchedulerError(f"{scheduler}: no such scheduler file; give a scheduler file or an address "
                                     "such as tcp://10.0.0.5:8786")
            try:
                if Path(scheduler).is_file():
                    self.client = Client(scheduler_file=str(scheduler), timeout=timeout)
                else:
                    self.client = Client(scheduler, timeout=timeout)
            except (OSError, ValueError, TimeoutError) as exc:
                raise SchedulerError(f"{scheduler}: cannot connect to a Dask scheduler there ({exc}); give a running "
                                     "scheduler's address (tcp://host:port) or its scheduler file") from None
        else:
            # the worker processes ignore Ctrl-C (an ignored signal stays ignored in a child): the client alone
            # handles it, closes the cluster and says "interrupted", without a traceback from every worker
            import signal

            try:
                previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
            except ValueError:  # not the main thread
                previous = None
            try:
                self.cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                                            dashboard_address=None, silence_logs=logging.ERROR)
            finally:
                if previous is not None:
                    signal.signal(signal.SIGINT, previous)
            self.client = Client(self.cluster, timeout=timeout)
        self.workers = len(self.client.scheduler_info().get("workers", {})) or workers

    def run(self, fn: Callable, items: Iterable) -> Iterator[tuple[int, Any, JobError | None]]:
        from functools import partial

        from distributed import as_completed

        items = list(items)
        if not items:
            return
        futures = self.client.map(partial(_call, fn), items, pure=False)
        index = {fut.key: i for i, fut in enumerate(futures)}
        try:
            for fut in as_completed(futures):
                try:
                    result, error = fut.result()
                except Exception as exc:  # the job's workers died (KilledWorker) or it could not be sent
                    result, error = None, JobError(f"{type(exc).__name__}: {exc}", traceback.format_exc())
                fut.release()
                yield index[fut.key], result, error
        finally:
            for fut in futures:
                fut.cancel()

    def close(self) -> None:
        try:
            self.client.close()
        finally:
            if self.cluster is not None:
                self.cluster.close()


@contextmanager
def executor(workers: int = 1, scheduler: str | None = None, dask: bool = False):
    """SerialExecutor (one worker), ProcessExecutor (several), or DaskExecutor (``dask`` or a ``scheduler``)."""
    if scheduler or dask:
        ex = DaskExecutor(max(workers, 1), scheduler)
    else:
        ex = SerialExecutor() if workers <= 1 else ProcessExecutor(workers)
    try:
        yield ex
    finally:
        if isinstance(ex, (ProcessExecutor, DaskExecutor)):
            ex.close()
