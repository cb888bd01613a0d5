"""One way to run many independent jobs (grid-study levels, sweep points): an executor.

``executor(workers)`` gives a ``SerialExecutor`` (in this process, in order) for one worker, or a
``ProcessExecutor`` (a local pool of worker processes, started fresh with "spawn" so that no
Gmsh or linear-algebra state is shared) for more. Both offer ``run(fn, items)``, which yields
``(index, result, error)`` as jobs finish; a failing job gives its error text and does not stop
the others. ``fn`` and the items must be picklable for the process pool (module-level functions).
"""

from __future__ import annotations

import traceback
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any, Callable, Iterable, Iterator


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


class ProcessExecutor:
    def __init__(self, workers: int):
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        self.workers = workers
        self._pool = ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))

    def run(self, fn: Callable, items: Iterable) -> Iterator[tuple[int, Any, JobError | None]]:
        from concurrent.futures import as_completed

        futures = {self._pool.submit(_call, fn, item): i for i, item in enumerate(items)}
        for fut in as_completed(futures):
            try:
                result, error = fut.result()
            except Exception as exc:  # the worker process died
                result, error = None, JobError(f"{type(exc).__name__}: {exc}", traceback.format_exc())
            yield futures[fut], result, error

    def close(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)


@contextmanager
def executor(workers: int = 1):
    ex = SerialExecutor() if workers <= 1 else ProcessExecutor(workers)
    try:
        yield ex
    finally:
        if isinstance(ex, ProcessExecutor):
            ex.close()
