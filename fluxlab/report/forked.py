"""Run a few independent jobs at once, the first in a forked copy of this process.

For writing a result's figures: drawing is single-threaded and the data is already in
memory, so a forked child (copy-on-write: no pickling, no imports) halves the wall time on
two cores. Only the job's return value (a list of paths) travels back through a pipe.
Where ``fork`` is not available (Windows) the jobs run here, one after the other.
The child runs no sparse solver: fork is unsafe only for threaded numerical libraries
(a forked CHOLMOD deadlocked and a threaded MKL livelocked when this was measured on two
cores; DEVELOPERS.md, Speed), which drawing does not use. The child ends with this process,
even when it is killed (:mod:`fluxlab.studies.parent_watch`).
"""

from __future__ import annotations

import multiprocessing
import traceback
from collections.abc import Callable, Sequence
from pathlib import Path

from fluxlab.studies.parent_watch import end_with_parent, parent_identity

__all__ = ["run_jobs"]

Job = Callable[[], list[Path]]


def _child(job: Job, conn, parent: tuple[int, bool]) -> None:
    end_with_parent(*parent)
    try:
        conn.send(("ok", job()))
    except BaseException as err:  # noqa: BLE001 - reported to the parent, which raises
        conn.send(("error", f"{type(err).__name__}: {err}\n{traceback.format_exc()}"))
    finally:
        conn.close()


def run_jobs(jobs: Sequence[Job], parallel: bool = True) -> list[Path]:
    """Run ``jobs`` (functions returning the paths they wrote); return all paths in order.

    With ``parallel`` and ``fork`` available, the first job runs in a forked child while
    the others run here. A job's exception is raised here (a child's as a RuntimeError with
    its traceback) after both have finished, so no file is left half-written by a job still
    running.
    """
    jobs = list(jobs)
    if not jobs:
        return []
    if not parallel or len(jobs) == 1 or "fork" not in multiprocessing.get_all_start_methods():
        return [path for job in jobs for path in job()]
    context = multiprocessing.get_context("fork")
    receive, send = context.Pipe(duplex=False)
    child = context.Process(target=_child, args=(jobs[0], send, parent_identity()),
                            daemon=True)
    child.start()
    send.close()
    here: list[Path] = []
    error: BaseException | None = None
    try:
        for job in jobs[1:]:
            here += job()
    except BaseException as err:  # wait for the child before raising
        error = err
    try:
        status, value = receive.recv()
    except EOFError:  # the child died without a word (killed, crashed)
        status, value = "error", None
    child.join()
    receive.close()
    if value is None:
        value = f"it ended with exit code {child.exitcode} before reporting"
    if error is not None:
        raise error
    if status != "ok":
        raise RuntimeError(f"the forked writer process {child.pid} failed: {value}")
    return [*value, *here]
