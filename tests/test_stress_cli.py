"""``fluxlab stress``: the files it writes, and bad inputs as one-line errors."""

import json
import math
from argparse import Namespace

import pytest
from paths import GEOMETRIES

from fluxlab.cli import main
from fluxlab.cli.stress import speed_of
from fluxlab.spec.machine_file import load_machine

DEMO = GEOMETRIES / "demo_fan_drive.toml"
KEYS = {"speed_rpm", "von_mises_max_MPa", "tangential_ribs_max_MPa", "posts_max_MPa",
        "flux_guides_max_MPa", "around_bore_max_MPa", "density_kg_m3", "youngs_modulus_GPa",
        "poisson_ratio", "yield_strength_MPa", "safety_factor", "yield_speed_rpm",
        "radial_growth_max_mm", "radial_growth_airgap_share", "bore", "caution"}


def _error_line(capsys) -> str:
    err = capsys.readouterr().err.strip()
    assert "\n" not in err, err
    return err


def test_stress_writes_its_summary_and_figure(tmp_path, capsys):
    out = tmp_path / "run"
    assert main(["stress", str(DEMO), "--speed-rpm", "4000", "--out", str(out)]) == 0
    s = json.loads((out / "stress.json").read_text())
    assert set(s) == KEYS
    assert (out / "stress.png").stat().st_size > 50_000
    assert s["speed_rpm"] == 4000
    regions = [s[k] for k in KEYS if k.endswith("_max_MPa") and k != "von_mises_max_MPa"]
    assert max(regions) == pytest.approx(s["von_mises_max_MPa"])
    assert s["safety_factor"] == pytest.approx(s["yield_strength_MPa"] / s["von_mises_max_MPa"])
    # square law: the peak at the yield speed is the yield strength
    at_yield = s["von_mises_max_MPa"] * (s["yield_speed_rpm"] / 4000) ** 2
    assert at_yield == pytest.approx(s["yield_strength_MPa"])
    assert s["radial_growth_airgap_share"] == pytest.approx(s["radial_growth_max_mm"] / 0.5)
    assert "free" in s["bore"] and "overspeed test" in s["caution"]
    assert "qualified engineers" in capsys.readouterr().out


def test_negative_speed_is_one_line_naming_the_option(tmp_path, capsys):
    assert main(["stress", str(DEMO), "--speed-rpm", "-10", "--out", str(tmp_path)]) == 2
    assert "--speed-rpm: -10.0 must be at least 0" in _error_line(capsys)


def test_a_csv_steel_without_elastic_constants_is_named(tmp_path, capsys):
    curve = tmp_path / "curve.csv"
    h = [0, 100, 200, 500, 1000, 5000, 20000]
    b = [0, 0.8, 1.1, 1.35, 1.45, 1.65, 1.9]
    curve.write_text("\n".join(f"{x},{y}" for x, y in zip(h, b)))
    text = DEMO.read_text().replace(
        'rotor = "M400-50A"',
        'rotor = { bh_csv = "curve.csv", yield_strength_MPa = 300.0, poisson_ratio = 0.3 }')
    machine = tmp_path / "m.toml"
    machine.write_text(text)
    assert main(["stress", str(machine), "--out", str(tmp_path / "o")]) == 1
    line = _error_line(capsys)
    assert "materials.rotor.youngs_modulus_GPa" in line
    assert "poisson_ratio" not in line and "yield" not in line


def _with_fillet(tmp_path, fillet_mm: float):
    """The demo with ``rotor.rib_fillet_mm`` set, written to a file in ``tmp_path``."""
    machine = tmp_path / "m.toml"
    machine.write_text(DEMO.read_text().replace(
        "min_steel_mm = 2.0", f"min_steel_mm = 2.0\nrib_fillet_mm = {fillet_mm}"))
    return machine


def test_a_fillet_too_large_is_one_line_naming_the_key(tmp_path, capsys):
    machine = _with_fillet(tmp_path, 2.0)
    assert main(["stress", str(machine), "--out", str(tmp_path / "o")]) == 1
    assert "rotor.rib_fillet_mm = 2: too large for rotor.barriers[0]" in _error_line(capsys)


def test_sharp_corners_are_refused_for_a_stress_run(tmp_path, capsys):
    # a re-entrant corner has no finite elastic peak (Williams' corner singularity)
    machine = _with_fillet(tmp_path, 0.0)
    assert main(["stress", str(machine), "--out", str(tmp_path / "o")]) == 1
    assert "rotor.rib_fillet_mm = 0: sharp barrier corners" in _error_line(capsys)


def test_no_speed_means_the_drive_top_speed():
    spec = load_machine(DEMO)
    assert math.isclose(speed_of(Namespace(speed_rpm=None), spec), 3000.0)  # drive.max_speed
    assert speed_of(Namespace(speed_rpm=10.0), spec) == 10.0
