"""Optimisation files: the example reads, and each bad key gives one line naming it."""

import json

import pytest
from fake_evaluator import fake_evaluate
from paths import DEMO, GEOMETRIES

from fluxlab.cli import main
from fluxlab.errors import SpecError
from fluxlab.optimize import load_optimisation, optimisation_from_dict, run_optimisation

END1 = "rotor.barriers[1].end_angle_deg"


def _table(**changes) -> dict:
    data = {"base": str(DEMO), "studies": "full",
            "parameters": [{"path": END1, "low": 20.0, "high": 28.0}],
            "objectives": {"torque_mean_Nm": "max", "torque_ripple_pct": "min"},
            "constraints": {"power_factor": {"min": 0.65}},
            "search": {"population": 4, "generations": 2, "seed": 1},
            "fidelity": {"mesh.size_mm": 5.0}, "verify": {"best": 2}}
    for key, value in changes.items():
        if value is None:
            data.pop(key)
        else:
            data[key] = value
    return data


def _toml(data: dict) -> str:
    """A TOML text of ``data`` (inline tables; json strings and numbers are TOML too)."""

    def value(v):
        if isinstance(v, dict):
            return "{ " + ", ".join(f"{json.dumps(k)} = {value(x)}" for k, x in v.items()) + " }"
        if isinstance(v, list):
            return "[" + ", ".join(value(x) for x in v) + "]"
        return json.dumps(v)

    return "\n".join(f"{json.dumps(k)} = {value(v)}" for k, v in data.items()) + "\n"


def test_the_example_file_reads():
    opt = load_optimisation(GEOMETRIES / "optimize_demo.toml")
    assert [o.goal for o in opt.objectives] == ["max", "min"]
    assert opt.constraints[0].describe() == "power_factor >= 0.65"
    assert opt.search.evaluations == opt.search.population * opt.search.generations
    assert all(path.startswith("mesh.") for path in opt.fidelity)


def test_a_budget_in_evaluations_is_rounded_up_to_whole_generations():
    opt = optimisation_from_dict(_table(search={"population": 4, "evaluations": 10}))
    assert (opt.search.generations, opt.search.evaluations) == (3, 12)


BAD = [
    ({"objectives": None}, "objectives = None: required"),
    ({"objectives": {"torque_mean_Nm": "maximise"}}, "objectives.torque_mean_Nm = 'maximise'"),
    ({"objectives": {"torque-mean": "max"}}, "objectives.torque-mean: 'torque-mean' is not"),
    ({"constraints": {"power_factor": {"min": "high"}}}, "constraints.power_factor.min = 'high'"),
    ({"constraints": {"power_factor": {"least": 0.6}}}, "constraints.power_factor.least: unknown"),
    ({"constraints": {"power_factor": {"min": 0.9, "max": 0.8}}},
     "constraints.power_factor: min = 0.9 must be less than max = 0.8"),
    ({"search": {"population": 1, "generations": 2}}, "search.population = 1"),
    ({"search": {"population": 4}}, "search: give either generations or evaluations"),
    ({"search": {"population": 4, "generations": 2, "algorithm": "simplex"}},
     "search.algorithm = 'simplex'"),
    ({"search": {"population": 4, "generations": 2, "seed": -3}}, "search.seed = -3"),
    ({"parameters": [{"path": "rotor.barriers[7].width_mm", "low": 1.0, "high": 2.0}]},
     "parameters[0].path"),
    ({"parameters": [{"path": END1, "low": 28.0, "high": 20.0}]},
     "parameters[0]: low = 28.0 must be less than high = 20.0"),
    ({"fidelity": {"rotor.shaft_diameter_mm": 40.0}}, "fidelity.rotor.shaft_diameter_mm"),
    ({"fidelity": {"mesh.size_mm": -1.0}}, "mesh.size_mm = -1"),
    ({"verify": {"best": 0}}, "verify.best = 0"),
    ({"studies": "point"}, "objectives.torque_ripple_pct: torque_ripple_pct is computed by "
                           "full studies only"),
    ({"serach": {}}, "serach: unknown key"),
    ({"fixed": {END1: 24.0}}, "fixed.rotor.barriers[1].end_angle_deg: also varied"),
]


@pytest.mark.parametrize("changes, expected", BAD, ids=[b[1][:40] for b in BAD])
def test_a_bad_key_gives_one_line_naming_it(tmp_path, capsys, changes, expected):
    path = tmp_path / "opt.toml"
    path.write_text(_toml(_table(**changes)))
    assert main(["optimize", str(path), "--out", str(tmp_path / "out")]) == 1
    err = capsys.readouterr().err.strip()
    assert "\n" not in err, err
    assert expected in err, err
    with pytest.raises(SpecError):
        optimisation_from_dict(_table(**changes))


def test_a_misspelt_figure_stops_after_the_base_machine(tmp_path):
    data = _table(objectives={"torque_mean_Nn": "max"}, constraints={})
    with pytest.raises(SpecError, match=r"objectives\.torque_mean_Nn: not a figure of the "
                                        r"evaluation summary \(figures: .*torque_mean_Nm"):
        run_optimisation(optimisation_from_dict(data), tmp_path, workers=1,
                         evaluator=fake_evaluate)
