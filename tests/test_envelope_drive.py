"""Torque-speed envelope, MTPA and inverse tables on synthetic flux maps (no FEM).

The synthetic machine is the ideal linear reluctance machine psi_d = Ld id, psi_q = Lq iq,
whose limits have closed forms; the references below are computed from those formulas,
not from fluxlab.
"""

import math

import numpy as np
import pytest

from fluxlab.envelope import (
    flux_map_from_arrays,
    incremental_inductances,
    inverse_tables,
    mtpa_trajectory,
    phase_voltage_limit,
    speed_at_voltage,
    torque_speed_envelope,
)
from fluxlab.envelope.drive import RPM
from fluxlab.errors import SpecError
from fluxlab.machine.dq import dq_voltage

LD, LQ, P = 0.05, 0.01, 2  # H, H, pole pairs: saliency 5
I_MAX = 40.0  # A peak
V_MAX = phase_voltage_limit(565.0, 1.0)


def _linear_map(points=5, i_max=I_MAX, ld=LD, lq=LQ, cross=0.0):
    i = np.linspace(0.0, i_max, points)
    d, q = np.meshgrid(i, i, indexing="ij")
    return flux_map_from_arrays(i, i, ld * d - cross * q, lq * q - cross * d, P)


def _reference_torque(omega_e):
    """Largest torque of the lossless linear machine at omega_e (closed form).

    Candidates (the maximum of T = 3/2 p (Ld - Lq) id iq over the disc |i| <= I and the
    ellipse (Ld id)^2 + (Lq iq)^2 <= (V/w)^2 lies at one of them): MTPA at 45 deg; the
    intersection of the current circle and the voltage ellipse; the maximum-torque-per-volt
    point Ld id = Lq iq = V / (w sqrt 2) (S. Morimoto et al., IEEE Trans. Ind. Appl. 26(5),
    1990, current-vector control under voltage and current limits; T. J. E. Miller,
    "Brushless Permanent-Magnet and Reluctance Motor Drives", Oxford 1989; from memory).
    """
    flux = V_MAX / omega_e
    k = 1.5 * P * (LD - LQ)
    best = 0.0
    i_d = i_q = I_MAX / math.sqrt(2)
    if math.hypot(LD * i_d, LQ * i_q) <= flux:
        best = max(best, k * i_d * i_q)
    id2 = (flux**2 - (LQ * I_MAX) ** 2) / (LD**2 - LQ**2)
    if 0 <= id2 <= I_MAX**2:
        best = max(best, k * math.sqrt(id2) * math.sqrt(I_MAX**2 - id2))
    i_d, i_q = flux / (math.sqrt(2) * LD), flux / (math.sqrt(2) * LQ)
    if math.hypot(i_d, i_q) <= I_MAX:
        best = max(best, k * i_d * i_q)
    return best


def test_voltage_limit_of_space_vector_modulation():
    # Holmes & Lipo 2003, ch. 3 (from memory): SVM reaches V_dc / sqrt(3) peak phase voltage
    # in its linear range; 565 V gives 326.2 V. Hand value: 565 / 1.7320508 = 326.20.
    assert phase_voltage_limit(565.0) == pytest.approx(326.20, abs=0.01)
    assert phase_voltage_limit(565.0, 0.9) == pytest.approx(0.9 * 326.20, abs=0.01)


def test_linear_mtpa_is_45_degrees():
    # Ideal reluctance machine: T ~ sin 2 gamma, maximal at 45 deg (I. Boldea, "Reluctance
    # Synchronous Machines and Drives", Oxford 1996, ch. 4; from memory). The spline
    # reproduces a plane exactly and the search ends at 1e-7 rad: 1e-4 deg is generous.
    traj = mtpa_trajectory(_linear_map(), [5.0, 20.0, 40.0])
    assert np.allclose(traj.current_angle_deg, 45.0, atol=1e-4)
    expected = 1.5 * P * (LD - LQ) * traj.current_peak_A**2 / 2  # id iq = I^2 / 2
    assert np.allclose(traj.torque_Nm, expected, rtol=1e-9)


