"""Running sweeps: rejected and failed candidates, resuming after SIGKILL and Ctrl-C, the
Dask executor, the command line and its files.

Every run uses the test double of tests/fake_evaluator.py, passed through the Python API
(a sweep file cannot name an evaluator): the sweep machinery is under test here, not the
field model. Runs in a subprocess and the command-line run make it the default evaluator of
run_sweep in their own process (candidate keys still record it as non-default).
"""

import csv
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from fake_evaluator import fake_evaluate, fake_summary
from paths import DEMO

from fluxlab.cli import main
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.sweep import ResultStore, load_sweep, make_candidates, run_sweep

FAKE = "fake_evaluator:fake_evaluate"
TESTS = Path(__file__).resolve().parent  # holds fake_evaluator.py
END1 = "rotor.barriers[1].end_angle_deg"
SPEED = "operating.speed_rpm"


def _write_sweep(folder: Path, parameters: dict, studies: str = "point") -> Path:
    lines = [f"base = {json.dumps(str(DEMO))}", f'studies = "{studies}"',
             "[plan]", 'kind = "grid"']
    for path, values in parameters.items():
        lines += ["[[parameters]]", f'path = "{path}"', f"values = {json.dumps(values)}"]
    path = folder / "sweep.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def _updated(store_path: Path) -> dict:
    with sqlite3.connect(store_path) as conn:
        return dict(conn.execute("SELECT key, updated_at FROM results"))


def test_invalid_and_failing_candidates_are_stored_and_the_sweep_goes_on(tmp_path):
    sweep = _write_sweep(tmp_path, {END1: [22.0, 26.0, 80.0], SPEED: [1500.0, 99999.0]})
    rows = run_sweep(sweep, tmp_path / "out", workers=2, evaluator=fake_evaluate)
    status = {(r[END1], r[SPEED]): r["status"] for r in rows}
    assert status == {(22.0, 1500.0): "done", (22.0, 99999.0): "failed",
                      (26.0, 1500.0): "done", (26.0, 99999.0): "failed",
                      (80.0, 1500.0): "rejected", (80.0, 99999.0): "rejected"}
    for r in rows:
        if r["status"] == "rejected":  # the validation message, naming key and value
            assert "rotor.barriers[1].end_angle_deg = 80" in r["message"]
        if r["status"] == "failed":
            assert r["message"].startswith("ConvergenceError: fake solver")
        if r["status"] == "done":
            # reference: the same machine built through replace_path, evaluated
            # directly, not through the sweep
            spec = replace_path(load_machine(DEMO), END1, r[END1])
            assert r["torque_mean_Nm"] == fake_summary(spec, "point")["torque_mean_Nm"]
    with ResultStore(tmp_path / "out" / "results.sqlite") as store:
        assert len(store.statuses()) == 6
        assert "end_angle_deg = 80" in store.get(rows[4]["key"]).message
    # the fake evaluator is part of every key: its results never stand in for real ones
    assert [r["key"] for r in rows] == [c.key for c in make_candidates(load_sweep(sweep), FAKE)]
    assert not {r["key"] for r in rows} & {c.key for c in make_candidates(load_sweep(sweep))}
    before = _updated(tmp_path / "out" / "results.sqlite")
    assert run_sweep(sweep, tmp_path / "out", workers=2, evaluator=FAKE) == rows  # by name
    assert _updated(tmp_path / "out" / "results.sqlite") == before  # nothing re-evaluated
    run_sweep(sweep, tmp_path / "out", workers=2, retry_failed=True, evaluator=fake_evaluate)
    with ResultStore(tmp_path / "out" / "results.sqlite") as store:
        attempts = {r.status: set() for r in store.results()}
        for r in store.results():
            attempts[r.status].add(r.attempts)
    assert attempts == {"done": {1}, "rejected": {1}, "failed": {2}}


