"""``fluxlab optimize`` on the example file with the fake evaluator: its files, its
columns with units, and a rerun that evaluates nothing."""

import csv

from paths import GEOMETRIES

from fluxlab.cli import main

FAKE = "fake_evaluator:fake_evaluate"


def test_command_line_writes_tables_figures_and_resumes_from_the_store(tmp_path, capsys,
                                                                       monkeypatch):
    import fluxlab.sweep.run

    # the command line has no evaluator option: make the fake the default here
    monkeypatch.setattr(fluxlab.sweep.run, "DEFAULT_EVALUATOR", FAKE)
    out = tmp_path / "out"
    argv = ["optimize", str(GEOMETRIES / "optimize_demo.toml"), "--out", str(out),
            "--workers", "2", "--no-progress"]
    assert main(argv) == 0
    for name in ("history.csv", "front.csv", "objectives.png", "pareto.png", "pareto.svg",
                 "compare.pdf", "results.sqlite", "fluxlab_manifest.json"):
        assert (out / name).stat().st_size > 0, name
    with open(out / "history.csv", newline="") as f:
        history = list(csv.DictReader(f))
    with open(out / "front.csv", newline="") as f:
        front = list(csv.DictReader(f))
    assert {"evaluation", "phase", "generation", "status", "feasible", "message",
            "rotor.barriers[0].end_angle_deg", "torque_mean_Nm", "torque_ripple_pct",
            "power_factor"} <= set(history[0])
    assert [r["phase"] for r in history[:2]] == ["base", "search"]
    assert {"design", "torque_mean_Nm", "search_torque_mean_Nm", "dominates_base"} <= set(front[0])
    assert all(float(r["power_factor"]) >= 0.65 for r in front)
    first = capsys.readouterr().out
    assert "designs on the verified front" in first

    assert main(argv) == 0
    again = capsys.readouterr().out
    assert "(0 run now" in again