def test_saturating_mtpa_matches_brute_force():
    # Fast against slow (pyamg style): a synthetic saturating d-axis psi_d = a atan(id / b)
    # on a 41-point grid; reference: torque from the closed-form fluxes on 90001 angles.
    # Tolerance 0.2 deg: interpolation of the 41-point grid (measured error ~0.01 deg).
    a, b = 0.9, 15.0
    i = np.linspace(0.0, I_MAX, 41)
    d, q = np.meshgrid(i, i, indexing="ij")
    fmap = flux_map_from_arrays(i, i, a * np.arctan(d / b), LQ * q, P)
    for current in (10.0, 25.0, 40.0):
        g = np.linspace(0, math.pi / 2, 90001)
        i_d, i_q = current * np.cos(g), current * np.sin(g)
        t = 1.5 * P * (a * np.arctan(i_d / b) * i_q - LQ * i_q * i_d)
        ref = math.degrees(g[np.argmax(t)])
        got = mtpa_trajectory(fmap, [current]).current_angle_deg[0]
        assert got == pytest.approx(ref, abs=0.2)
    assert ref > 50  # saturation of the d-axis moves MTPA well past 45 deg (sanity)


def test_base_speed_is_the_textbook_value():
    # omega_b = V / sqrt((Ld id)^2 + (Lq iq)^2) at the MTPA current id = iq = I/sqrt(2)
    # (T. J. E. Miller 1989, reluctance motor drives; Morimoto et al. 1990; from memory).
    # Issue tolerance 1 %; the computation is exact to rounding here (a plane, R = 0).
    env = torque_speed_envelope(_linear_map(), 0.0, I_MAX, V_MAX, [0.0, 3000.0])
    i = I_MAX / math.sqrt(2)
    omega_b = V_MAX / math.hypot(LD * i, LQ * i)
    assert env.base_speed_rpm == pytest.approx(omega_b / P / RPM, rel=1e-6)
    assert env.base_speed_rpm == pytest.approx(1079.93, rel=1e-5)  # hand value of the above


def test_envelope_follows_the_dq_limits_of_the_linear_machine():
    speeds = np.linspace(0.0, 6000.0, 25)
    env = torque_speed_envelope(_linear_map(), 0.0, I_MAX, V_MAX, speeds)
    assert np.all(env.voltage_peak_V <= V_MAX * (1 + 1e-12))  # the voltage limit holds
    assert np.all(env.current_peak_A <= I_MAX * (1 + 1e-12))  # and the current limit
    ref = np.array([_reference_torque(P * n * RPM) if n > 0 else 1.5 * P * (LD - LQ) * I_MAX**2 / 2
                    for n in env.speed_rpm])
    # bisection to 2^-45 and a 1e-9 rad angle search: 1e-5 relative is ample
    assert np.allclose(env.torque_Nm, ref, rtol=1e-5)
    assert np.allclose(env.power_W, env.torque_Nm * env.speed_rpm * RPM)
    # regions: MTPA up to base speed, then flux weakening, then MTPV once the MTPV
    # current V/(w sqrt 2) sqrt(1/Ld^2 + 1/Lq^2) drops below I_max (closed form)
    n_mtpv = V_MAX / math.sqrt(2) * math.hypot(1 / LD, 1 / LQ) / I_MAX / P / RPM
    for n, region in zip(env.speed_rpm, env.region, strict=True):
        if n < env.base_speed_rpm * 0.999:
            assert region == "MTPA"
        elif env.base_speed_rpm * 1.001 < n < n_mtpv * 0.999:
            assert region == "flux weakening"
        elif n > n_mtpv * 1.001:
            assert region == "MTPV"


def test_resistance_voltage_at_base_speed():
    # With R the base point must sit exactly on the limit: |v| from v_d = R id - w psi_q,
    # v_q = R iq + w psi_d computed here by hand at the returned speed (1e-9: rounding).
    r = 0.8
    i = I_MAX / math.sqrt(2)
    w = speed_at_voltage(LD * i, LQ * i, i, i, r, V_MAX)
    v = math.hypot(r * i - w * LQ * i, r * i + w * LD * i)
    assert v == pytest.approx(V_MAX, rel=1e-9)
    env = torque_speed_envelope(_linear_map(), r, I_MAX, V_MAX, [0.0, 1000.0, 3000.0])
    assert env.base_speed_rpm == pytest.approx(w / P / RPM, rel=1e-6)
    assert env.voltage_peak_V[0] == pytest.approx(r * I_MAX, rel=1e-9)  # standstill: R I
    vd, vq = dq_voltage(LD * env.i_d_A, LQ * env.i_q_A, env.i_d_A, env.i_q_A, r,
                        P * env.speed_rpm * RPM)
    assert np.allclose(np.hypot(vd, vq), env.voltage_peak_V, rtol=1e-9)


