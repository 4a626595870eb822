"""The optimisation notebook runs (nbclient) on its small search with the real evaluation,
from a working folder outside the repository, writing into a temporary folder."""

import csv
import json

import nbformat
from nbclient import NotebookClient
from paths import REPO_ROOT

NOTEBOOK = REPO_ROOT / "notebooks" / "optimize_demo.ipynb"


def test_optimize_notebook_runs_from_another_folder_and_reports_its_run(tmp_path):
    nb = nbformat.read(NOTEBOOK, as_version=4)
    (parameters,) = [c for c in nb.cells if "parameters" in c.metadata.get("tags", [])]
    # the visible defaults, with the output folder moved out of the repository
    parameters.source = parameters.source.replace(
        'GEOMETRIES.parent / "out" / "optimize_notebook"', repr(str(tmp_path / "out")))
    assert str(tmp_path) in parameters.source
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    NotebookClient(nb, timeout=600, kernel_name="python3",
                   resources={"metadata": {"path": str(elsewhere)}}).execute()
    reported = json.loads(nb.cells[-2]["outputs"][-1]["text"].strip().splitlines()[-1])
    with open(tmp_path / "out" / "history.csv", newline="") as f:
        history = list(csv.DictReader(f))
    with open(tmp_path / "out" / "front.csv", newline="") as f:
        front = [float(r["torque_mean_Nm"]) for r in csv.DictReader(f)]
    # the numbers the notebook shows are those of the run it stored
    assert reported["evaluations"] == len(history) >= 1 + 4 + 1
    assert reported["front_torque_mean_Nm"] == front and front
    # Sign: T = 3/2 p (Ld - Lq) id iq > 0 with Ld > Lq and 0 < gamma < 90 deg (standard dq
    # torque equation of a reluctance machine, e.g. Krause, Analysis of Electric Machinery,
    # synchronous machine chapter, from memory); the demo runs at gamma = 60 deg.
    assert all(t > 0 for t in front)
