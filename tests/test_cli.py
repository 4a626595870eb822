"""The command line end to end, as a new user runs it (through main([...]))."""

import json
import re
from pathlib import Path

import numpy as np
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


def test_solve_ripple_at_any_current_and_angle(coarse_machine, tmp_path):
    args = ["solve", str(coarse_machine), "--current-A", "40", "--current-angle-deg", "65",
            "--ripple", "--out", str(tmp_path)]
    assert main(args) == 0
    record = json.loads((tmp_path / "solve.json").read_text())
    table = np.genfromtxt(tmp_path / "torque_vs_position.csv", delimiter=",", names=True)
    torque = table["torque_Nm"]
    # 4 steps per slot pitch over the torque period of 3 slot pitches (36 slots, 4 poles)
    assert len(torque) == record["ripple_positions"] == 12
    assert record["torque_ripple_pct"] == pytest.approx(
        100 * (torque.max() - torque.min()) / torque.mean(), rel=1e-6)
    # the harmonics with their phases give the samples back (inverse of the series the
    # file's first line states): theta_e = p * position
    lines = (tmp_path / "torque_harmonics.csv").read_text().splitlines()
    assert lines[0].startswith("# torque = mean + sum of amplitude_Nm * cos(")
    h = np.genfromtxt(lines[1:], delimiter=",", names=True)
    theta_e = 2 * np.radians(table["position_deg"])
    rebuilt = torque.mean() + sum(
        a * np.cos(k * theta_e + np.radians(phi))
        for k, a, phi in zip(h["order_per_electrical_period"], h["amplitude_Nm"], h["phase_deg"]))
    assert rebuilt == pytest.approx(torque, abs=1e-6 * torque.mean())
    for name in ("torque_vs_position.png", "torque_harmonics.png", "field.png"):
        assert (tmp_path / name).stat().st_size > 0


@pytest.mark.slow  # a full (coarse) evaluation: about a minute
def test_evaluate_writes_every_output(coarse_machine, tmp_path):
    args = ["evaluate", str(coarse_machine), "--out", str(tmp_path), "--angle-step-deg", "30",
            "--positions", "2", "--inductance-points", "2", "--workers", "2", "--full"]
    assert main(args) == 0
    summary = json.loads((tmp_path / "summary.json").read_text())
    for key in ("Ld_apparent_H", "Lq_apparent_H", "saliency_apparent", "Ld_one_axis_H",
                "Lq_one_axis_H", "saliency_one_axis", "torque_mean_Nm", "torque_ripple_pct",
                "mtpa_angle_deg", "power_factor", "current_peak_A", "current_angle_deg",
                "nodes", "solver", "fluxlab_version", "averaging", "flux_density"):
        assert summary[key] is not None, key
    assert summary["saliency_apparent"] > 1 and summary["averaging"]["positions"] == 2
    # one rated torque and one MTPA per current, the same in evaluate and in the envelope
    envelope = json.loads((tmp_path / "envelope" / "envelope_summary.json").read_text())
    assert envelope["rated"]["torque_Nm"] == pytest.approx(summary["torque_mean_Nm"], rel=5e-3)
    mtpa = {round(m["current_peak_A"], 6): m for m in envelope["mtpa"]}
    for prefix, current in (("", summary["current_peak_A"]),
                            ("overload_", summary["overload_current_peak_A"])):
        assert mtpa[current]["current_angle_deg"] == pytest.approx(
            summary[f"{prefix}mtpa_angle_deg"], abs=0.5)
        assert mtpa[current]["torque_Nm"] == pytest.approx(
            summary[f"{prefix}mtpa_torque_Nm"], rel=5e-3)
    harmonics = (tmp_path / "torque_harmonics.csv").read_text().splitlines()
    assert harmonics[0].startswith("# torque = mean") and "phase_deg" in harmonics[1]
    for name in ("torque_vs_position", "torque_vs_current_angle", "inductance_vs_current"):
        assert (tmp_path / f"{name}.csv").read_text().splitlines()[0].count("_") >= 2
        assert (tmp_path / f"{name}.png").stat().st_size > 0
    for name in ("field_rated.png", "winding_layout.png", "review.pdf", "machine.toml"):
        assert (tmp_path / name).stat().st_size > 0
    # ripple at the overload MTPA: its table recomputes the summary's peak to peak
    overload = np.genfromtxt(tmp_path / "torque_vs_position_overload.csv", delimiter=",",
                             names=True)["torque_Nm"]
    assert summary["overload_torque_ripple_pct"] == pytest.approx(
        100 * (overload.max() - overload.min()) / overload.mean(), rel=1e-6)
    assert overload.mean() > 1.5 * summary["torque_maxwell_mean_Nm"]  # 50 A against 25 A
    for name in ("torque_harmonics_overload.csv", "torque_harmonics.png",
                 "torque_vs_position_overload.png"):
        assert (tmp_path / name).stat().st_size > 0
    # --full: the envelope files; the sheet's pages: key figures, ripple, envelope
    assert (tmp_path / "envelope").is_dir() and any((tmp_path / "envelope").glob("*.csv"))
    # the rated point's terminal figures and, with --full, its losses and efficiency
    assert summary["efficiency"] == pytest.approx(envelope["rated"]["efficiency"], rel=1e-12)
    assert summary["iron_loss_W"] > 0 and summary["terminal_voltage_peak_V"] > 0
    assert summary["copper_loss_W"] == pytest.approx(envelope["rated"]["copper_loss_W"])
    assert (tmp_path / "envelope" / "efficiency_map.csv").stat().st_size > 0
    pages = re.findall(rb"/Type\s*/Page[^s]", (tmp_path / "review.pdf").read_bytes())
    assert len(pages) == 3


def test_missing_file_is_a_clear_error(tmp_path, capsys):
    assert main(["check", str(tmp_path / "nothing.toml")]) == 1
    assert "no such machine file" in capsys.readouterr().err


def test_csv_writer_numbers_text_and_comment(tmp_path):
    from fluxlab.report.tables import write_csv

    grid = np.array([[0.1, 2.0], [1 / 3, 12345678901.0]])
    path = write_csv(tmp_path / "t.csv", {"x_mm": grid, "part": ["a", "b,c", "d", None]},
                     comment="x in mm")
    assert path.read_text().splitlines() == [
        "# x in mm", "x_mm,part", "0.1,a", "2,\"b,c\"", "0.3333333333,d", "1.23456789e+10,"]
    exact = write_csv(tmp_path / "e.csv", {"v": [1 / 3, 7]}, exact=True)
    assert exact.read_text().splitlines()[1:] == [repr(1 / 3), "7"]
    with pytest.raises(ValueError):
        write_csv(tmp_path / "bad.csv", {"a": [1, 2], "b": [1]})


def test_figures_are_saved_in_each_format_and_closed(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from fluxlab.report.figures import save_figure

    fig, ax = plt.subplots()
    ax.plot([0, 1], [1, 0])
    paths = save_figure(fig, tmp_path, "line", ("png", "svg"))
    assert paths == [tmp_path / "line.png", tmp_path / "line.svg"]
    assert paths[0].read_bytes()[:4] == b"\x89PNG" and b"<svg" in paths[1].read_bytes()
    assert not plt.fignum_exists(fig.number)
