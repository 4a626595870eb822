"""Efficiency map: the rated point against the envelope's rated efficiency, copper loss
against 3/2 R I^2 by hand, the iron-loss and mechanical-loss scalings by hand."""

import copy
import math

import numpy as np
import pytest
from paths import DEMO

from fluxlab.envelope import envelope_settings, flux_map_from_arrays, torque_speed_envelope
from fluxlab.envelope.efficiency import efficiency_map, iron_loss_scaled, mechanical_loss
from fluxlab.envelope.ironloss import IronLoss, RegionLoss
from fluxlab.envelope.study import _rated_point, loss_model
from fluxlab.machine.dq import power_factor
from fluxlab.machine.end_winding import end_winding_leakage
from fluxlab.machine.resistance import phase_resistance
from fluxlab.spec.machine_file import load_machine, machine_from_dict
from fluxlab.studies.operating_point import AveragedPoint

LD, LQ = 0.05, 0.012  # H: a linear synthetic map on the demo machine


def _parts(mechanical_W=0.0):
    raw = copy.deepcopy(load_machine(DEMO).raw)
    raw["drive"]["mechanical_loss_at_max_speed_W"] = mechanical_W
    spec = machine_from_dict(raw)
    s = envelope_settings(spec, map_points=9, speed_points=31)
    i = np.linspace(0, s.map_max_current_A, 9)
    d, q = np.meshgrid(i, i, indexing="ij")
    fmap = flux_map_from_arrays(i, i, LD * d, LQ * q, spec.pole_pairs)
    res = phase_resistance(spec)
    env = torque_speed_envelope(fmap, res.resistance_Ohm, s.current_limit_peak_A,
                                s.voltage_limit_peak_V, np.linspace(0, s.max_speed_rpm, 31),
                                end_winding_leakage(spec).inductance_H)
    iron = IronLoss((RegionLoss("stator teeth", 6.0, 20.0, 6.0, 4.0),
                     RegionLoss("stator yoke", 12.0, 30.0, 9.0, 6.0),
                     RegionLoss("rotor", 11.0, 1.0, 0.5, 0.5)), 1500.0, 50.0, 25.0, 45.0, 48)
    current, gamma = spec.operating.current_peak_A, math.pi / 4  # the linear map's MTPA
    i_d, i_q = current * math.cos(gamma), current * math.sin(gamma)
    psi_d, psi_q = LD * i_d, LQ * i_q
    torque = 1.5 * spec.pole_pairs * (psi_d * i_q - psi_q * i_d)
    point = AveragedPoint(current, gamma, i_d, i_q, psi_d, psi_q, torque, torque,
                          power_factor(psi_d, psi_q, i_d, i_q), 1, 0)
    losses = loss_model(spec, fmap, point, res, iron, s.max_speed_rpm)
    return spec, fmap, env, losses, _rated_point(spec, point, iron, losses), res


@pytest.mark.parametrize("mechanical_W", [0.0, 120.0])
def test_rated_point_of_the_map_is_the_envelope_rated_efficiency(mechanical_W):
    spec, fmap, env, losses, rated, _ = _parts(mechanical_W)
    emap = efficiency_map(fmap, env, losses, [rated["speed_rpm"]], [rated["torque_Nm"]])
    # issue tolerance 0.1 %; the map finds the rated current again on a 0.5 deg angle grid
    assert emap.efficiency[0, 0] == pytest.approx(rated["efficiency"], rel=1e-3)
    assert emap.copper_loss_W[0, 0] == pytest.approx(rated["copper_loss_W"], rel=1e-3)
    assert emap.iron_loss_W[0, 0] == pytest.approx(rated["iron_loss_W"], rel=1e-3)
    assert rated["mechanical_loss_W"] == pytest.approx(mechanical_W * (1500 / 3000) ** 2)


