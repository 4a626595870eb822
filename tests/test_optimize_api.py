"""The optimisation through its Python API on problems with known answers (no FEM).

ZDT1 (Zitzler, Deb, Thiele 2000, Evolutionary Computation 8(2)) stands behind the evaluator
interface (tests/analytic_evaluator.py). Its true front is f2 = 1 - sqrt(f1), 0 <= f1 <= 1;
the hypervolume it dominates up to the reference point (1.1, 1.1) is computed here in closed
form, independently of the code under test, and the search must reach a stated share of it.
"""

import math

import numpy as np
import pytest
from analytic_evaluator import ZDT1_KEYS, zdt1, zdt1_evaluate
from fake_evaluator import fake_evaluate
from paths import DEMO

from fluxlab.optimize import optimisation_from_dict, run_optimisation
from fluxlab.sweep import run_sweep, sweep_from_dict

REF = 1.1  # hypervolume reference point (REF, REF), both objectives minimised
END1 = "rotor.barriers[1].end_angle_deg"


def zdt1_table(population: int, generations: int, seed: int = 3, **extra) -> dict:
    return {"base": str(DEMO), "studies": "point",
            "parameters": [{"path": p, "low": lo, "high": hi} for p, (lo, hi) in
                           ZDT1_KEYS.items()],
            "objectives": {"zdt1_f1": "min", "zdt1_f2": "min"},
            "search": {"population": population, "generations": generations, "seed": seed},
            "verify": {"best": 3}, **extra}


def true_front_hypervolume(f1_low: float = 0.0, f1_high: float = 1.0) -> float:
    """Area dominated by f2 = 1 - sqrt(f1), f1_low <= f1 <= f1_high, up to (REF, REF):
    the integral of REF - f2 over [f1_low, f1_high] plus the strip right of f1_high (which
    the end point dominates up to REF). Closed form."""
    strip = (REF - f1_high) * (REF - (1.0 - math.sqrt(f1_high)))
    return ((REF - 1.0) * (f1_high - f1_low)
            + 2.0 / 3.0 * (f1_high ** 1.5 - f1_low ** 1.5) + strip)


def hypervolume_2d(points: np.ndarray) -> float:
    """Area dominated by ``points`` (minimised) up to (REF, REF): a sweep over f1 sorted,
    adding the rectangle of each point that lowers the best f2 so far."""
    area, best = 0.0, REF
    for f1, f2 in sorted(map(tuple, points)):
        if f1 < REF and f2 < best:
            area += (REF - f1) * (best - f2)
            best = f2
    return area


def _search_points(result) -> np.ndarray:
    return np.array([[r["zdt1_f1"], r["zdt1_f2"]] for r in result.history
                     if r["phase"] == "search" and r["feasible"]])


def test_the_closed_form_hypervolume_matches_a_dense_sample():
    f1 = np.linspace(0.0, 1.0, 200_001)
    dense = hypervolume_2d(np.column_stack([f1, 1.0 - np.sqrt(f1)]))
    assert dense == pytest.approx(true_front_hypervolume(), rel=1e-4)


def test_zdt1_reaches_nine_tenths_of_the_true_hypervolume_in_600_evaluations(tmp_path):
    opt = optimisation_from_dict(zdt1_table(population=20, generations=30))
    result = run_optimisation(opt, tmp_path, workers=2, evaluator=zdt1_evaluate)
    assert sum(r["phase"] == "search" for r in result.history) <= 600
    share = hypervolume_2d(_search_points(result)) / true_front_hypervolume()
    print(f"ZDT1, 4 variables, 600 evaluations: {share:.3f} of the true hypervolume")
    assert share >= 0.9
    # the verified front holds what the evaluator gives for its values (one fidelity here)
    for row in result.front:
        x = [(row[p] - lo) / (hi - lo) for p, (lo, hi) in ZDT1_KEYS.items()]
        assert (row["zdt1_f1"], row["zdt1_f2"]) == pytest.approx(zdt1(x), abs=1e-9)


def test_constrained_zdt1_keeps_its_constraints_and_covers_the_cut_front(tmp_path):
    constraints = {"zdt1_f1": {"min": 0.2}, "zdt1_f2": {"min": 0.1}}
    opt = optimisation_from_dict(zdt1_table(population=20, generations=30,
                                            constraints=constraints))
    result = run_optimisation(opt, tmp_path, workers=2, evaluator=zdt1_evaluate)
    for row in result.history:
        inside = row["zdt1_f1"] >= 0.2 and row["zdt1_f2"] >= 0.1
        assert row["feasible"] == inside, row
        if not inside:
            assert "outside zdt1_f" in row["message"]
    assert result.front and all(r["zdt1_f1"] >= 0.2 and r["zdt1_f2"] >= 0.1
                                for r in result.front)
    # the true front cut by the constraints: 0.2 <= f1 <= (1 - 0.1)^2 = 0.81
    share = hypervolume_2d(_search_points(result)) / true_front_hypervolume(0.2, 0.81)
    print(f"constrained ZDT1, 600 evaluations: {share:.3f} of the cut front's hypervolume")
    assert share >= 0.9


def test_invalid_geometry_is_infeasible_with_its_message_and_the_search_goes_on(tmp_path):
    data = {"base": str(DEMO), "studies": "full",
            "parameters": [{"path": END1, "low": 20.0, "high": 80.0}],
            "objectives": {"torque_mean_Nm": "max", "torque_ripple_pct": "min"},
            "search": {"population": 6, "generations": 3, "seed": 2}, "verify": {"best": 2}}
    result = run_optimisation(optimisation_from_dict(data), tmp_path, workers=2,
                              evaluator=fake_evaluate)
    rejected = [r for r in result.history if r["status"] == "rejected"]
    assert rejected, "the range reaches end angles the rotor cannot take"
    assert all(not r["feasible"] and "end_angle_deg" in r["message"] for r in rejected)
    assert result.front and all(r["feasible"] for r in result.front)
    assert (tmp_path / "history.csv").read_text().count("\n") == len(result.history) + 1


def test_a_design_a_sweep_evaluated_is_read_from_its_store(tmp_path):
    fidelity = {"mesh.size_mm": 5.0}
    sweep = sweep_from_dict({"base": str(DEMO), "studies": "full", "plan": {"kind": "grid"},
                             "fixed": fidelity,
                             "parameters": [{"path": END1, "values": [25.03]}]})
    run_sweep(sweep, tmp_path / "sweep", workers=1, evaluator=fake_evaluate)
    data = {"base": str(DEMO), "studies": "full",
            "parameters": [{"path": END1, "low": 20.0, "high": 28.0}],
            "objectives": {"torque_mean_Nm": "max"}, "fidelity": fidelity,
            "search": {"population": 3, "generations": 1}, "verify": {"best": 1}}
    result = run_optimisation(optimisation_from_dict(data), tmp_path / "opt", workers=1,
                              evaluator=fake_evaluate,
                              store=tmp_path / "sweep" / "results.sqlite")
    # the base machine at the search mesh is the sweep's candidate: same machine, same key
    assert result.history[0]["phase"] == "base" and result.history[0]["reused"]
