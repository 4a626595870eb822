"""Flux maps from the FEM on the demo geometry (coarse mesh, small grids).

Linear cases replace both steels with a constant relative permeability; the saturable case
keeps the demo's M400-50A.
"""

import math

import numpy as np
import pytest
from paths import DEMO

from fluxlab.envelope import flux_map, incremental_inductances, mtpa_trajectory
from fluxlab.envelope.ironloss import sweep_steps
from fluxlab.machine.model import build_model
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.studies.curves import inductance_curves
from fluxlab.studies.operating_point import solve_point

LINEAR_STEEL = {"linear_mu_r": 2000.0}


def _coarse():
    return replace_path(load_machine(DEMO), "mesh.size_mm", 6.0)


@pytest.fixture(scope="module")
def linear_model():
    spec = replace_path(_coarse(), "materials.stator", LINEAR_STEEL)
    return build_model(replace_path(spec, "materials.rotor", LINEAR_STEEL))


@pytest.fixture(scope="module")
def saturable_model():
    return build_model(_coarse())


@pytest.fixture(scope="module")
def linear_map(linear_model):
    return flux_map(linear_model, [0.0, 10.0, 20.0], [0.0, 10.0, 20.0])


def test_linear_maps_are_planes_without_cross_saturation(linear_map):
    # Linear steel: psi_d = Ld id, psi_q = Lq iq (superposition), and at rotor position zero
    # the d-axis is a mirror axis of rotor and winding, so iq links no d-axis flux (common
    # practice, no source). Issue tolerance 0.5 %; measured about 0.003 % (mesh asymmetry).
    f = linear_map
    ld, lq = f.psi_d_Wb[-1, 0] / f.i_d_A[-1], f.psi_q_Wb[0, -1] / f.i_q_A[-1]
    d, q = np.meshgrid(f.i_d_A, f.i_q_A, indexing="ij")
    assert np.abs(f.psi_d_Wb - ld * d).max() < 0.005 * np.abs(f.psi_d_Wb).max()
    assert np.abs(f.psi_q_Wb - lq * q).max() < 0.005 * np.abs(f.psi_q_Wb).max()
    lk = incremental_inductances(f)
    assert np.abs(lk["Ldq_incremental_H"]).max() < 0.005 * ld
    assert np.abs(lk["Lqd_incremental_H"]).max() < 0.005 * lq


def test_linear_mtpa_is_the_45_degree_line(linear_map):
    # T = 3/2 p (Ld - Lq) id iq: maximal at 45 deg for any current (Boldea 1996, ch. 4,
    # from memory). 0.1 deg: the planes above hold to ~3e-5, which moves MTPA ~0.01 deg.
    traj = mtpa_trajectory(linear_map, [5.0, 10.0, 20.0])
    assert np.allclose(traj.current_angle_deg, 45.0, atol=0.1)


@pytest.fixture(scope="module")
def saturable_map(saturable_model):
    return flux_map(saturable_model, [0.0, 25.0, 50.0], [0.0, 25.0, 50.0])


def test_saturable_d_axis_matches_the_inductance_curve(saturable_model, saturable_map):
    # The evaluation's Ld curve (studies.inductance_curves, warm-started along the current)
    # and the map's iq = 0 column (warm-started along rows) solve the same points at the same
    # averaging positions: they agree to the Newton tolerance; 1e-5 relative leaves room.
    f = saturable_map
    curves = inductance_curves(saturable_model, f.i_d_A[1:])
    assert np.allclose(f.psi_d_Wb[1:, 0], curves.psi_d_Wb, rtol=1e-5)
    assert np.allclose(f.psi_q_Wb[0, 1:], curves.psi_q_Wb, rtol=1e-5)


def test_cross_saturation_has_the_expected_sign(saturable_map):
    # Cross-saturation: q-axis current saturates the iron shared with the d-axis flux, so
    # psi_d falls with iq, and psi_q falls with id (common practice, no source). Asked: a
    # fall of more than 1 % at 50 A (measured about 4.5 % and 25 %), far above solver noise.
    f = saturable_map
    assert f.psi_d_Wb[-1, -1] < 0.99 * f.psi_d_Wb[-1, 0]
    assert f.psi_q_Wb[-1, -1] < 0.99 * f.psi_q_Wb[0, -1]
    lk = incremental_inductances(f)
    assert lk["Ldq_incremental_H"][1, 1] < 0 and lk["Lqd_incremental_H"][1, 1] < 0


def test_map_torque_agrees_with_maxwell_torque(saturable_model):
    # Energy consistency: the mean over a torque period of the Maxwell-stress torque (Arkkio
    # 1987) equals 3/2 p (psi_d iq - psi_q id) of the mean flux linkages (co-energy
    # balance over a period; DEVELOPERS.md, Averaging). Tolerance 2 % (measured ~0.7 % with 4
    # positions, the rest is the position sampling of the ripple).
    f = flux_map(saturable_model, [0.0, 25.0], [0.0, 25.0], positions=4)
    assert f.positions == 4
    t, t_dq = f.torque_Nm[1, 1], f.torque_dq_Nm[1, 1]
    assert abs(t_dq - t) < 0.02 * abs(t)
    # pure id or pure iq: no mean torque (within the same 2 % of the loaded point)
    assert abs(f.torque_Nm[1, 0]) < 0.02 * t and abs(f.torque_Nm[0, 1]) < 0.02 * t


def test_position_sweep_half_wave_symmetry(saturable_model):
    # The iron-loss sweep solves half an electrical period: half a period later the stator
    # field is reversed and the rotor field (rotor frame) repeats (derivation in
    # ironloss.sweep_steps). Checked here by solving both ends; 1e-5 of the peak |B| is
    # the Newton tolerance's reach.
    model = saturable_model
    steps, half = sweep_steps(model, 8)
    assert half and len(steps) == 4
    period = round(2 * math.pi / model.spec.pole_pairs / model.step_angle)
    gamma = math.radians(60.0)
    b0 = solve_point(model, 25.0, gamma, int(steps[1])).solution.b
    b1 = solve_point(model, 25.0, gamma, int(steps[1]) + period // 2).solution.b
    rotor = model.mesh.rotor_element
    scale = np.abs(b0).max()
    assert np.abs(b1[~rotor] + b0[~rotor]).max() < 1e-5 * scale
    assert np.abs(b1[rotor] - b0[rotor]).max() < 1e-5 * scale


@pytest.mark.slow
def test_parallel_rows_equal_serial_rows(linear_model, linear_map):
    # Rows in two spawned worker processes: the same solves, so the same numbers.
    par = flux_map(linear_model, linear_map.i_d_A, linear_map.i_q_A, workers=2)
    assert np.allclose(par.psi_d_Wb, linear_map.psi_d_Wb, rtol=1e-9, atol=1e-12)
    assert np.allclose(par.psi_q_Wb, linear_map.psi_q_Wb, rtol=1e-9, atol=1e-12)
