"""End-winding leakage: the estimate against a hand calculation of its formula for the demo,
the override key, and its place in the voltages (envelope, terminal figures)."""

import copy
import math

import numpy as np
import pytest
from paths import DEMO

from fluxlab.envelope import flux_map_from_arrays, phase_voltage_limit, torque_speed_envelope
from fluxlab.errors import SpecError
from fluxlab.machine.end_winding import end_winding_leakage
from fluxlab.machine.resistance import phase_resistance
from fluxlab.machine.terminal import terminal_figures
from fluxlab.spec.machine_file import load_machine, machine_from_dict

MU0 = 4e-7 * math.pi


def test_demo_end_leakage_against_hand_calculation():
    # L_w = (4 m / Q) q N^2 mu0 l_w lambda_w (Pyrhonen, Jokinen, Hrabovcova, "Design of
    # Rotating Electrical Machines", Wiley 2008, sec. 4.3; from memory), by hand from the
    # demo file: Q = 36 slots, 4 poles, m = 3 -> q = 36 / (4 * 3) = 3; double layer: 36
    # coils, 12 per phase, 9 turns each, one path -> N = 108. Coil span at mid-slot:
    # y = 8 slots, D = 136 + 20 = 156 mm -> W = 8 pi 0.156 / 36 = 0.10891 m; end winding of
    # one coil end l_w = 1.2 W + 0.05 = 0.18069 m; lambda_w = 0.3.
    W = 8 * math.pi * 0.156 / 36
    l_w = 1.2 * W + 0.05
    hand = (4 * 3 / 36) * 3 * 108**2 * MU0 * l_w * 0.3
    assert W == pytest.approx(0.108909, rel=1e-5)
    assert hand == pytest.approx(0.7945e-3, rel=1e-3)  # the figures above, rounded
    leak = end_winding_leakage(load_machine(DEMO))
    assert not leak.given
    assert leak.series_turns == 108 and leak.slots_per_pole_phase == 3
    assert leak.inductance_H == pytest.approx(hand, rel=1e-12)


def test_end_leakage_override_and_its_check():
    raw = copy.deepcopy(load_machine(DEMO).raw)
    raw["winding"]["end_leakage_mH"] = 1.5
    assert end_winding_leakage(machine_from_dict(raw)).inductance_H == pytest.approx(1.5e-3)
    raw["winding"]["end_leakage_mH"] = -1.0
    with pytest.raises(SpecError, match="winding.end_leakage_mH"):
        machine_from_dict(raw)


def test_envelope_with_end_leakage_is_the_map_with_larger_inductances():
    # A stator leakage L adds to Ld and Lq alike (amplitude-invariant Park transform): the
    # envelope of a linear map with L_w included must equal that of the map (Ld + L, Lq + L),
    # torque and voltage, while the torque at a current does not change.
    ld, lq, leak, p, i_max = 0.05, 0.01, 0.002, 2, 40.0
    i = np.linspace(0.0, i_max, 5)
    d, q = np.meshgrid(i, i, indexing="ij")
    v_max = phase_voltage_limit(565.0)
    speeds = np.linspace(0.0, 5000.0, 11)
    with_leak = torque_speed_envelope(flux_map_from_arrays(i, i, ld * d, lq * q, p), 0.2,
                                      i_max, v_max, speeds, end_leakage_H=leak)
    larger = torque_speed_envelope(flux_map_from_arrays(i, i, (ld + leak) * d, (lq + leak) * q,
                                                        p), 0.2, i_max, v_max, speeds)
    assert with_leak.base_speed_rpm == pytest.approx(larger.base_speed_rpm, rel=1e-9)
    assert np.allclose(with_leak.torque_Nm, larger.torque_Nm, rtol=1e-6)
    assert np.allclose(with_leak.voltage_peak_V, larger.voltage_peak_V, rtol=1e-6)
    # base speed by hand: MTPA at 45 deg (torque unchanged by L), R = 0.2 Ohm
    i45 = i_max / math.sqrt(2)
    a = ((ld + leak) * i45) ** 2 + ((lq + leak) * i45) ** 2
    b = 2 * 0.2 * (i45 * (ld + leak) * i45 - i45 * (lq + leak) * i45)
    c = (0.2 * i_max) ** 2 - v_max**2
    omega = (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)
    assert with_leak.base_speed_rpm == pytest.approx(omega / p / (2 * math.pi / 60), rel=1e-9)


def test_terminal_figures_by_hand():
    spec = load_machine(DEMO)
    psi_d, psi_q, i_d, i_q = 0.9, 0.25, 12.5, 21.65
    leak = end_winding_leakage(spec).inductance_H
    r = phase_resistance(spec).resistance_Ohm
    out = terminal_figures(spec, psi_d, psi_q, i_d, i_q, 40.0, 1500.0)
    w = 2 * 1500 / 60 * 2 * math.pi  # 2 pole pairs
    v_d = r * i_d - w * (psi_q + leak * i_q)
    v_q = r * i_q + w * (psi_d + leak * i_d)
    assert out["terminal_voltage_peak_V"] == pytest.approx(math.hypot(v_d, v_q), rel=1e-12)
    assert out["Lq_with_end_leakage_H"] == pytest.approx(psi_q / i_q + leak, rel=1e-12)
    phi = math.atan2(psi_d + leak * i_d, -(psi_q + leak * i_q)) - math.atan2(i_q, i_d)
    assert out["power_factor"] == pytest.approx(math.cos(phi), rel=1e-12)
    assert out["power_factor"] < out["power_factor_2d"]  # leakage lowers it
    assert out["copper_loss_W"] == pytest.approx(1.5 * r * (i_d**2 + i_q**2), rel=1e-12)
    assert out["power_W"] == pytest.approx(40.0 * 1500 * 2 * math.pi / 60, rel=1e-12)
