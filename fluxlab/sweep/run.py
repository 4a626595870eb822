"""Run a sweep: resolve candidates, skip stored ones, evaluate the rest, store each result.

The parent process is the only writer of the store: results are written one transaction
each, as they arrive from the executor, so a sweep stopped in any way (Ctrl-C, SIGKILL, a
lost machine) keeps every finished candidate and resumes by running the same command again.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from pathlib import Path

from fluxlab.sweep.candidates import DEFAULT_EVALUATOR, Candidate, make_candidates
from fluxlab.sweep.executors import DaskExecutor, Executor, LocalPoolExecutor
from fluxlab.sweep.progress import ProgressBar
from fluxlab.sweep.store import STORE_NAME, FolderLock, ResultStore
from fluxlab.sweep.sweepfile import SweepSpec, load_sweep
from fluxlab.sweep.table import results_table, write_results_csv
from fluxlab.sweep.worker import evaluate_task, resolve_evaluator

__all__ = ["run_sweep", "evaluator_reference", "make_executor", "RESULTS_CSV"]

log = logging.getLogger(__name__)
RESULTS_CSV = "results.csv"


def evaluator_reference(evaluator: str | Callable | None) -> str:
    """The ``"module:function"`` name of the evaluator to use: the argument (a function or
    its name), or for None :data:`DEFAULT_EVALUATOR`, the real evaluation
    :func:`fluxlab.studies.evaluate.evaluate`."""
    if evaluator is None:
        return DEFAULT_EVALUATOR
    if isinstance(evaluator, str):
        return evaluator
    ref = f"{evaluator.__module__}:{evaluator.__qualname__}"
    try:  # worker processes import it by name, so it must be a top-level function
        ok = resolve_evaluator(ref) is evaluator
    except (ImportError, AttributeError):
        ok = False
    if not ok:
        raise ValueError(f"evaluator = {evaluator!r}: must be a function importable as "
                         "module:function (worker processes import it by name)")
    return ref


def make_executor(workers: int | None, scheduler) -> Executor:
    """A local pool of ``workers`` processes, or the Dask ``scheduler`` when given."""
    return LocalPoolExecutor(workers) if scheduler is None else DaskExecutor(scheduler)


def _to_run(candidates: list[Candidate], stored: dict[str, str],
            retry_failed: bool) -> list[Candidate]:
    skip = {"done", "rejected"} if retry_failed else {"done", "rejected", "failed"}
    unique = {c.key: c for c in reversed(candidates)}  # the first candidate of each key
    return [c for c in candidates if unique[c.key] is c and stored.get(c.key) not in skip]


def _evaluate(todo: list[Candidate], store: ResultStore, sweep: SweepSpec, ref: str,
              executor: Executor, bar: ProgressBar | None) -> None:
    by_key = {c.key: c for c in todo}
    tasks = ({"key": c.key, "machine": c.machine, "base_dir": str(sweep.base_dir),
              "studies": sweep.studies, "evaluator": ref} for c in todo)
    with executor:
        for result in executor.results(evaluate_task, tasks):
            cand = by_key[result["key"]]
            store.put(cand.key, result["status"], studies=sweep.studies,
                      parameters=cand.values, machine=cand.machine,
                      summary=result["summary"], curves=result["curves"],
                      message=result["message"], elapsed_s=result["elapsed_s"])
            if result["status"] != "done":
                log.info("candidate %d %s: %s", cand.number, result["status"],
                         result["message"].splitlines()[0] if result["message"] else "")
            if bar is not None:
                bar.update(result["status"])


def run_sweep(sweep: str | Path | SweepSpec, out_dir: str | Path, workers: int | None = None,
              scheduler=None, retry_failed: bool = False,
              evaluator: str | Callable | None = None, progress: bool = False) -> list[dict]:
    """Evaluate every candidate of a sweep not yet stored in ``out_dir``; return the table.

    Parameters
    ----------
    sweep
        A sweep file path or a :class:`SweepSpec`.
    out_dir
        Output folder: holds the store ``results.sqlite`` and ``results.csv``.
    workers
        Local worker processes (default ``os.cpu_count()``); ignored with ``scheduler``.
    scheduler
        A Dask distributed scheduler address (or ``distributed.Client``) to run on instead.
    retry_failed
        Evaluate again the candidates stored as failed (rejected ones are never retried:
        their machine file is invalid, which a rerun cannot change).
    evaluator
        The evaluation function, or its ``"module:function"`` name (a test double, say);
        default :func:`fluxlab.studies.evaluate.evaluate`. A sweep file cannot name one.
        A non-default evaluator is part of each candidate's key.
    progress
        Draw a progress bar on stderr.

    Returns
    -------
    list of dict
        One row per candidate in plan order (see :mod:`fluxlab.sweep.table`).

    Raises
    ------
    SpecError
        The sweep file is invalid.
    ValueError
        An ``evaluator`` function that worker processes cannot import by name.
    FluxlabError
        Another sweep is running into ``out_dir`` (see :class:`~fluxlab.sweep.store.FolderLock`:
        one sweep per folder, so no candidate is evaluated twice).
    KeyboardInterrupt
        On Ctrl-C, after cancelling what had not finished; finished results stay stored and
        ``results.csv`` lists the rest as pending.
    """
    if not isinstance(sweep, SweepSpec):
        sweep = load_sweep(sweep)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    ref = evaluator_reference(evaluator)
    candidates = make_candidates(sweep, ref)
    with FolderLock(out), ResultStore(out / STORE_NAME) as store:
        todo = _to_run(candidates, store.statuses(), retry_failed)
        log.info("%s: %d candidates, %d distinct, %d to evaluate", sweep.name, len(candidates),
                 len({c.key for c in candidates}), len(todo))
        bar = ProgressBar(len(todo)) if progress and todo else None
        try:
            if todo:
                _evaluate(todo, store, sweep, ref, make_executor(workers, scheduler), bar)
        finally:
            if bar is not None:
                bar.close()
            stored = {r.key: r for r in store.results()}
            table = results_table(candidates, stored)
            write_results_csv(table, out / RESULTS_CSV)
    return table
