"""Sweep files: validation messages name the key and value; plans are complete and seeded."""

import numpy as np
import pytest
from paths import GEOMETRIES

from fluxlab.errors import SpecError
from fluxlab.sweep import candidate_key, load_sweep, make_candidates, plan_points, sweep_from_dict


def _sweep(parameters, plan=None, **top):
    data = {"base": "demo_fan_drive.toml", "plan": plan or {"kind": "grid"},
            "parameters": parameters, **top}
    return sweep_from_dict(data, GEOMETRIES)


def _problems(*args, **kwargs) -> str:
    with pytest.raises(SpecError) as info:
        _sweep(*args, **kwargs)
    return "\n".join(info.value.problems)


END1 = "rotor.barriers[1].end_angle_deg"


@pytest.mark.parametrize("item, expected", [
    ({"path": "rotor.barriers[1].end_angle", "values": [20]}, "no such key"),
    ({"path": "rotor.shaft.diameter_mm", "values": [20]}, "no rotor.shaft"),
    ({"path": "rotor.barriers[7].width_mm", "values": [3]}, "index 7 out of range"),
    ({"path": "rotor.barriers[1]..width_mm", "values": [3]}, "is not a key name"),
    ({"path": "rotor.barrier_shape", "values": [1]}, "not a numeric key"),
    ({"path": "materials.stator", "values": [1]}, "not a numeric key"),
    ({"path": END1, "low": 28.0, "high": 20.0, "steps": 3}, "low = 28.0 must be less than high"),
    ({"path": END1, "low": 20.0, "high": 28.0}, "steps = None: a grid range needs"),
    ({"path": END1, "values": []}, "must be a non-empty list"),
    ({"path": END1, "values": [20, "x"]}, "'x' is not a number"),
    ({"path": END1, "values": [20], "low": 1.0}, "give either values"),
    ({"path": "winding.turns_per_coil", "values": [10.5]}, "takes whole numbers"),
    ({"path": END1, "values": [20], "step": 2}, "parameters[0].step: unknown key"),
])
def test_bad_parameter_is_named(item, expected):
    message = _problems([item])
    assert expected in message
    assert "parameters[0]" in message


def test_bad_plan_and_top_level_keys_are_named():
    assert "plan.kind = 'sobol': unknown plan kind" in _problems(
        [{"path": END1, "values": [20]}], {"kind": "sobol"})
    assert "plan.samples: required for a lhs plan" in _problems(
        [{"path": END1, "low": 20.0, "high": 28.0}], {"kind": "lhs"})
    assert "samples is for random and lhs" in _problems(
        [{"path": END1, "values": [20]}], {"kind": "grid", "samples": 4})
    assert "steps = 3: only for grid plans" in _problems(
        [{"path": END1, "low": 20.0, "high": 28.0, "steps": 3}], {"kind": "random", "samples": 3})
    assert "studies = 'all'" in _problems([{"path": END1, "values": [20]}], studies="all")
    assert "colour: unknown key" in _problems([{"path": END1, "values": [20]}], colour=1)
    assert "varied more than once" in _problems([{"path": END1, "values": [20]},
                                                 {"path": END1, "values": [21]}])
    assert "no such file" in _problems([{"path": END1, "values": [20]}], base="nowhere.toml")


def test_fixed_keys_are_applied_and_checked():
    sweep = _sweep([{"path": END1, "values": [20]}], fixed={"mesh.size_mm": 8.0})
    assert sweep.base_raw["mesh"]["size_mm"] == 8.0
    message = _problems([{"path": END1, "values": [20]}], fixed={"mesh.size_mm": -1.0})
    assert "with the fixed keys" in message and "mesh.size_mm = -1.0" in message


def test_a_key_left_at_its_default_can_be_varied():
    # barrier 0 of the demo has no post_mm line; the schema knows the key (a float)
    sweep = _sweep([{"path": "rotor.barriers[0].post_mm", "values": [0, 1]}])
    assert [p["rotor.barriers[0].post_mm"] for p in plan_points(sweep)] == [0.0, 1.0]


