"""Which exception type says what: a bad machine or sweep file is a SpecError (a sweep
rejects the candidate for good), a wrong call from Python code is a plain TypeError or
ValueError (a sweep files the candidate as failed, retryable), and the command line prints
a bad option value as one line instead of a traceback."""

from __future__ import annotations

import copy
import math
import sys
from pathlib import Path
from types import SimpleNamespace

import pytest

from fluxlab.errors import ConvergenceError, FluxlabError, GeometryError, SpecError
from fluxlab.spec.machine_file import machine_from_dict
from fluxlab.sweep.worker import evaluate_task

if sys.version_info >= (3, 11):
    import tomllib
else:  # Python 3.10
    import tomli as tomllib

GEOMETRIES = Path(__file__).resolve().parents[1] / "geometries"
DEMO = GEOMETRIES / "demo_fan_drive.toml"


def _demo_raw() -> dict:
    with DEMO.open("rb") as f:
        return tomllib.load(f)


def _stand_in_model():
    """What the averaging rules read of a model: a 36-slot, 4-pole machine, 864 steps/turn."""
    spec = SimpleNamespace(stator=SimpleNamespace(slots=36), pole_pairs=2,
                           mesh=SimpleNamespace(averaging_positions=None))
    return SimpleNamespace(spec=spec, step_angle=2 * math.pi / 864, axis_step=0)


# ------------------------------------------------------------------------ library calls
def test_study_with_zero_positions_is_a_value_error_not_a_spec_error():
    from fluxlab.studies.curves import torque_vs_current_angle

    with pytest.raises(ValueError, match="positions = 0: must be a whole number") as info:
        torque_vs_current_angle(_stand_in_model(), 10.0, positions=0)
    assert not isinstance(info.value, FluxlabError)


def test_machine_file_value_is_still_a_spec_error_naming_key_value_and_limit():
    raw = _demo_raw()
    raw["stator"]["airgap_mm"] = -1.0
    with pytest.raises(SpecError) as info:
        machine_from_dict(raw, GEOMETRIES)
    assert info.value.problems == ["stator.airgap_mm = -1.0: must be greater than 0"]


def test_envelope_settings_from_python_are_value_errors():
    from fluxlab.envelope import envelope_settings
    from fluxlab.spec.machine_file import load_machine

    with pytest.raises(ValueError, match="flux map points = 1") as info:
        envelope_settings(load_machine(DEMO), map_points=1)
    assert not isinstance(info.value, FluxlabError)


def test_unimportable_sweep_evaluator_is_a_value_error():
    from fluxlab.sweep.run import evaluator_reference

    with pytest.raises(ValueError, match="evaluator = .*importable") as info:
        evaluator_reference(lambda spec, studies: None)
    assert not isinstance(info.value, FluxlabError)


# ------------------------------------------------------------------------ sweep worker
def _task(evaluator, machine: dict | None = None) -> dict:
    return {"key": "k", "machine": machine or _demo_raw(), "base_dir": str(GEOMETRIES),
            "studies": "point", "evaluator": evaluator}


def _raises(err: Exception):
    def evaluator(spec, studies):
        raise err
    return evaluator


@pytest.mark.parametrize("err", [ValueError("positions = 0: a bug"), TypeError("bad call"),
                                 ConvergenceError("newton: not converged", [1.0, 0.5])],
                         ids=["ValueError", "TypeError", "ConvergenceError"])
def test_worker_files_everything_but_a_spec_error_as_failed(err):
    out = evaluate_task(_task(_raises(err)))
    assert out["status"] == "failed"
    assert out["message"] == f"{type(err).__name__}: {err}"


def test_worker_rejects_a_geometry_error_raised_during_evaluation():
    err = GeometryError("rotor.barriers[1].width_mm = 9: the barrier overlaps its neighbour")
    out = evaluate_task(_task(_raises(err)))
    assert out["status"] == "rejected"
    assert "rotor.barriers[1].width_mm = 9" in out["message"]


def test_worker_rejects_a_candidate_with_invalid_geometry():
    raw = copy.deepcopy(_demo_raw())
    raw["rotor"]["barriers"][0]["width_mm"] = 30.0  # crosses the air gap
    out = evaluate_task(_task(_raises(AssertionError("must not be reached")), raw))
    assert out["status"] == "rejected"
    assert "rotor.barriers[0].depth_mm = 8" in out["message"]


# ------------------------------------------------------------------------ command line
@pytest.mark.parametrize("args, message", [
    (["evaluate", str(DEMO), "--angle-step-deg", "0"],
     "--angle-step-deg, --inductance-points: angle_step_deg = 0.0: must be in (0, 45]"),
    (["envelope", str(DEMO), "--points", "1"], "flux map points = 1"),
    (["envelope", str(DEMO), "--max-current-A", "5"],
     "flux map max current 5.0 A: must be at least the current limit 50.0 A"),
    (["solve", str(DEMO), "--current-A", "nan"], "--current-A: nan must be a finite number"),
], ids=["evaluate-angle-step", "envelope-points", "envelope-max-current", "solve-current"])
def test_bad_option_value_is_one_line_and_exit_code_2(tmp_path, capsys, args, message):
    from fluxlab.cli import main

    assert main([*args, "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert message in err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert not (tmp_path / "out").exists()  # refused before any work


def test_command_line_does_not_turn_a_bug_into_a_message(monkeypatch):
    import fluxlab.cli.check as check
    from fluxlab.cli import main

    def bug(args):
        raise ValueError("a bug inside the library")

    monkeypatch.setattr(check, "run", bug)
    with pytest.raises(ValueError, match="a bug inside the library"):
        main(["check", str(DEMO)])
