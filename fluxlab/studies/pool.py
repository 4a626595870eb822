"""Run independent studies of one candidate in parallel worker processes.

Workers start with the ``spawn`` method (``fork`` deadlocks some sparse solvers) and one
BLAS thread each: on two cores, competing thread pools slow the factorisations several
times (DEVELOPERS.md, Speed). A :class:`StudyPool` can be opened before the machine is meshed:
its workers import the numerical libraries meanwhile (about 1.5 s each), and each builds
the model once, from the pickled spec and mesh, at its first study of that model (the
assembly is cheap next to the solves). Workers end with the process that opened the pool,
even when it is killed (:mod:`fluxlab.studies.parent_watch`).
"""

from __future__ import annotations

import dataclasses
import multiprocessing
import os
import uuid
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor, as_completed

from fluxlab.machine.model import build_model
from fluxlab.studies.blas_threads import single_thread_blas
from fluxlab.studies.parent_watch import end_with_parent, parent_identity

__all__ = ["Task", "StudyPool", "run_tasks"]

#: A study to run: (name, function of (model, *args), args).
Task = tuple[str, Callable, tuple]

_worker_model: tuple[str, object] | None = None  # (token, model) in a worker process


def _warm_up(parent_pid: int, started_by_main_thread: bool) -> None:
    """Worker initializer: end with the parent (its pid and thread given by the parent). The
    worker has imported this module, and with it the model and the solvers, by then: the
    imports happen while the parent meshes."""
    end_with_parent(parent_pid, started_by_main_thread)


def _started() -> int:
    return os.getpid()


def _run_in_worker(token: str, recipe: tuple, function: Callable, args: tuple):
    global _worker_model
    if _worker_model is None or _worker_model[0] != token:
        spec, mesh, linear_solver, newton_rtol = recipe
        built = build_model(spec, mesh, linear_solver)
        _worker_model = (token, dataclasses.replace(built, newton_rtol=newton_rtol))
    return function(_worker_model[1], *args)


class StudyPool:
    """``workers`` processes for :meth:`run`, started at once; 1 or fewer runs here.

    Use it as a context manager; leaving it shuts the workers down.
    """

    def __init__(self, workers: int = 1):
        self.workers = max(1, int(workers))
        self._pool = None
        self._token: tuple[object, str] | None = None
        if self.workers > 1:
            self._blas = single_thread_blas()
            self._blas.__enter__()
            self._pool = ProcessPoolExecutor(
                self.workers, mp_context=multiprocessing.get_context("spawn"),
                initializer=_warm_up, initargs=parent_identity())
            for _ in range(self.workers):  # a process is spawned per submission
                self._pool.submit(_started)

    def __enter__(self) -> StudyPool:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        """Shut the workers down (waiting for running studies)."""
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None
            self._blas.__exit__(None, None, None)

    def _model_token(self, model) -> str:
        if self._token is None or self._token[0] is not model:
            self._token = (model, uuid.uuid4().hex)
        return self._token[1]

    def run(self, model, tasks: list[Task],
            progress: Callable[[str], None] | None = None) -> dict:
        """Run ``tasks`` on ``model``; returns name -> result.

        In the pool they are handed out in the order given (list the longest first); one
        task, or a pool of one, runs here. A failing task raises its error here.
        """
        say = progress or (lambda message: None)
        results = {}
        if self._pool is None or len(tasks) <= 1:
            for name, function, args in tasks:
                results[name] = function(model, *args)
                say(f"{name} done")
            return results
        token = self._model_token(model)
        recipe = (model.spec, model.mesh, model.linear_solver, model.newton_rtol)
        futures = {self._pool.submit(_run_in_worker, token, recipe, f, args): name
                   for name, f, args in tasks}
        try:
            for future in as_completed(futures):
                results[futures[future]] = future.result()
                say(f"{futures[future]} done ({len(results)}/{len(tasks)} studies)")
        finally:
            for future in futures:
                future.cancel()
        return results


def run_tasks(model, tasks: list[Task], workers: int = 1,
              progress: Callable[[str], None] | None = None) -> dict:
    """Run ``tasks`` on ``model`` in a pool of ``workers`` (see :meth:`StudyPool.run`)."""
    with StudyPool(min(workers, len(tasks))) as pool:
        return pool.run(model, tasks, progress)
