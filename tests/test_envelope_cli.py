"""The envelope command and its writer; fuzzed [drive] sections of the machine file."""

import copy
import csv
import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fluxlab.cli import main
from fluxlab.envelope import (
    envelope_settings,
    flux_map_from_arrays,
    mtpa_trajectory,
    phase_resistance,
    rib_stress,
    torque_speed_envelope,
)
from fluxlab.envelope.efficiency import efficiency_map
from fluxlab.envelope.ironloss import IronLoss, RegionLoss
from fluxlab.envelope.study import (
    EnvelopeResult,
    _rated_point,
    _summary,
    efficiency_grid,
    loss_model,
)
from fluxlab.errors import SpecError
from fluxlab.machine.dq import power_factor
from fluxlab.report.envelope_files import write_envelope
from fluxlab.spec.machine_file import load_machine, machine_from_dict
from fluxlab.studies.operating_point import AveragedPoint, OperatingPoints

GEOMETRIES = Path(__file__).resolve().parents[1] / "geometries"
DEMO = GEOMETRIES / "demo_fan_drive.toml"


def _synthetic_result():
    """An envelope result of the demo spec with a linear synthetic map (no FEM)."""
    spec = load_machine(DEMO)
    s = envelope_settings(spec, map_points=5, speed_points=9)
    i = np.linspace(0, s.map_max_current_A, 5)
    d, q = np.meshgrid(i, i, indexing="ij")
    fmap = flux_map_from_arrays(i, i, 0.05 * d, 0.012 * q, spec.pole_pairs,
                                torque_Nm=1.5 * 2 * 0.038 * d * q)
    res = phase_resistance(spec)
    env = torque_speed_envelope(fmap, res.resistance_Ohm, s.current_limit_peak_A,
                                s.voltage_limit_peak_V, np.linspace(0, s.max_speed_rpm, 9))
    iron = IronLoss((RegionLoss("stator teeth", 6.0, 20.0, 6.0, 4.0),
                     RegionLoss("stator yoke", 12.0, 30.0, 9.0, 6.0),
                     RegionLoss("rotor", 11.0, 1.0, 0.5, 0.5)), 1500.0, 50.0, 25.0, 45.0, 48)
    ribs = rib_stress(spec, s.max_speed_rpm)
    current, gamma = spec.operating.current_peak_A, math.pi / 4
    i_d, i_q = current * math.cos(gamma), current * math.sin(gamma)
    psi_d, psi_q = 0.05 * i_d, 0.012 * i_q
    torque = 1.5 * spec.pole_pairs * (psi_d * i_q - psi_q * i_d)
    point = AveragedPoint(current, gamma, i_d, i_q, psi_d, psi_q, torque, torque,
                          power_factor(psi_d, psi_q, i_d, i_q), 1, 0)
    operating = OperatingPoints(point, {current: point})
    losses = loss_model(spec, fmap, point, res, iron, s.max_speed_rpm)
    rated = _rated_point(spec, point, iron, losses)
    summary = _summary(s, env, res, rated, ribs, fmap, operating)
    emap = efficiency_map(fmap, env, losses, *efficiency_grid(env, 12))
    return EnvelopeResult(spec, s, fmap, mtpa_trajectory(fmap), res, env, iron, rated, ribs,
                          operating, summary, {}, emap)


def test_writer_tables_have_units_and_figures_exist(tmp_path):
    result = _synthetic_result()
    written = write_envelope(result, tmp_path)
    names = {p.name for p in written}
    for stem in ("flux_map_contours", "flux_map_cross_saturation", "mtpa", "torque_speed",
                 "losses", "efficiency_map"):
        assert f"{stem}.png" in names and f"{stem}.svg" in names
    assert {"envelope.pdf", "envelope_summary.json", "torque_speed.csv"} <= names
    with (tmp_path / "torque_speed.csv").open() as f:
        rows = list(csv.DictReader(f))
    assert {"speed_rpm", "torque_Nm", "power_W", "voltage_peak_V", "region"} <= set(rows[0])
    assert rows[0]["region"] == "MTPA"
    with (tmp_path / "flux_map.csv").open() as f:
        rows = list(csv.DictReader(f))
    assert len(rows) == 25 and "Ldq_incremental_H" in rows[0] and "psi_d_Wb" in rows[0]
    # the inverse table of the linear map: id = psi_d / Ld wherever it is defined
    with (tmp_path / "flux_map_inverse.csv").open() as f:
        assert "left out" in f.readline()  # the header says what is missing
        inv = list(csv.DictReader(f))
    assert all(r["i_d_A"] != "nan" and r["i_q_A"] != "nan" for r in inv)  # no NaN rows
    assert inv and all(math.isclose(float(r["i_d_A"]), float(r["psi_d_Wb"]) / 0.05,
                                    rel_tol=1e-6, abs_tol=1e-9) for r in inv)
    with (tmp_path / "losses.csv").open() as f:
        copper = [r for r in csv.DictReader(f) if r["part"] == "copper"][0]
    assert 0 < float(copper["mass_kg"]) < 100
    with (tmp_path / "efficiency_map.csv").open() as f:
        assert "unreachable and left out" in f.readline()
        rows = list(csv.DictReader(f))
    assert rows and all(0 < float(r["efficiency"]) < 1 for r in rows)
    summary = json.loads((tmp_path / "envelope_summary.json").read_text())
    assert "does not replace a structural analysis" in summary["rib_caution"]
    assert (tmp_path / "envelope.pdf").read_bytes()[:4] == b"%PDF"


