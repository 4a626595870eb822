"""Jobs run in a forked child and here (fluxlab.report.forked)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from fluxlab.report.forked import run_jobs

pytestmark = pytest.mark.skipif(not hasattr(os, "fork"), reason="needs fork")


def _writer(path: Path, text: str):
    def job() -> list[Path]:
        path.write_text(f"{text} {os.getpid()}")
        return [path]
    return job


@pytest.mark.parametrize("parallel", [True, False])
def test_all_paths_in_job_order_and_the_first_job_in_a_child(tmp_path, parallel):
    jobs = [_writer(tmp_path / f"{k}.txt", str(k)) for k in range(3)]
    paths = run_jobs(jobs, parallel=parallel)
    assert paths == [tmp_path / f"{k}.txt" for k in range(3)]
    pids = [int(p.read_text().split()[1]) for p in paths]
    assert (pids[0] != os.getpid()) == parallel and pids[1:] == [os.getpid()] * 2


def test_a_child_error_is_raised_here_with_its_message(tmp_path):
    def broken() -> list[Path]:
        raise ValueError("no such figure: x")

    with pytest.raises(RuntimeError, match="ValueError: no such figure: x"):
        run_jobs([broken, _writer(tmp_path / "b.txt", "b")])
    assert (tmp_path / "b.txt").exists()  # the other job still ran to its end


def test_an_error_here_waits_for_the_child(tmp_path):
    def broken() -> list[Path]:
        raise KeyError("here")

    with pytest.raises(KeyError, match="here"):
        run_jobs([_writer(tmp_path / "a.txt", "a"), broken])
    assert (tmp_path / "a.txt").read_text().startswith("a ")  # finished before the raise


def test_a_child_killed_without_a_word_is_an_error():
    def dies() -> list[Path]:
        os._exit(3)

    with pytest.raises(RuntimeError, match="exit code 3"):
        run_jobs([dies, list])
