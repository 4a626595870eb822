"""Nothing fluxlab starts outlives it: worker processes end when their parent is killed.

Each test starts a parent process in its own session, waits until its children are at
work, records every descendant (pool workers, the multiprocessing resource tracker, a
forked child), kills the parent with SIGKILL (no clean-up of any kind runs) and then
expects all recorded descendants to be gone within a few seconds. Processes are found
through /proc, so the module runs on Linux only; whatever survives a failed test is killed
in a ``finally`` block, so no test leaves processes behind.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
from paths import DEMO, REPO_ROOT

from fluxlab.studies.parent_watch import ORPHAN_EXIT_CODE
from fluxlab.studies.pool import StudyPool

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"),
                                reason="reads /proc and uses SIGKILL")

TESTS = Path(__file__).resolve().parent  # holds fake_evaluator.py and paths.py
GONE_WITHIN_S = 10.0

#: A process identity: (pid, start time in clock ticks), so a reused pid is not mistaken
#: for the recorded process.
Ident = tuple[int, int]


def _stat(pid: int) -> tuple[str, int, int] | None:
    """(state, parent pid, start time) of ``pid`` from /proc, None if there is no such."""
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    fields = text.rsplit(")", 1)[1].split()  # after "pid (command)"
    return fields[0], int(fields[1]), int(fields[19])


def _descendants(root: int) -> list[Ident]:
    """Every living descendant of ``root`` (children, their children, ...)."""
    by_parent: dict[int, list[Ident]] = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit() and (stat := _stat(int(entry))) is not None and stat[0] != "Z":
            by_parent.setdefault(stat[1], []).append((int(entry), stat[2]))
    found, todo = [], [root]
    while todo:
        for child in by_parent.get(todo.pop(), []):
            found.append(child)
            todo.append(child[0])
    return found


def _alive(ident: Ident) -> bool:
    """Whether the recorded process still runs (a zombie is dead; so is a reused pid)."""
    stat = _stat(ident[0])
    return stat is not None and stat[0] != "Z" and stat[2] == ident[1]


def _command(pid: int) -> str:
    try:
        return Path(f"/proc/{pid}/cmdline").read_bytes().replace(b"\0", b" ").decode()[:100]
    except OSError:
        return "?"


def _start_parent(code: str, tmp_path: Path, *args: str, **env: str) -> subprocess.Popen:
    """Run ``code`` with ``args`` in a new Python process in its own session, with ``env``
    added to the environment and ``tests/`` and ``tmp_path`` importable; output to
    ``tmp_path/parent.log``."""
    path = os.pathsep.join(filter(None, [str(TESTS), str(tmp_path),
                                         os.environ.get("PYTHONPATH")]))
    with (tmp_path / "parent.log").open("w") as log:
        return subprocess.Popen([sys.executable, "-c", code, *args], cwd=REPO_ROOT,
                                env={**os.environ, **env, "PYTHONPATH": path},
                                stdout=log, stderr=subprocess.STDOUT, start_new_session=True)


def _wait_until(condition, proc: subprocess.Popen, tmp_path: Path, timeout: float = 90.0):
    deadline = time.monotonic() + timeout
    while not condition():
        log = (tmp_path / "parent.log").read_text()
        assert proc.poll() is None, f"the parent ended early ({proc.returncode}):\n{log}"
        assert time.monotonic() < deadline, f"the parent never got ready:\n{log}"
        time.sleep(0.1)


def _kill_parent_and_watch(proc: subprocess.Popen, expected: dict[str, int]) -> float:
    """SIGKILL ``proc`` and assert that its descendants, recorded just before, are all gone
    within GONE_WITHIN_S seconds; returns how long they took.

    ``expected``: how many descendants must have a command line containing each key
    (``{"spawn_main": 2}``: two spawned workers). Whatever happens, the parent and the
    survivors are killed on the way out.
    """
    recorded = _descendants(proc.pid)
    commands = {pid: _command(pid) for pid, _ in recorded}
    try:
        for text, count in expected.items():
            assert sum(text in c for c in commands.values()) == count, (text, commands)
        proc.kill()
        proc.wait(timeout=10)
        killed_at = time.monotonic()
        while any(map(_alive, recorded)) and time.monotonic() - killed_at < GONE_WITHIN_S:
            time.sleep(0.02)
        took = time.monotonic() - killed_at
        left = [commands[pid] for pid, start in recorded if _alive((pid, start))]
        assert not left, f"still alive {GONE_WITHIN_S} s after the parent was killed: {left}"
        print(f"{len(recorded)} descendants gone {took:.2f} s after the kill")
        return took
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait(timeout=10)
        for ident in recorded:
            if _alive(ident):
                os.kill(ident[0], signal.SIGKILL)


EVALUATE = f"""
import sys
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.studies.evaluate import evaluate