def test_a_crashed_worker_fails_its_candidate_and_the_sweep_goes_on(tmp_path):
    # speed 77777 makes the fake evaluator end its process abruptly (a mesher crash)
    sweep = _write_sweep(tmp_path, {SPEED: [1500.0, 77777.0, 1600.0, 1700.0, 1800.0]})
    rows = run_sweep(sweep, tmp_path / "out", workers=1, evaluator=fake_evaluate)
    assert len(rows) == 5
    assert rows[1]["status"] == "failed" and "worker lost" in rows[1]["message"]
    # Tasks queued in the broken pool are lost with it (at most the in-flight count, twice
    # the workers); they are failed with the same message, the rest is evaluated.
    lost = [r for r in rows if r["status"] == "failed"]
    assert all("worker lost" in r["message"] for r in lost)
    assert 1 <= len(lost) <= 2
    assert sum(r["status"] == "done" for r in rows) == 5 - len(lost)


_SWEEP_16 = {END1: [20.0, 21.0, 22.0, 23.0, 24.0, 25.0, 26.0, 80.0],
             "rotor.barriers[0].width_mm": [2.5, 3.0]}


@pytest.fixture(scope="module")
def reference_16(tmp_path_factory):
    """The 16-candidate sweep run once without interruption: (sweep file, its rows)."""
    folder = tmp_path_factory.mktemp("reference")
    sweep = _write_sweep(folder, _SWEEP_16)
    return sweep, run_sweep(sweep, folder / "out", workers=2, evaluator=fake_evaluate)


