"""Executors: one interface for running candidates locally or on a Dask cluster.

An executor takes a picklable function and an iterable of tasks and yields each result as
it completes (:meth:`Executor.results`). It keeps only a bounded number of tasks in flight,
so stopping it (Ctrl-C) means: submit nothing more, cancel what has not started. The
submit-and-collect loop is shared; a back end supplies only submit, wait and cancel.
"""

from __future__ import annotations

import logging
import os
from abc import ABC, abstractmethod
from collections.abc import Callable, Iterable, Iterator
from typing import Any

from fluxlab.errors import FluxlabError
from fluxlab.studies.blas_threads import single_thread_blas
from fluxlab.studies.parent_watch import end_with_parent, parent_identity
from fluxlab.sweep.worker import init_worker

__all__ = ["Executor", "LocalPoolExecutor", "DaskExecutor", "lost_task_result"]

log = logging.getLogger(__name__)


def lost_task_result(task: dict, err: BaseException) -> dict:
    """The ``failed`` result of a task whose worker died or was lost."""
    return {
        "key": task["key"], "status": "failed", "summary": None, "curves": None,
        "elapsed_s": None,
        "message": f"worker lost ({type(err).__name__}: {err}); the process ended while this "
                   "or another running candidate was evaluated (killed, out of memory or "
                   "crashed); rerun with --retry-failed to evaluate it again",
    }


class Executor(ABC):
    """Runs tasks somewhere and yields their results as they complete."""

    @abstractmethod
    def _submit(self, fn: Callable, task: dict) -> Any:
        """Start ``fn(task)``; return a future with ``result()``."""

    @abstractmethod
    def _wait_any(self, futures: set) -> tuple[set, set]:
        """Block until at least one future is done; return (done, not done)."""

    @abstractmethod
    def _cancel(self, futures: set) -> None:
        """Cancel futures that have not finished."""

    @abstractmethod
    def capacity(self) -> int:
        """How many tasks to keep in flight (about twice the worker slots)."""

    def close(self, abort: bool = False) -> None:  # noqa: B027 - a hook, often nothing
        """Release the workers; ``abort`` also stops tasks that are running."""

    def __enter__(self) -> Executor:
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        self.close(abort=exc_type is not None)

    def results(self, fn: Callable[[dict], dict], tasks: Iterable[dict]) -> Iterator[dict]:
        """Run ``fn`` on every task; yield each result dict as soon as it is ready.

        A task whose worker is lost yields a ``failed`` result (:func:`lost_task_result`)
        instead of an exception. Leaving the loop early (an exception in the consumer,
        Ctrl-C) cancels every task not yet finished.
        """
        todo = iter(tasks)
        running: dict[Any, dict] = {}

        def refill() -> None:
            capacity = self.capacity()  # once per refill: on Dask it asks the scheduler
            while len(running) < capacity:
                task = next(todo, None)
                if task is None:
                    return
                running[self._submit(fn, task)] = task

        try:
            refill()
            while running:
                done, _ = self._wait_any(set(running))
                for future in done:
                    task = running.pop(future)
                    try:
                        result = future.result()
                    except Exception as err:  # noqa: BLE001 - the worker, not the task, failed
                        log.warning("candidate %s: worker lost: %s", task["key"][:12], err)
                        result = lost_task_result(task, err)
                    yield result
                refill()
        finally:
            if running:
                self._cancel(set(running))


def _init_local_worker(parent_pid: int, started_by_main_thread: bool) -> None:
    """Initializer of a local pool's worker: end with the sweep's process (even when it is
    killed; :mod:`fluxlab.studies.parent_watch`), then :func:`init_worker`."""
    end_with_parent(parent_pid, started_by_main_thread)
    init_worker()


class LocalPoolExecutor(Executor):
    """A pool of local worker processes (``spawn`` start method, one BLAS thread each).

    ``spawn`` (not ``fork``): forked workers deadlocked in CHOLMOD and livelocked in
    threaded MKL in earlier measurements (DEVELOPERS.md, Speed). A pool broken by a dead
    worker is replaced, so the sweep goes on. The workers end with this process, even when
    it is killed; create and use the executor in one thread (the one that submits starts
    the workers).

    Parameters
    ----------
    workers
        Number of processes; default ``os.cpu_count()``.
    """

    def __init__(self, workers: int | None = None):
        self.workers = max(1, workers or os.cpu_count() or 1)
        self._blas = single_thread_blas()  # set while the pool lives (fluxlab.studies.blas_threads)
        self._blas.__enter__()
        self._pool = self._new_pool()

    def _new_pool(self):
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        return ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("spawn"),
                                   initializer=_init_local_worker, initargs=parent_identity())

    def capacity(self) -> int:
        return 2 * self.workers

    def _submit(self, fn: Callable, task: dict) -> Any:
        from concurrent.futures.process import BrokenProcessPool

        try:
            return self._pool.submit(fn, task)
        except BrokenProcessPool:
            log.warning("a worker process died; starting a new pool")
            self._pool.shutdown(wait=False, cancel_futures=True)
            self._pool = self._new_pool()
            return self._pool.submit(fn, task)

    def _wait_any(self, futures: set) -> tuple[set, set]:
        from concurrent.futures import FIRST_COMPLETED, wait

        return wait(futures, return_when=FIRST_COMPLETED)

    def _cancel(self, futures: set) -> None:
        for future in futures:
            future.cancel()

    def close(self, abort: bool = False) -> None:
        if abort:  # do not wait for running candidates: their results would not be stored
            for process in list((getattr(self._pool, "_processes", None) or {}).values()):
                process.terminate()
        self._pool.shutdown(wait=True, cancel_futures=True)
        self._blas.__exit__(None, None, None)


class DaskExecutor(Executor):
    """Tasks on a running Dask distributed scheduler.

    The workers must have fluxlab installed (the task function is sent by reference) and
    should run one thread each with one BLAS thread (``OPENBLAS_NUM_THREADS=1 dask worker
    ADDRESS --nthreads 1``): the mesher is not thread-safe.

    Parameters
    ----------
    scheduler
        The scheduler address (``tcp://host:8786``) or a ``distributed.Client``.
    """

    def __init__(self, scheduler: Any):
        try:
            from distributed import Client
        except ImportError as err:  # an optional extra
            raise FluxlabError("a scheduler address needs dask.distributed: "
                               "pip install 'fluxlab[cluster]'") from err
        self._own = not isinstance(scheduler, Client)
        self._client = Client(scheduler, set_as_default=False) if self._own else scheduler

    def capacity(self) -> int:
        threads = sum(self._client.nthreads().values())
        return max(2, 2 * threads)

    def _submit(self, fn: Callable, task: dict) -> Any:
        # pure=False: a rerun after --retry-failed must run again, not reuse a cached task.
        return self._client.submit(fn, task, pure=False)

    def _wait_any(self, futures: set) -> tuple[set, set]:
        from distributed import wait

        with self._client.as_current():  # this client, not a process-wide default
            done, not_done = wait(list(futures), return_when="FIRST_COMPLETED")
        return set(done), set(not_done)

    def _cancel(self, futures: set) -> None:
        self._client.cancel(list(futures))

    def close(self, abort: bool = False) -> None:
        if self._own:
            self._client.close()