def test_command_reports_bad_drive_values(tmp_path, capsys):
    text = DEMO.read_text().replace("modulation_limit = 1.0", "modulation_limit = 1.5")
    machine = tmp_path / "bad.toml"
    machine.write_text(text)
    assert main(["envelope", str(machine), "--out", str(tmp_path / "o")]) == 1
    err = capsys.readouterr().err
    assert "drive.modulation_limit = 1.5: must be at most 1.0" in err


_DRIVE_BAD = {
    "dc_link_voltage_V": st.one_of(st.floats(max_value=0.0), st.text(max_size=3)),
    "modulation_limit": st.one_of(st.floats(min_value=1.0001, max_value=1e9),
                                  st.floats(max_value=0.0)),
    "max_speed_rpm": st.one_of(st.floats(max_value=0.0), st.just(float("nan"))),
    "flux_map_points": st.one_of(st.integers(max_value=1), st.integers(min_value=102),
                                 st.floats(allow_nan=False)),
    "flux_map_positions": st.one_of(st.integers(max_value=0), st.booleans()),
    "rib_safety_factor": st.floats(max_value=0.999, allow_nan=False),
    "copper_temperature_C": st.one_of(st.floats(min_value=250.01, allow_infinity=False),
                                      st.just(float("inf"))),
    "end_winding_length_mm": st.floats(max_value=0.0, allow_nan=False),
    "current_limit_peak_A": st.floats(max_value=0.0, allow_nan=False),
}


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(key=st.sampled_from(sorted(_DRIVE_BAD)), data=st.data())
def test_fuzzed_drive_values_name_key_and_value(key, data):
    # every bad value is reported with its key (and the file stays otherwise valid)
    value = data.draw(_DRIVE_BAD[key])
    raw = copy.deepcopy(load_machine(DEMO).raw)
    raw["drive"] = {key: value}
    with pytest.raises(SpecError) as err:
        machine_from_dict(raw, GEOMETRIES)
    assert any(f"drive.{key}" in p for p in err.value.problems)


def test_drive_section_is_optional_and_unknown_keys_are_named():
    raw = copy.deepcopy(load_machine(DEMO).raw)
    raw.pop("drive")
    spec = machine_from_dict(raw, GEOMETRIES)
    s = envelope_settings(spec)
    assert s.current_limit_peak_A == spec.operating.overload_current_peak_A
    assert s.max_speed_rpm == 2 * spec.operating.speed_rpm
    raw["drive"] = {"dc_link_V": 600.0}
    with pytest.raises(SpecError, match="drive.dc_link_V: unknown key"):
        machine_from_dict(raw, GEOMETRIES)
    raw["drive"] = {"flux_map_max_current_peak_A": 10.0}  # cross-checked after the keys
    with pytest.raises(SpecError, match=r"drive.flux_map_max_current_peak_A = 10.0: .*"
                                        r"current limit operating.overload_current_peak_A "
                                        r"= 50.0"):
        machine_from_dict(raw, GEOMETRIES)


@pytest.mark.slow
def test_envelope_command_end_to_end(tmp_path):
    text = DEMO.read_text().replace("size_mm = 3.0", "size_mm = 6.0")
    machine = tmp_path / "coarse.toml"
    machine.write_text(text)
    out = tmp_path / "out"
    code = main(["envelope", str(machine), "--out", str(out), "--points", "4",
                 "--loss-samples", "12", "--speed-points", "7", "--workers", "2"])
    assert code == 0
    summary = json.loads((out / "envelope_summary.json").read_text())
    assert summary["base_speed_rpm"] > 0 and summary["rated"]["iron_loss_W"] > 0
    assert 0.5 < summary["rated"]["efficiency"] < 1.0
    # the rotor is checked by the FEM peak, the mean estimate kept as a cross-check
    fem = summary["rotor_stress"]["top_speed"]
    assert fem["speed_rpm"] == summary["max_speed_rpm"]
    assert fem["von_mises_max_MPa"] >= summary["rib_max_stress_MPa"]
    assert (out / "stress.json").exists() and (out / "stress.png").exists()
