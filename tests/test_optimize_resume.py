"""Resuming and executors: a run killed with SIGKILL continues without repeating an
evaluation and ends as an uninterrupted run; a Dask LocalCluster gives the local pool's
evaluations. The evaluator is ZDT1 (tests/analytic_evaluator.py): the machinery is under
test here, not the field model."""

import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

from analytic_evaluator import ZDT1_KEYS, zdt1_evaluate
from paths import DEMO

from fluxlab.optimize import optimisation_from_dict, run_optimisation

TESTS = Path(__file__).resolve().parent
ZDT1 = "analytic_evaluator:zdt1_evaluate"


def _table() -> dict:
    return {"base": str(DEMO), "studies": "point",
            "parameters": [{"path": p, "low": lo, "high": hi} for p, (lo, hi) in
                           ZDT1_KEYS.items()],
            "objectives": {"zdt1_f1": "min", "zdt1_f2": "min"},
            "constraints": {"zdt1_f2": {"max": 2.5}},
            "search": {"population": 8, "generations": 5, "seed": 4}, "verify": {"best": 3}}


def _stable(rows: list[dict]) -> list[dict]:
    """Rows without ``reused`` (a resumed run reads from the store what it had evaluated)."""
    return [{k: v for k, v in r.items() if k != "reused"} for r in rows]


def _stored_x(store: Path) -> dict[tuple, int]:
    """The ZDT1 point of every stored evaluation -> its attempts."""
    with sqlite3.connect(store) as conn:
        rows = conn.execute("SELECT parameters, machine, attempts FROM results").fetchall()
    out = {}
    for _, machine, attempts in rows:
        machine = json.loads(machine)
        x = []
        for path, (low, high) in ZDT1_KEYS.items():
            table, _, name = path.rpartition(".")
            x.append((machine[table][name] - low) / (high - low))
        out[tuple(round(v, 9) for v in x)] = attempts
    return out


def _stored_count(store: Path) -> int:
    """Stored evaluations so far (0 while the store is still being created)."""
    try:
        return len(_stored_x(store)) if store.exists() else 0
    except sqlite3.OperationalError:  # the file is there, its table not yet
        return 0


def _counted(path: Path) -> list[tuple]:
    if not path.exists():
        return []
    return [tuple(round(v, 9) for v in json.loads(line))
            for line in path.read_text().splitlines()]


KILLED_RUN = """
import json, sys
from fluxlab.optimize import optimisation_from_dict, run_optimisation
opt = optimisation_from_dict(json.loads(sys.argv[1]))
run_optimisation(opt, sys.argv[2], workers=2, evaluator="analytic_evaluator:zdt1_evaluate")
"""


def test_sigkill_then_rerun_repeats_no_evaluation_and_equals_an_uninterrupted_run(
        tmp_path, monkeypatch):
    reference = run_optimisation(optimisation_from_dict(_table()), tmp_path / "reference",
                                 workers=2, evaluator=zdt1_evaluate)
    out, store = tmp_path / "killed", tmp_path / "killed" / "results.sqlite"
    env = {**os.environ, "FLUXLAB_FAKE_EVAL_DELAY_S": "0.2",
           "PYTHONPATH": os.pathsep.join(filter(None, [str(TESTS),
                                                       os.environ.get("PYTHONPATH")]))}
    proc = subprocess.Popen([sys.executable, "-c", KILLED_RUN, json.dumps(_table()), str(out)],
                            env=env, start_new_session=True, stderr=subprocess.PIPE)
    try:
        deadline = time.monotonic() + 120
        while _stored_count(store) < 15:  # part way: in generation 2
            assert proc.poll() is None, proc.stderr.read().decode()
            assert time.monotonic() < deadline, "the run never got part way"
            time.sleep(0.05)
        os.killpg(proc.pid, signal.SIGKILL)  # the run and its workers, no clean-up at all
        proc.wait(timeout=10)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
    stored_before = _stored_x(store)
    assert 15 <= len(stored_before) < len(_stored_x(tmp_path / "reference" / "results.sqlite"))

    monkeypatch.setenv("FLUXLAB_TEST_COUNTER", str(tmp_path / "second.jsonl"))
    resumed = run_optimisation(optimisation_from_dict(_table()), out, workers=2,
                               evaluator=zdt1_evaluate)
    second = _counted(tmp_path / "second.jsonl")
    print(f"killed after {len(stored_before)} stored evaluations; the rerun evaluated "
          f"{len(second)} and read {resumed.reused} answers from the store")
    assert not set(second) & set(stored_before), "a stored evaluation was repeated"
    assert len(second) == len(set(second)) == resumed.evaluated
    assert all(attempts == 1 for attempts in _stored_x(store).values())
    assert _stable(resumed.history) == _stable(reference.history)
    assert _stable(resumed.front) == _stable(reference.front)
    assert len(_stored_x(store)) == len(stored_before) + resumed.evaluated


def test_a_rerun_of_a_finished_run_evaluates_nothing(tmp_path):
    first = run_optimisation(optimisation_from_dict(_table()), tmp_path, workers=1,
                             evaluator=zdt1_evaluate)
    again = run_optimisation(optimisation_from_dict(_table()), tmp_path, workers=1,
                             evaluator=zdt1_evaluate)
    assert again.evaluated == 0 and first.evaluated > 0
    assert _stable(again.history) == _stable(first.history)


def test_dask_local_cluster_gives_the_same_evaluations_as_the_local_pool(tmp_path):
    from distributed import LocalCluster

    local = run_optimisation(optimisation_from_dict(_table()), tmp_path / "local", workers=2,
                             evaluator=zdt1_evaluate)
    # processes=False: the Dask workers are threads of this process, where pytest has put
    # tests/ on sys.path, so they import the evaluator by name as the local pool does
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                      host="127.0.0.1", dashboard_address=None) as cluster:
        remote = run_optimisation(optimisation_from_dict(_table()), tmp_path / "dask",
                                  scheduler=cluster.scheduler_address, evaluator=ZDT1)
    assert remote.history == local.history
    assert remote.front == local.front
    print(f"local pool and Dask: the same {len(local.history)} evaluations")