def test_copper_loss_is_three_halves_R_I_squared_by_hand():
    spec, fmap, env, losses, _, res = _parts()
    # below base speed the least current for T is the MTPA of the linear machine: 45 deg,
    # T = 3/2 p (Ld - Lq) I^2 / 2 (T. J. E. Miller, "Brushless Permanent-Magnet and
    # Reluctance Motor Drives", Oxford 1989; from memory)
    torque, p = 30.0, spec.pole_pairs
    current = math.sqrt(2 * torque / (1.5 * p * (LD - LQ)))
    emap = efficiency_map(fmap, env, losses, [300.0], [torque])
    assert emap.current_angle_deg[0, 0] == pytest.approx(45.0, abs=0.26)
    assert emap.current_peak_A[0, 0] == pytest.approx(current, rel=1e-4)
    assert emap.copper_loss_W[0, 0] == pytest.approx(1.5 * res.resistance_Ohm * current**2,
                                                     rel=2e-4)


def test_iron_and_mechanical_scaling_by_hand():
    _, _, _, losses, _, _ = _parts(200.0)
    # twice the frequency at the same flux: P_h x 2, P_c x 4, P_e x 2^1.5 (Bertotti 1988)
    hand = (20 + 30 + 1) * 2 + (6 + 9 + 0.5) * 4 + (4 + 6 + 0.5) * 2**1.5
    assert iron_loss_scaled(losses, 100.0, losses.psi_reference_Wb) == pytest.approx(hand)
    # half the flux at the same frequency: P_h x 0.5^alpha (M400-50A's alpha), P_c x 0.25 ...
    alpha = losses.alphas["stator teeth"]
    hand = (20 + 30 + 1) * 0.5**alpha + (6 + 9 + 0.5) * 0.25 + (4 + 6 + 0.5) * 0.5**1.5
    assert iron_loss_scaled(losses, 50.0, 0.5 * losses.psi_reference_Wb) == pytest.approx(hand)
    assert mechanical_loss(losses, 1500.0) == pytest.approx(50.0)  # 200 W x (1/2)^2


def test_unreachable_points_are_nan_and_reachable_ones_keep_the_limits():
    _, fmap, env, losses, _, _ = _parts()
    speeds = np.linspace(100, env.speed_rpm.max(), 12)
    torques = np.linspace(1, 1.2 * env.torque_Nm.max(), 12)
    emap = efficiency_map(fmap, env, losses, speeds, torques)
    top = np.interp(speeds, env.speed_rpm, env.torque_Nm)
    above = torques[None, :] > top[:, None] * 1.01
    assert np.all(np.isnan(emap.efficiency[above]))
    ok = np.isfinite(emap.efficiency)
    assert ok.sum() > 50
    assert np.all(emap.voltage_peak_V[ok] <= env.voltage_limit_peak_V * (1 + 1e-9))
    assert np.all(emap.current_peak_A[ok] <= env.current_limit_peak_A * (1 + 1e-9))
    assert np.all((emap.efficiency[ok] > 0) & (emap.efficiency[ok] < 1))


def _saturating(i_d, i_q):
    """A saturating dq machine (invented): psi_d = 1.2 tanh(id / 20), psi_q = 0.012 iq."""
    return 1.2 * np.tanh(np.asarray(i_d) / 20.0), 0.012 * np.asarray(i_q)


@pytest.mark.parametrize("points, coarse", [(2, True), (17, False)])
def test_a_coarse_flux_map_is_flagged(points, coarse):
    from fluxlab.envelope.study import grid_warnings
    from fluxlab.studies.operating_point import OperatingPoints

    i = np.linspace(0, 50.0, points)
    d, q = np.meshgrid(i, i, indexing="ij")
    fmap = flux_map_from_arrays(i, i, *_saturating(d, q), 2)
    current, gamma = 25.0, math.radians(60)
    i_d, i_q = current * math.cos(gamma), current * math.sin(gamma)
    psi_d, psi_q = (float(x) for x in _saturating(i_d, i_q))
    torque = 1.5 * 2 * (psi_d * i_q - psi_q * i_d)
    point = AveragedPoint(current, gamma, i_d, i_q, psi_d, psi_q, torque, torque,
                          power_factor(psi_d, psi_q, i_d, i_q), 1, 0)
    warnings = grid_warnings(fmap, OperatingPoints(point, {current: point}))
    assert bool(warnings) == coarse
    if coarse:
        assert "too coarse (2 points per axis)" in warnings[0] and "--points" in warnings[0]