def test_incremental_inductances_and_inverse_of_a_linear_map():
    fmap = _linear_map(points=6)
    lk = incremental_inductances(fmap)
    assert np.allclose(lk["Ldd_incremental_H"], LD)
    assert np.allclose(lk["Lqq_incremental_H"], LQ)
    assert np.allclose(lk["Ldq_incremental_H"], 0.0)
    assert np.allclose(lk["Lqd_incremental_H"], 0.0)
    inv = inverse_tables(fmap, points=7)
    pd, pq = np.meshgrid(inv.psi_d_Wb, inv.psi_q_Wb, indexing="ij")
    assert np.all(np.isfinite(inv.i_d_A))  # the image of the square is the whole box
    # linear interpolation of a linear function: exact to rounding
    assert np.allclose(inv.i_d_A, pd / LD, atol=1e-9) and np.allclose(inv.i_q_A, pq / LQ,
                                                                      atol=1e-9)


def test_inverse_of_a_cross_coupled_map_marks_unreachable_fluxes():
    # psi = M i with a coupling term: the image of the current square is a parallelogram,
    # so corners of the flux box are unreachable (NaN); elsewhere i = M^-1 psi.
    c = 0.004
    fmap = _linear_map(points=9, cross=c)
    inv = inverse_tables(fmap, points=15)
    pd, pq = np.meshgrid(inv.psi_d_Wb, inv.psi_q_Wb, indexing="ij")
    m = np.array([[LD, -c], [-c, LQ]])
    ref = np.einsum("ij,jkl->ikl", np.linalg.inv(m), np.array([pd, pq]))
    inside = np.all((ref >= -1e-9) & (ref <= I_MAX + 1e-9), axis=0)
    ok = np.isfinite(inv.i_d_A)
    assert ok.sum() > 0.5 * ok.size and not ok.all()
    assert np.all(inside[ok])
    # within 0.5 % of the range from the true inverse (the round-trip check's own band)
    assert np.allclose(inv.i_d_A[ok], ref[0][ok], atol=0.005 * I_MAX)
    assert np.allclose(inv.i_q_A[ok], ref[1][ok], atol=0.005 * I_MAX)


@pytest.mark.parametrize("kwargs, word", [
    (dict(resistance_Ohm=-1.0), "resistance"),
    (dict(current_limit_peak_A=0.0), "current limit"),
    (dict(current_limit_peak_A=80.0), "current limit"),  # beyond the map
    (dict(voltage_limit_peak_V=math.nan), "voltage limit"),
    (dict(speeds_rpm=[0.0, -5.0]), "speeds_rpm"),
])
def test_bad_envelope_inputs_are_named(kwargs, word):
    args = dict(resistance_Ohm=0.0, current_limit_peak_A=I_MAX, voltage_limit_peak_V=V_MAX,
                speeds_rpm=[0.0, 100.0])
    args.update(kwargs)
    with pytest.raises(ValueError, match=word) as info:
        torque_speed_envelope(_linear_map(), **args)
    assert not isinstance(info.value, SpecError)  # an argument, not a file


@pytest.mark.parametrize("axis, table", [
    ([0.0, 2.0, 1.0], None), ([1.0, 2.0, 3.0], None), ([0.0, 1.0, 2.0], "nan")])
def test_bad_flux_map_arrays_are_named(axis, table):
    psi = np.zeros((3, 3)) if table is None else np.full((3, 3), np.nan)
    with pytest.raises(ValueError, match="flux map") as info:
        flux_map_from_arrays(axis, [0.0, 1.0, 2.0], psi, np.zeros((3, 3)), P)
    assert not isinstance(info.value, SpecError)  # an argument, not a file


@pytest.mark.parametrize("v_dc, m", [(0.0, 1.0), (-5.0, 1.0), (565.0, 1.2), (565.0, 0.0),
                                     (math.inf, 1.0)])
def test_bad_voltage_limit_inputs(v_dc, m):
    with pytest.raises(ValueError, match="dc_link_voltage_V|modulation_limit") as info:
        phase_voltage_limit(v_dc, m)
    assert not isinstance(info.value, SpecError)  # an argument, not a file
