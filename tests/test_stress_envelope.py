"""The rotor stress in the envelope (top speed, overspeed) and in the sweep evaluator."""

import dataclasses
import json

import pytest
from paths import GEOMETRIES
from test_envelope_cli import _synthetic_result

from fluxlab.envelope.study import _rotor_stress, envelope_settings
from fluxlab.report.envelope_files import write_envelope
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.stress.evaluator import evaluate_with_stress
from fluxlab.stress.study import speed_checks

DEMO = GEOMETRIES / "demo_fan_drive.toml"


@pytest.fixture(scope="module")
def checked():
    spec = replace_path(load_machine(DEMO), "drive.overspeed_rpm", 3600.0)
    return _rotor_stress(spec, envelope_settings(spec))


def test_one_solve_serves_top_speed_and_overspeed(checked):
    stress, checks, warnings = checked
    top, over = checks["top_speed"], checks["overspeed"]
    assert (top["speed_rpm"], over["speed_rpm"]) == (3000.0, 3600.0)
    # linear elasticity under rho omega^2 r: the peak scales with the speed squared
    assert over["von_mises_max_MPa"] == pytest.approx(top["von_mises_max_MPa"] * 1.2**2)
    assert checks["allowed_MPa"] == pytest.approx(350.0 / 1.5)  # M400-50A yield / 1.5
    assert warnings == []  # about 84 MPa at 3600 rpm against 233 MPa allowed
    # a required factor above the one found warns, naming the speed
    _, too_strict = speed_checks(stress, {"top_speed": 3000.0, "overspeed": 3600.0}, 5.0)
    assert len(too_strict) == 1 and "3600 rpm (overspeed)" in too_strict[0]


def test_envelope_files_carry_the_stress(tmp_path, checked):
    result = _synthetic_result()
    stress, checks, warnings = checked
    summary = {**result.summary, "rotor_stress": checks}
    result = dataclasses.replace(result, summary=summary, stress=stress,
                                 stress_warnings=tuple(warnings))
    names = {p.name for p in write_envelope(result, tmp_path)}
    assert {"stress.json", "stress.png", "envelope.pdf"} <= names
    written = json.loads((tmp_path / "envelope_summary.json").read_text())
    assert written["rotor_stress"]["top_speed"]["von_mises_max_MPa"] >= written[
        "rib_max_stress_MPa"]


def test_sweep_evaluator_adds_the_safety_factor():
    spec = replace_path(load_machine(DEMO), "mesh.size_mm", 6.0)
    result = evaluate_with_stress(spec, studies="point")
    s = result.summary
    assert s["safety_factor"] == pytest.approx(350.0 / s["stress_von_mises_max_MPa"])
    assert s["stress_speed_rpm"] == 3000.0 and "torque_mean_Nm" in s
