"""The sweep notebook runs (nbclient) on its tiny sweep with the real evaluation."""

import csv
import json

import nbformat
from nbclient import NotebookClient
from paths import REPO_ROOT

NOTEBOOK = REPO_ROOT / "notebooks" / "sweep_demo.ipynb"


def test_sweep_notebook_runs_and_reports_its_sweep(tmp_path, monkeypatch):
    monkeypatch.setenv("FLUXLAB_NOTEBOOK_OUT", str(tmp_path / "out"))
    monkeypatch.delenv("FLUXLAB_NOTEBOOK_EVALUATOR", raising=False)
    nb = nbformat.read(NOTEBOOK, as_version=4)
    NotebookClient(nb, timeout=300, kernel_name="python3",
                   resources={"metadata": {"path": str(NOTEBOOK.parent)}}).execute()
    last = nb.cells[-2]["outputs"][-1]["text"].strip().splitlines()[-1]
    reported = json.loads(last)
    assert reported["done"] == 2
    with open(tmp_path / "out" / "results.csv", newline="") as f:
        stored = [float(r["torque_mean_Nm"]) for r in csv.DictReader(f)]
    # the numbers the notebook shows are those of the sweep it stored
    assert reported["torque_mean_Nm"] == stored
    # Sign: T = 3/2 p (Ld - Lq) id iq > 0 with Ld > Lq and 0 < gamma < 90 deg (standard dq
    # torque equation of a reluctance machine, e.g. Krause, Analysis of Electric Machinery,
    # synchronous machine chapter, from memory); the demo runs at gamma = 60 deg.
    assert all(t > 0 for t in stored)
