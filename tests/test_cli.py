"""The command line end to end, as a new user runs it (through main([...]))."""

import json
import re
from pathlib import Path

import pytest

from fluxlab.cli import main

GEOMETRIES = Path(__file__).resolve().parents[1] / "geometries"


@pytest.fixture(scope="module")
def coarse_machine(tmp_path_factory) -> Path:
    """The demo machine on a coarse mesh with few rotor steps, to keep the test fast."""
    text = (GEOMETRIES / "demo_fan_drive.toml").read_text()
    text = text.replace("size_mm = 3.0", "size_mm = 7.0").replace(
        "steps_per_slot = 12", "steps_per_slot = 4")
    path = tmp_path_factory.mktemp("machine") / "coarse.toml"
    path.write_text(text)
    return path


def test_check_prints_summary(capsys):
    assert main(["check", str(GEOMETRIES / "demo_fan_drive.toml")]) == 0
    out = capsys.readouterr().out
    assert "valid" in out and "36 slots" in out and "90 deg" in out


def test_check_reports_every_problem(tmp_path, capsys):
    text = (GEOMETRIES / "demo_fan_drive.toml").read_text()
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace("airgap_mm = 0.5", "airgap_mm = -0.5").replace(
        "turns_per_coil = 9", "turns_per_coil = 0"))
    assert main(["check", str(bad)]) == 1
    err = capsys.readouterr().err
    assert "stator.airgap_mm = -0.5" in err and "winding.turns_per_coil = 0" in err


def test_mesh_writes_mesh_and_picture(coarse_machine, tmp_path):
    assert main(["mesh", str(coarse_machine), "--out", str(tmp_path)]) == 0
    for name in ("mesh.vtu", "regions.json", "mesh.png", "mesh.svg"):
        assert (tmp_path / name).stat().st_size > 0
    import meshio

    mesh = meshio.read(tmp_path / "mesh.vtu")
    names = json.loads((tmp_path / "regions.json").read_text())["regions"]
    assert "rotor_iron" in names.values()
    assert len(mesh.cell_data["region"][0]) == len(mesh.cells[0].data)


def test_solve_writes_field_and_json(coarse_machine, tmp_path):
    args = ["solve", str(coarse_machine), "--current-A", "25", "--current-angle-deg", "60",
            "--position-deg", "0", "--out", str(tmp_path)]
    assert main(args) == 0
    record = json.loads((tmp_path / "solve.json").read_text())
    assert record["torque_maxwell_Nm"] > 0
    assert record["newton_relative_residuals"][-1] <= record["newton_rtol"] <= 1e-5
    assert (tmp_path / "field.png").stat().st_size > 0


@pytest.mark.slow  # a full (coarse) evaluation: about a minute
def test_evaluate_writes_every_output(coarse_machine, tmp_path):
    args = ["evaluate", str(coarse_machine), "--out", str(tmp_path), "--angle-step-deg", "30",
            "--angle-positions", "1", "--inductance-points", "2", "--workers", "2", "--full"]
    assert main(args) == 0
    summary = json.loads((tmp_path / "summary.json").read_text())
    for key in ("Ld_H", "Lq_H", "saliency_ratio", "torque_mean_Nm", "torque_ripple_pct",
                "mtpa_angle_deg", "power_factor", "current_peak_A", "current_angle_deg",
                "nodes", "solver", "fluxlab_version"):
        assert summary[key] is not None, key
    assert summary["saliency_ratio"] > 1
    for name in ("torque_vs_position", "torque_vs_current_angle", "inductance_vs_current"):
        assert (tmp_path / f"{name}.csv").read_text().splitlines()[0].count("_") >= 2
        assert (tmp_path / f"{name}.png").stat().st_size > 0
    for name in ("field_rated.png", "winding_layout.png", "review.pdf", "machine.toml"):
        assert (tmp_path / name).stat().st_size > 0
    # --full: the envelope files and a second page of the review sheet
    assert (tmp_path / "envelope").is_dir() and any((tmp_path / "envelope").glob("*.csv"))
    pages = re.findall(rb"/Type\s*/Page[^s]", (tmp_path / "review.pdf").read_bytes())
    assert len(pages) == 2


def test_missing_file_is_a_clear_error(tmp_path, capsys):
    assert main(["check", str(tmp_path / "nothing.toml")]) == 1
    assert "no such machine file" in capsys.readouterr().err
