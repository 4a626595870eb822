"""Run independent studies of one candidate in parallel worker processes.

Each worker builds the machine model once from the pickled spec and mesh (the assembly is
cheap next to the solves) and then runs the studies it is given. Workers start with the
``spawn`` method (``fork`` deadlocks some sparse solvers) and one BLAS thread each: on two
cores, competing thread pools slow the factorisations several times (MEASUREMENTS.md).
"""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Callable, Iterator
from concurrent.futures import ProcessPoolExecutor, as_completed
from contextlib import contextmanager

__all__ = ["Task", "run_tasks", "single_thread_blas"]

#: A study to run: (name, function of (model, *args), args).
Task = tuple[str, Callable, tuple]

_BLAS_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS")
_worker_model = None


@contextmanager
def single_thread_blas() -> Iterator[None]:
    """Limit BLAS and OpenMP pools of this process (and of workers it starts) to 1 thread."""
    from threadpoolctl import threadpool_limits

    saved = {k: os.environ.get(k) for k in _BLAS_VARIABLES}
    os.environ.update({k: "1" for k in _BLAS_VARIABLES})
    try:
        with threadpool_limits(limits=1):
            yield
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value


def _init_worker(spec, mesh, linear_solver) -> None:
    global _worker_model
    from .model import build_model

    _worker_model = build_model(spec, mesh, linear_solver)


def _run_in_worker(function: Callable, args: tuple):
    return function(_worker_model, *args)


def run_tasks(model, tasks: list[Task], workers: int = 1,
              progress: Callable[[str], None] | None = None) -> dict:
    """Run ``tasks`` on ``model``; returns name -> result.

    ``workers`` <= 1 runs them here, in order; otherwise in that many processes, longest
    first as listed. A failing task raises its error here, after the pool is shut down.
    """
    say = progress or (lambda message: None)
    if workers <= 1 or len(tasks) <= 1:
        results = {}
        for name, function, args in tasks:
            results[name] = function(model, *args)
            say(f"{name} done")
        return results
    context = multiprocessing.get_context("spawn")
    results = {}
    with single_thread_blas(), ProcessPoolExecutor(
        max_workers=min(workers, len(tasks)), mp_context=context,
        initializer=_init_worker, initargs=(model.spec, model.mesh, model.linear_solver),
    ) as pool:
        futures = {pool.submit(_run_in_worker, f, args): name for name, f, args in tasks}
        for future in as_completed(futures):
            results[futures[future]] = future.result()
            say(f"{futures[future]} done ({len(results)}/{len(tasks)} studies)")
    return results
