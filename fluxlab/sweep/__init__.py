"""Scripted sweeps: many candidates from one base machine, in parallel, resumable.

``run_sweep(sweep_file, out_dir)`` resolves the plan into candidates, skips those already in
the output folder's result store, evaluates the rest on a local process pool or a Dask
cluster, and returns one row per candidate. The parts: :mod:`.sweepfile` (the file),
:mod:`.plan` (grid, random, Latin hypercube), :mod:`.candidates` (content keys),
:mod:`.store` (SQLite), :mod:`.executors`, :mod:`.worker`, :mod:`.table`, :mod:`.run`.
"""

from fluxlab.sweep.candidates import Candidate, candidate_key, make_candidates
from fluxlab.sweep.executors import DaskExecutor, Executor, LocalPoolExecutor
from fluxlab.sweep.plan import plan_points
from fluxlab.sweep.run import RESULTS_CSV, run_sweep
from fluxlab.sweep.store import STORE_NAME, ResultStore, StoredResult
from fluxlab.sweep.sweepfile import ParameterSpec, PlanSpec, SweepSpec, load_sweep, sweep_from_dict
from fluxlab.sweep.table import results_table, write_results_csv

__all__ = [
    "Candidate",
    "candidate_key",
    "make_candidates",
    "DaskExecutor",
    "Executor",
    "LocalPoolExecutor",
    "plan_points",
    "RESULTS_CSV",
    "run_sweep",
    "STORE_NAME",
    "ResultStore",
    "StoredResult",
    "ParameterSpec",
    "PlanSpec",
    "SweepSpec",
    "load_sweep",
    "sweep_from_dict",
    "results_table",
    "write_results_csv",
]
