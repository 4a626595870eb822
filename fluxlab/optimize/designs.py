"""Designs of an optimisation and their evaluation through the sweep's result store.

A design is a point of the search (its varied keys in file units) made into a machine table
at one fidelity and keyed like a sweep candidate (:func:`fluxlab.sweep.candidates.
candidate_key`): the same machine, fidelity and studies give the same key, so a design that
a sweep or another optimisation has already evaluated into the same store is read back,
never evaluated again. The parent process is the store's only writer, as in a sweep.
"""

from __future__ import annotations

import copy
import logging
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fluxlab.spec.keypath import set_path
from fluxlab.sweep.candidates import candidate_key
from fluxlab.sweep.executors import Executor
from fluxlab.sweep.plan import scale_unit
from fluxlab.sweep.store import ResultStore, StoredResult
from fluxlab.sweep.worker import evaluate_task

__all__ = ["Design", "design_values", "unit_point", "make_design", "BatchEvaluator"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class Design:
    """One machine to evaluate: the varied ``values`` (file units), whether it is at the
    search fidelity (``coarse``), the full machine table (file units) and its store key."""

    values: dict
    coarse: bool
    machine: dict
    key: str


def design_values(parameters, u: np.ndarray) -> dict:
    """The varied keys of a search point ``u`` in [0, 1] per parameter (file units, rounded
    as a sweep plan rounds them: :func:`fluxlab.sweep.plan.scale_unit`)."""
    return {p.path: scale_unit(p, np.array([x]))[0] for p, x in zip(parameters, u, strict=True)}


def _unit(p, value: float) -> float:
    if p.values is not None:  # the middle of the value's bin (scale_unit's inverse)
        nearest = min(range(len(p.values)), key=lambda i: abs(p.values[i] - value))
        return (nearest + 0.5) / len(p.values)
    low, high = p.low, p.high
    if p.kind is int:
        low, high = np.ceil(low) - 0.5, np.floor(high) + 0.5
    return float(np.clip((value - low) / (high - low), 0.0, 1.0))


def unit_point(parameters, values: dict) -> np.ndarray:
    """The search point in [0, 1] per parameter of the file values ``values`` (the inverse
    of :func:`design_values`; a value outside its range is moved to the nearer end)."""
    return np.array([_unit(p, values[p.path]) for p in parameters], float)


def make_design(opt, values: dict, coarse: bool, evaluator: str) -> Design:
    """The design of ``values`` for the optimisation ``opt`` (an OptimisationSpec), at the
    search fidelity (``coarse``) or at the machine's own mesh."""
    machine = copy.deepcopy(opt.base_raw)
    for path, value in {**(opt.fidelity if coarse else {}), **values}.items():
        set_path(machine, path, value)
    return Design(dict(values), coarse, machine,
                  candidate_key(machine, opt.studies, evaluator, opt.base_dir))


class BatchEvaluator:
    """Evaluates batches of designs: stored ones are read back, the rest run on an executor.

    Parameters
    ----------
    store
        The open result store (this process is its only writer).
    executor_factory
        Makes the executor when a batch first needs one (a run replayed from the store
        starts no worker at all); it is closed by :meth:`close`.
    studies, evaluator, base_dir
        What every task is evaluated with (see :func:`fluxlab.sweep.worker.evaluate_task`).
    on_result
        Called with ``(design, stored result, reused)`` for each design as it is answered;
        ``reused`` is True when it came from the store.
    retry_failed
        Evaluate again the designs stored as failed (once per object: a design that fails
        again is kept failed).
    """

    def __init__(self, store: ResultStore, executor_factory: Callable[[], Executor],
                 studies: str, evaluator: str, base_dir: Path,
                 on_result: Callable[[Design, StoredResult, bool], None] | None = None,
                 retry_failed: bool = False):
        self.store = store
        self._factory = executor_factory
        self._executor: Executor | None = None
        self.studies, self.evaluator, self.base_dir = studies, evaluator, base_dir
        self.on_result = on_result or (lambda design, result, reused: None)
        self.evaluated = 0  # evaluations run by this object (not read from the store)
        self._retry = retry_failed
        self._tried: set[str] = set()  # keys evaluated by this object

    def _run(self, designs: Sequence[Design]) -> None:
        if self._executor is None:
            self._executor = self._factory()
        by_key = {d.key: d for d in designs}
        tasks = ({"key": d.key, "machine": d.machine, "base_dir": str(self.base_dir),
                  "studies": self.studies, "evaluator": self.evaluator} for d in designs)
        for result in self._executor.results(evaluate_task, tasks):
            design = by_key[result["key"]]
            self.store.put(design.key, result["status"], studies=self.studies,
                           parameters=design.values, machine=design.machine,
                           summary=result["summary"], curves=result["curves"],
                           message=result["message"], elapsed_s=result["elapsed_s"])
            self.evaluated += 1
            self._tried.add(design.key)
            self.on_result(design, self.store.get(design.key), False)

    def evaluate(self, designs: Sequence[Design]) -> list[tuple[StoredResult, bool]]:
        """The stored result of each design, in order, and whether the store held it before
        this call (equal keys in one batch are evaluated once)."""
        stored = {k: s for k, s in self.store.statuses().items()
                  if not (self._retry and s == "failed" and k not in self._tried)}
        todo = list({d.key: d for d in designs if d.key not in stored}.values())
        for design in {d.key: d for d in designs if d.key in stored}.values():
            self.on_result(design, self.store.get(design.key), True)
        if todo:
            self._run(todo)
        return [(self.store.get(d.key), d.key in stored) for d in designs]

    def close(self, abort: bool = False) -> None:
        """Release the executor's workers, if any were started."""
        if self._executor is not None:
            self._executor.close(abort=abort)
            self._executor = None