def test_grid_is_the_full_product_last_parameter_fastest():
    sweep = _sweep([{"path": END1, "low": 20.0, "high": 28.0, "steps": 3},
                    {"path": "rotor.barriers[0].width_mm", "values": [2.5, 3.0]}])
    points = plan_points(sweep)
    assert [(p[END1], p["rotor.barriers[0].width_mm"]) for p in points] == [
        (20.0, 2.5), (20.0, 3.0), (24.0, 2.5), (24.0, 3.0), (28.0, 2.5), (28.0, 3.0)]


def test_latin_hypercube_puts_one_sample_in_each_stratum():
    # Definition of a Latin hypercube sample (McKay, Beckman and Conover, Technometrics 21,
    # 1979): each of the n equal strata of every parameter holds exactly one sample.
    n = 12
    sweep = _sweep([{"path": END1, "low": 20.0, "high": 28.0},
                    {"path": "rotor.barriers[0].width_mm", "low": 2.0, "high": 3.6}],
                   {"kind": "lhs", "samples": n, "seed": 5})
    points = plan_points(sweep)
    assert len(points) == n
    for path, low, high in ((END1, 20.0, 28.0), ("rotor.barriers[0].width_mm", 2.0, 3.6)):
        x = np.array([p[path] for p in points])
        strata = np.floor((x - low) / (high - low) * n).astype(int)
        assert sorted(strata) == list(range(n))


def test_plans_are_reproducible_from_the_seed():
    def keys(kind, seed):
        sweep = _sweep([{"path": END1, "low": 20.0, "high": 28.0},
                        {"path": "winding.turns_per_coil", "low": 9, "high": 13}],
                       {"kind": kind, "samples": 6, "seed": seed})
        return [c.key for c in make_candidates(sweep)], plan_points(sweep)

    for kind in ("random", "lhs"):
        assert keys(kind, 1) == keys(kind, 1)
        assert keys(kind, 1)[0] != keys(kind, 2)[0]
        turns = [p["winding.turns_per_coil"] for p in keys(kind, 1)[1]]
        assert all(isinstance(t, int) and 9 <= t <= 13 for t in turns)


def test_a_sweep_file_cannot_name_an_evaluator(tmp_path):
    """Code to run is chosen from Python only: ``evaluator`` is an unknown key like any other."""
    message = _problems([{"path": END1, "values": [20]}], evaluator="os:system")
    assert ("evaluator: unknown key (known keys: name, base, studies, plan, fixed, parameters)"
            in message)
    sweep = tmp_path / "sweep.toml"
    sweep.write_text(f'base = "{(GEOMETRIES / "demo_fan_drive.toml").as_posix()}"\n'
                     'evaluator = "fake_evaluator:fake_evaluate"\n'
                     f'[[parameters]]\npath = "{END1}"\nvalues = [20.0]\n')
    with pytest.raises(SpecError, match="evaluator: unknown key"):
        load_sweep(sweep)


def test_key_depends_on_machine_studies_and_evaluator_only():
    sweep = _sweep([{"path": END1, "values": [20.0, 22.0]}])
    a, b = make_candidates(sweep)
    assert a.key != b.key and len(a.key) == 64
    base = sweep.base_dir
    assert candidate_key(a.machine, "point", None, base) == a.key  # default evaluator
    assert candidate_key(a.machine, "full", None, base) != a.key
    assert candidate_key(a.machine, "point", "some.module:fake", base) != a.key
    reordered = dict(reversed(list(a.machine.items())))  # table order does not matter
    assert candidate_key(reordered, "point", None, base) == a.key


def test_key_follows_the_contents_of_a_bh_file(tmp_path):
    """A stored result must not stand for a machine whose B-H file was edited since."""
    curve = tmp_path / "steel.csv"
    curve.write_text("H_A_per_m,B_T\n0,0\n100,0.5\n300,1.0\n1000,1.4\n10000,1.8\n")
    machine = {"materials": {"rotor": {"bh_csv": "steel.csv"}}}
    before = candidate_key(machine, "point", None, tmp_path)
    assert candidate_key(machine, "point", None, tmp_path) == before
    curve.write_text(curve.read_text().replace("1.8", "1.85"))
    assert candidate_key(machine, "point", None, tmp_path) != before