def _start_cli(sweep: Path, out: Path, delay_s: float) -> subprocess.Popen:
    """``fluxlab sweep`` in a Python subprocess whose run_sweep defaults to the fake."""
    code = ("import sys; import fluxlab.sweep.run as run; from fluxlab.cli import main; "
            f"run.DEFAULT_EVALUATOR = {FAKE!r}; "
            f"sys.exit(main(['sweep', {str(sweep)!r}, '--out', {str(out)!r}, "
            "'--workers', '2', '--no-progress']))")
    pythonpath = os.pathsep.join(filter(None, [str(TESTS), os.environ.get("PYTHONPATH")]))
    env = dict(os.environ, FLUXLAB_FAKE_EVAL_DELAY_S=str(delay_s), PYTHONPATH=pythonpath)
    # A session of its own: the kill reaches the sweep and its worker processes, as when a
    # machine goes down, and nothing else.
    return subprocess.Popen([sys.executable, "-c", code], env=env, start_new_session=True,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _wait_for_rows(store_path: Path, count: int, proc: subprocess.Popen,
                   timeout_s: float = 120.0) -> int:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        assert proc.poll() is None, proc.communicate()
        if store_path.exists():
            try:
                with sqlite3.connect(store_path, timeout=5) as conn:
                    n = conn.execute("SELECT COUNT(*) FROM results").fetchone()[0]
            except sqlite3.OperationalError:  # the table is not created yet
                n = 0
            if n >= count:
                return n
        time.sleep(0.05)
    raise AssertionError(f"fewer than {count} rows stored after {timeout_s} s")


def test_sigkill_then_rerun_equals_an_uninterrupted_run(tmp_path, reference_16):
    sweep, reference = reference_16
    out = tmp_path / "killed"
    proc = _start_cli(sweep, out, delay_s=0.4)
    _wait_for_rows(out / "results.sqlite", 4, proc)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.communicate(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    survived = _updated(out / "results.sqlite")
    assert 4 <= len(survived) < 16, "the sweep was not stopped part way"

    resumed = run_sweep(sweep, out, workers=2, evaluator=fake_evaluate)
    assert resumed == reference  # statuses, results, messages and keys, row by row
    assert [r["candidate"] for r in resumed] == list(range(16))
    after = _updated(out / "results.sqlite")
    assert len(after) == 16  # one row per candidate key, none lost or duplicated
    assert {k: after[k] for k in survived} == survived  # stored ones were not redone
    with open(out / "results.csv", newline="") as f:
        assert [int(r["candidate"]) for r in csv.DictReader(f)] == list(range(16))


def test_ctrl_c_stops_cleanly_and_says_how_to_resume(tmp_path, reference_16):
    sweep, reference = reference_16
    out = tmp_path / "out"
    proc = _start_cli(sweep, out, delay_s=0.4)
    _wait_for_rows(out / "results.sqlite", 2, proc)
    os.kill(proc.pid, signal.SIGINT)  # Ctrl-C, to the sweep's own process
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130
    assert "Run the same command again to resume" in err
    with open(out / "results.csv", newline="") as f:
        statuses = [r["status"] for r in csv.DictReader(f)]
    assert len(statuses) == 16 and "pending" in statuses
    assert run_sweep(sweep, out, workers=2, evaluator=fake_evaluate) == reference


def test_dask_local_cluster_gives_the_same_results_as_the_local_pool(tmp_path):
    from distributed import LocalCluster

    sweep = _write_sweep(tmp_path, {END1: [22.0, 26.0, 80.0], SPEED: [1500.0, 99999.0]},
                         studies="full")
    local = run_sweep(sweep, tmp_path / "local", workers=2, evaluator=fake_evaluate)
    # processes=False: the Dask workers are threads of this process, where pytest has put
    # tests/ on sys.path, so they import fake_evaluator by name as the local pool does
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                      host="127.0.0.1", dashboard_address=None) as cluster:
        assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
        remote = run_sweep(sweep, tmp_path / "dask", scheduler=cluster.scheduler_address,
                           evaluator=FAKE)
    assert remote == local
    with ResultStore(tmp_path / "local" / "results.sqlite") as a, \
            ResultStore(tmp_path / "dask" / "results.sqlite") as b:
        assert {r.key: r.curves for r in a.results()} == {r.key: r.curves for r in b.results()}


def test_command_line_writes_table_figures_and_sheets(tmp_path, capsys, monkeypatch):
    import fluxlab.sweep.run

    # the command line has no evaluator option: make the fake run_sweep's default here
    monkeypatch.setattr(fluxlab.sweep.run, "DEFAULT_EVALUATOR", FAKE)
    sweep = _write_sweep(tmp_path, {END1: [22.0, 24.0, 26.0, 80.0]}, studies="full")
    out = tmp_path / "out"
    assert main(["sweep", str(sweep), "--out", str(out), "--workers", "2",
                 "--no-progress"]) == 0
    for name in ("results.csv", "pareto.png", "pareto.svg", "parameters.png", "compare.pdf"):
        assert (out / name).stat().st_size > 0, name
    with open(out / "results.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert list(rows[0])[:3] == ["candidate", END1, "status"]
    assert {"torque_mean_Nm", "torque_ripple_pct", "saliency_apparent", "message"} <= set(rows[0])
    assert rows[3]["status"] == "rejected" and "end_angle_deg = 80" in rows[3]["message"]
    assert "\n" not in rows[3]["message"]
    # the fake really ran, under its own keys
    assert [r["key"] for r in rows] == [c.key for c in make_candidates(load_sweep(sweep), FAKE)]

    folders = []
    with ResultStore(out / "results.sqlite") as store:  # evaluate-style output folders
        for row in rows[:2]:
            stored, folder = store.get(row["key"]), tmp_path / f"eval{row['candidate']}"
            folder.mkdir()
            (folder / "summary.json").write_text(json.dumps(stored.summary))
            (folder / "machine.toml").write_text(DEMO.read_text())
            for name, x in (("torque_vs_position", "position_deg"),
                            ("torque_vs_current_angle", "current_angle_deg")):
                curve = stored.curves[name]
                lines = [f"{x},torque_Nm"] + [f"{a},{b}" for a, b in
                                              zip(curve[x], curve["torque_Nm"], strict=True)]
                (folder / f"{name}.csv").write_text("\n".join(lines) + "\n")
            folders.append(str(folder))
    sheet = tmp_path / "sheet.pdf"
    assert main(["compare", *folders, "--out", str(sheet)]) == 0
    assert sheet.read_bytes()[:5] == b"%PDF-"
    assert main(["compare", str(tmp_path), "--out", str(sheet)]) == 1
    assert "not an evaluate output folder" in capsys.readouterr().err


def test_pareto_front_matches_the_definition():
    from fluxlab.report.plots.sweep import pareto_front

    rng = np.random.default_rng(3)
    f1, f2 = rng.random(300), rng.random(300)
    # slow reference: a point is on the front when no other point is at least as good in
    # both objectives and better in one (minimising both)
    dominated = [bool(np.any((f1 <= f1[i]) & (f2 <= f2[i]) & ((f1 < f1[i]) | (f2 < f2[i]))))
                 for i in range(300)]
    assert list(pareto_front(f1, f2)) == [i for i in range(300) if not dominated[i]]
