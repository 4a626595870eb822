"""Studies in worker processes (fluxlab.studies.pool) see the parent's model."""

from __future__ import annotations

import dataclasses
import os

from paths import DEMO

from fluxlab.machine.model import build_model
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.studies.pool import StudyPool


def _describe(model, label):
    return label, os.getpid(), model.newton_rtol, model.linear_solver, model.mesh.mesh.t.shape


def test_workers_rebuild_the_parent_model_with_its_settings():
    spec = replace_path(load_machine(DEMO), "mesh.size_mm", 9.0)
    model = dataclasses.replace(build_model(spec, linear_solver="scipy"), newton_rtol=3e-7)
    tasks = [(f"t{k}", _describe, (k,)) for k in range(4)]
    with StudyPool(2) as pool:
        done = pool.run(model, tasks)
        other = dataclasses.replace(model, newton_rtol=2e-6)  # a new model: rebuilt
        again = pool.run(other, tasks[:2])
    assert sorted(done) == ["t0", "t1", "t2", "t3"]
    for k, (label, pid, rtol, solver, shape) in ((k, done[f"t{k}"]) for k in range(4)):
        assert label == k and pid != os.getpid()
        assert (rtol, solver, shape) == (3e-7, "scipy", model.mesh.mesh.t.shape)
    assert {result[2] for result in again.values()} == {2e-6}


def test_a_pool_of_one_runs_here():
    spec = replace_path(load_machine(DEMO), "mesh.size_mm", 9.0)
    model = build_model(spec)
    with StudyPool(1) as pool:
        done = pool.run(model, [("a", _describe, ("a",)), ("b", _describe, ("b",))])
    assert {result[1] for result in done.values()} == {os.getpid()}
