"""Run an optimisation: the base machine, the search at the coarse fidelity, the verify step.

1. The base machine is evaluated at the search fidelity (its figures are checked to hold
   every objective and constraint, so a misspelt figure stops the run after one evaluation).
2. The search (:func:`fluxlab.optimize.search.run_search`) evaluates one generation at a
   time through the result store and an executor (:class:`~fluxlab.optimize.designs.
   BatchEvaluator`); the base machine's point is the first of the first generation.
3. Of the feasible non-dominated designs of the whole search, ``verify`` spread along the
   front are evaluated again at the machine's own mesh, with the base machine; the verified
   front is the non-dominated feasible set of those.

Killed at any moment, a run resumes by running it again: the seeded search asks for the same
designs, the store answers those already evaluated, and no evaluation is repeated.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fluxlab.errors import FluxlabError, SpecError
from fluxlab.optimize.designs import BatchEvaluator, design_values, make_design, unit_point
from fluxlab.optimize.optfile import OptimisationSpec, load_optimisation
from fluxlab.optimize.scoring import dominates, non_dominated, score
from fluxlab.optimize.search import run_search
from fluxlab.optimize.tables import FRONT_CSV, HISTORY_CSV, front_row, history_row, write_table
from fluxlab.spec.keypath import get_path
from fluxlab.sweep.progress import ProgressBar
from fluxlab.sweep.run import evaluator_reference, make_executor
from fluxlab.sweep.store import STORE_NAME, FolderLock, ResultStore

__all__ = ["OptimisationResult", "run_optimisation", "verify_choice"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class OptimisationResult:
    """What :func:`run_optimisation` returns (the tables also written as CSV).

    ``history``: every evaluation in order (history.csv); ``front``: the verified
    non-dominated feasible designs (front.csv); ``verified``: every design evaluated at the
    machine's own mesh, the base machine first; ``base_search`` and ``base``: the base
    machine's rows at the search fidelity and at its own mesh; ``generations`` run;
    ``evaluated``: evaluations run by this call, ``reused``: answers read from the store.
    """

    spec: OptimisationSpec
    history: list[dict]
    front: list[dict]
    verified: list[dict]
    base_search: dict
    base: dict
    generations: int
    evaluated: int
    reused: int
    out_dir: Path


def verify_choice(F: np.ndarray, count: int) -> np.ndarray:
    """Indices of up to ``count`` rows of ``F`` (a front, minimised) spread along it: sorted
    by the first objective, evenly spaced, both ends included."""
    order = np.argsort(F[:, 0], kind="stable")
    if len(order) <= count:
        return order
    picks = np.unique(np.round(np.linspace(0, len(order) - 1, count)).astype(int))
    return order[picks]


class _Run:
    """The state of one run: the history rows and their scores, the progress bar."""

    def __init__(self, opt: OptimisationSpec, evaluator: str, batch: BatchEvaluator,
                 bar: ProgressBar | None):
        self.opt, self.evaluator, self.batch, self.bar = opt, evaluator, batch, bar
        self.rows: list[dict] = []
        self.scores: list = []
        self.designs: list = []

    def evaluate(self, phase: str, generation: int, values: list[dict], coarse: bool) -> list:
        designs = [make_design(self.opt, v, coarse, self.evaluator) for v in values]
        out = []
        for design, (result, reused) in zip(designs, self.batch.evaluate(designs), strict=True):
            s = score(result, self.opt.objectives, self.opt.constraints)
            row = history_row(len(self.rows) + 1, phase, generation, design, result, s, reused)
            self.rows.append(row)
            self.scores.append(s)
            self.designs.append(design)
            out.append(len(self.rows) - 1)
        self._note()
        return out

    def _note(self) -> None:
        if self.bar is None:
            return
        best = []
        for k, o in enumerate(self.opt.objectives):
            values = [s.F[k] for s in self.scores if s.feasible]
            if values:
                value = min(values) * (-1 if o.goal == "max" else 1)
                best.append(f"{o.figure} {value:.4g}")
        self.bar.note = "best: " + ", ".join(best) if best else ""
        self.bar.draw()

    def score_generation(self, generation: int, X: np.ndarray):
        index = self.evaluate("search", generation,
                              [design_values(self.opt.parameters, x) for x in X], True)
        return (np.array([self.scores[i].F for i in index]),
                np.array([self.scores[i].G for i in index]))


def _check_figures(opt: OptimisationSpec, base_row: dict, result) -> None:
    if result.status != "done":
        raise FluxlabError(f"{opt.base_path}: the base machine at the search fidelity: "
                           f"{base_row['message']}")
    summary = result.summary or {}
    where = {**{o.figure: "objectives" for o in opt.objectives},
             **{c.figure: "constraints" for c in opt.constraints}}
    unknown = [f"{where[f]}.{f}: not a figure of the evaluation summary (figures: "
               + ", ".join(k for k, v in summary.items() if isinstance(v, (int, float))) + ")"
               for f in opt.figures if f not in summary]
    if unknown:
        raise SpecError(unknown)


def _base_values(opt: OptimisationSpec) -> dict:
    return {p.path: get_path(opt.base_raw, p.path) for p in opt.parameters}


def _verify(run: _Run, generations: int) -> tuple[list[int], int]:
    """Evaluate the base and the chosen search designs at the machine's own mesh; returns
    the history indices of the verified designs and of the base."""
    opt = run.opt
    searched = [i for i, r in enumerate(run.rows) if r["phase"] != "base"
                and run.scores[i].feasible]
    unique = list({run.designs[i].key: i for i in reversed(searched)}.values())[::-1]
    F = np.array([run.scores[i].F for i in unique]).reshape(len(unique), len(opt.objectives))
    front = [unique[j] for j in non_dominated(F)] if unique else []
    chosen = [front[j] for j in verify_choice(F[[unique.index(i) for i in front]],
                                              opt.verify)] if front else []
    values = [_base_values(opt)] + [run.designs[i].values for i in chosen]
    index = run.evaluate("verify", generations + 1, values, coarse=False)
    return chosen, index


def _front(run: _Run, chosen: list[int], index: list[int]) -> tuple[list[dict], list[dict]]:
    base = index[0]
    verified = []
    for coarse_i, fine_i in zip([None, *chosen], index, strict=True):
        label = "base" if coarse_i is None else f"#{run.rows[coarse_i]['evaluation']}"
        better = (coarse_i is not None and run.scores[fine_i].feasible
                  and run.rows[base]["status"] == "done"
                  and dominates(run.scores[fine_i].F, run.scores[base].F))
        verified.append(front_row(label, None if coarse_i is None else run.rows[coarse_i],
                                  run.rows[fine_i], run.opt.figures, better))
    feasible = [j for j, i in enumerate(index) if j > 0 and run.scores[i].feasible]
    F = np.array([run.scores[index[j]].F for j in feasible]).reshape(len(feasible), -1)
    front = [verified[feasible[k]] for k in non_dominated(F)] if feasible else []
    return verified, front


def run_optimisation(opt: str | Path | OptimisationSpec, out_dir: str | Path,
                     workers: int | None = None, scheduler=None,
                     evaluator: str | Callable | None = None, progress: bool = False,
                     store: str | Path | None = None,
                     retry_failed: bool = False) -> OptimisationResult:
    """Run (or resume) an optimisation into ``out_dir``; writes history.csv and front.csv.

    Parameters
    ----------
    opt
        An optimisation file path or an :class:`OptimisationSpec`.
    out_dir
        Output folder (holds the tables and, unless ``store`` is given, the result store).
    workers, scheduler
        Local worker processes (default: the cores), or a Dask scheduler address or
        ``distributed.Client`` to run on instead.
    evaluator
        The evaluation function or its ``"module:function"`` name (default the real
        evaluation); a non-default one is part of each key, as in sweeps.
    progress
        Draw a progress bar with counts and the best figures so far on stderr.
    store
        A result store to use instead of ``out_dir/results.sqlite``, e.g. a sweep's: designs
        it already holds (same machine, fidelity and studies) are not evaluated again.
    retry_failed
        Evaluate again the designs stored as failed (a lost worker, a solver failure); by
        default they stay failed (infeasible), which keeps a resumed run equal to the run
        it continues.

    Raises
    ------
    SpecError
        The file is invalid, or an objective or constraint is not a figure of the summary.
    FluxlabError
        The base machine cannot be evaluated at the search fidelity; another run holds the
        output folder.
    """
    if not isinstance(opt, OptimisationSpec):
        opt = load_optimisation(opt)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    ref = evaluator_reference(evaluator)
    total = 1 + opt.search.evaluations + 1 + opt.verify
    bar = ProgressBar(total) if progress else None
    with FolderLock(out), ResultStore(store or out / STORE_NAME) as results:
        batch = BatchEvaluator(results, lambda: make_executor(workers, scheduler), opt.studies,
                               ref, opt.base_dir, retry_failed=retry_failed,
                               on_result=(lambda d, r, reused: bar.update(
                                   "stored" if reused else r.status)) if bar else None)
        run = _Run(opt, ref, batch, bar)
        ok = False
        try:
            base_i = run.evaluate("base", 0, [_base_values(opt)], True)[0]
            _check_figures(opt, run.rows[base_i], results.get(run.designs[base_i].key))
            generations = run_search(opt.search, len(opt.parameters), len(opt.objectives),
                                     len(opt.constraints) + 1, run.score_generation,
                                     unit_point(opt.parameters, _base_values(opt)))
            chosen, index = _verify(run, generations)
            ok = True
        finally:
            batch.close(abort=not ok)
            if bar is not None:
                bar.close()
            write_table(run.rows, out / HISTORY_CSV)
    verified, front = _front(run, chosen, index)
    write_table(front, out / FRONT_CSV)
    reused = sum(r["reused"] for r in run.rows)
    log.info("%s: %d evaluations, %d read from the store, %d verified, %d on the front",
             opt.name, batch.evaluated, reused, len(chosen), len(front))
    return OptimisationResult(opt, run.rows, front, verified, run.rows[base_i],
                              run.rows[index[0]], generations, batch.evaluated, reused, out)