spec = replace_path(load_machine({str(DEMO)!r}), "mesh.size_mm", 9.0)
evaluate(spec, studies="full", workers=2, progress=lambda m: print(m, flush=True))
"""


def test_study_workers_and_the_resource_tracker_end_with_a_killed_evaluation(tmp_path):
    proc = _start_parent(EVALUATE, tmp_path)
    log = tmp_path / "parent.log"
    _wait_until(lambda: "running the studies" in log.read_text(), proc, tmp_path)
    time.sleep(1.0)  # the workers build the model and solve
    _kill_parent_and_watch(proc, {"spawn_main": 2, "resource_tracker": 1})


BUSY_EVALUATOR = """
import os
from pathlib import Path

from fake_evaluator import fake_evaluate


def evaluate(spec, studies="point"):
    Path(os.environ["BUSY_MARKS"], str(os.getpid())).touch()  # this worker is at work
    return fake_evaluate(spec, studies)
"""

SWEEP = """
import sys
from fluxlab.sweep import run_sweep

run_sweep(sys.argv[1], sys.argv[2], workers=2, evaluator="busy_evaluator:evaluate")
"""


def test_sweep_workers_and_the_resource_tracker_end_with_a_killed_sweep(tmp_path):
    (tmp_path / "busy_evaluator.py").write_text(BUSY_EVALUATOR)
    marks = tmp_path / "marks"
    marks.mkdir()
    sweep = tmp_path / "sweep.toml"
    sweep.write_text(f"base = {json.dumps(str(DEMO))}\n" 'studies = "point"\n'
                     '[plan]\nkind = "grid"\n[[parameters]]\n'
                     'path = "rotor.barriers[1].end_angle_deg"\nvalues = [22.0, 24.0, 26.0]\n')
    proc = _start_parent(SWEEP, tmp_path, str(sweep), str(tmp_path / "out"),
                         FLUXLAB_FAKE_EVAL_DELAY_S="120", BUSY_MARKS=str(marks))
    _wait_until(lambda: len(list(marks.iterdir())) >= 2, proc, tmp_path)
    _kill_parent_and_watch(proc, {"spawn_main": 2, "resource_tracker": 1})


FORKED = """
import time
from fluxlab.report.forked import run_jobs

def job():
    print("job", flush=True)
    time.sleep(120)
    return []

run_jobs([job, job])
"""


def test_the_forked_drawing_child_ends_with_a_killed_parent(tmp_path):
    proc = _start_parent(FORKED, tmp_path)
    log = tmp_path / "parent.log"
    _wait_until(lambda: log.read_text().count("job") == 2, proc, tmp_path)
    _kill_parent_and_watch(proc, {"-c": 1})  # the fork has the parent's command line


WATCHED_CHILD = """
import os, sys, time
from fluxlab.studies.parent_watch import end_with_parent

print(end_with_parent(os.getppid(), sys.argv[1] == "main", poll_s=0.2), flush=True)
time.sleep(120)
"""

STARTS_WATCHED_CHILD = f"""
import subprocess, sys, time
subprocess.Popen([sys.executable, "-c", {WATCHED_CHILD!r}, sys.argv[1]])
time.sleep(120)
"""


@pytest.mark.parametrize("thread, mechanism", [("main", "signal"), ("other", "poll")])
def test_a_watched_child_ends_with_its_parent_by_signal_or_by_polling(tmp_path, thread,
                                                                     mechanism):
    proc = _start_parent(STARTS_WATCHED_CHILD, tmp_path, thread)
    log = tmp_path / "parent.log"
    _wait_until(lambda: log.read_text().strip() != "", proc, tmp_path, timeout=30)
    assert log.read_text().split() == [mechanism]
    took = _kill_parent_and_watch(proc, {"parent_watch": 1})
    assert took < (0.5 if mechanism == "signal" else 2.0)


@pytest.mark.parametrize("thread", ["main", "other"])
def test_a_child_whose_parent_is_already_gone_ends_at_once(thread):
    # The parent given is not this child's parent: as if it had died before the watch.
    code = ("import os\nfrom fluxlab.studies.parent_watch import end_with_parent\n"
            f"end_with_parent(os.getppid() + 1, {thread == 'main'})\nprint('survived')\n")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=60)
    assert (done.returncode, done.stdout) == (ORPHAN_EXIT_CODE, "")


def _pid_after(delay_s: float) -> int:
    time.sleep(delay_s)
    return os.getpid()


def test_workers_started_in_a_thread_outlive_that_thread():
    # Linux sends the parent-death signal when the *thread* that created the child ends: a
    # pool whose workers were started (and set up) in a short-lived thread must not lose
    # them when that thread ends while this process lives on.
    opened: list[tuple[StudyPool, set[int]]] = []

    def start() -> None:
        pool = StudyPool(2)
        seen: set[int] = set()
        deadline = time.monotonic() + 60
        while len(seen) < 2 and time.monotonic() < deadline:  # both workers set up
            seen |= set(pool._pool.map(_pid_after, [0.3, 0.3]))
        opened.append((pool, seen))

    starter = threading.Thread(target=start)
    starter.start()
    starter.join()
    pool, seen = opened[0]
    with pool:
        assert len(seen) == 2 and os.getpid() not in seen
        time.sleep(1.0)  # a signal would have arrived by now
        assert all(process.is_alive() for process in pool._pool._processes.values())
        assert set(pool._pool.map(_pid_after, [0.3, 0.3])) <= seen
