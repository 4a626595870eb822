"""Torque-speed and power-speed envelope under the inverter's current and voltage limits.

Steady state in the rotor (dq) frame, amplitude-invariant Park transform, peak values:
v_d = R i_d - omega_e psi_q, v_q = R i_q + omega_e psi_d, omega_e = p omega_m. At each speed
the envelope is the largest torque over the currents with |i| <= I_max and |v| <= V_max:
maximum torque per ampere below base speed (current limit only), flux weakening above it
(both limits), maximum torque per volt where the voltage limit alone binds.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.envelope.fluxmap import FluxMap
from fluxlab.envelope.interp import FluxInterpolator
from fluxlab.envelope.mtpa import mtpa_point
from fluxlab.machine.dq import dq_torque, dq_voltage
from fluxlab.machine.terminal import RPM

__all__ = [
    "Envelope",
    "phase_voltage_limit",
    "speed_at_voltage",
    "max_torque_point",
    "torque_speed_envelope",
]

log = logging.getLogger(__name__)

_ACTIVE = 1e-3  # a limit counts as binding within 0.1 % of it


def phase_voltage_limit(dc_link_voltage_V: float, modulation_limit: float = 1.0) -> float:
    """Largest peak phase voltage, V: m V_dc / sqrt(3) for space-vector modulation.

    m = 1 is the end of the linear range of space-vector (or third-harmonic injection)
    modulation (D. G. Holmes, T. A. Lipo, "Pulse Width Modulation for Power Converters",
    IEEE Press / Wiley 2003, ch. 3; chapter from memory).
    """
    if not (math.isfinite(dc_link_voltage_V) and dc_link_voltage_V > 0):
        raise ValueError(f"dc_link_voltage_V = {dc_link_voltage_V!r}: must be > 0")
    if not (math.isfinite(modulation_limit) and 0 < modulation_limit <= 1):
        raise ValueError(f"modulation_limit = {modulation_limit!r}: must be in (0, 1]")
    return modulation_limit * dc_link_voltage_V / math.sqrt(3)


def speed_at_voltage(psi_d: float, psi_q: float, i_d: float, i_q: float,
                     resistance: float, voltage: float) -> float:
    """Electrical speed, rad/s, at which a fixed dq operating point reaches ``voltage`` (peak).

    |v|^2 = (R id - w psi_q)^2 + (R iq + w psi_d)^2 = V^2 is a quadratic in w; its positive
    root. Returns 0 when R |i| alone exceeds V.
    """
    a = psi_d**2 + psi_q**2
    b = 2 * resistance * (i_q * psi_d - i_d * psi_q)
    c = resistance**2 * (i_d**2 + i_q**2) - voltage**2
    if c > 0 or a == 0:
        return 0.0 if c > 0 else math.inf
    return (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)


def _ray_current(interp, resistance, omega_e, i_max, v_max, angles, iterations=45):
    """Largest current amplitude within both limits along each ray of ``angles``, peak A.

    Along a ray of fixed current angle |v| grows with the current amplitude (flux linkage
    rises with current); bisection on [0, I_max] finds where it reaches V_max.
    """
    cos, sin = np.cos(angles), np.sin(angles)

    def within(current):
        psi_d, psi_q = interp.psi_inside(current * cos, current * sin)
        v_d, v_q = dq_voltage(psi_d, psi_q, current * cos, current * sin, resistance, omega_e)
        return v_d**2 + v_q**2 <= v_max**2

    lo, hi = np.zeros_like(angles), np.full_like(angles, i_max)
    done = within(hi)
    lo[done] = i_max
    for _ in range(iterations):  # 2^-45 of I_max: exact to rounding
        mid = 0.5 * (lo + hi)
        ok = within(mid)
        lo, hi = np.where(ok, mid, lo), np.where(ok, hi, mid)
    return lo


def max_torque_point(interp: FluxInterpolator, resistance: float, omega_e: float,
                     current_limit: float, voltage_limit: float,
                     samples: int = 91) -> tuple[float, float]:
    """(i_d, i_q), peak A, of the largest torque with |i| <= I_max and |v| <= V_max.

    Torque grows with the current amplitude along any ray 0 < gamma < 90 deg, so the best
    point of each ray is its largest feasible current (:func:`_ray_current`); the best ray
    is found on ``samples`` angles and refined by a bounded scalar search (Brent, scipy
    ``minimize_scalar``) within a grid step either side. Every point returned satisfies
    both limits (the bisection keeps the feasible end).
    """
    from scipy.optimize import minimize_scalar

    p = interp.fmap.pole_pairs

    def torque(angles):
        current = _ray_current(interp, resistance, omega_e, current_limit, voltage_limit,
                               angles)
        i_d, i_q = current * np.cos(angles), current * np.sin(angles)
        psi_d, psi_q = interp.psi_inside(i_d, i_q)
        return dq_torque(p, psi_d, psi_q, i_d, i_q), current

    gamma = np.linspace(0.0, math.pi / 2, samples)
    values, _ = torque(gamma)
    k = int(np.argmax(values))
    h = gamma[1] - gamma[0]
    res = minimize_scalar(lambda g: -float(torque(np.array([g]))[0][0]),
                          bounds=(max(0.0, gamma[k] - h), min(math.pi / 2, gamma[k] + h)),
                          method="bounded", options={"xatol": 1e-9})
    best = float(res.x) if -res.fun >= values[k] else float(gamma[k])
    current = float(torque(np.array([best]))[1][0])
    return current * math.cos(best), current * math.sin(best)


@dataclass(frozen=True, eq=False)
class Envelope:
    """The torque-speed envelope, per speed (arrays) and its key figures.

    Currents and voltages are peak phase values; ``current_angle_deg`` from the d-axis;
    ``region``: ``"MTPA"`` (current limit only), ``"flux weakening"`` (current and voltage
    limits), ``"MTPV"`` (voltage limit only, maximum torque per volt) or ``"none"``.
    ``base_speed_rpm``: where the MTPA point at the current limit reaches the voltage limit.
    ``end_leakage_H``: the end-winding leakage inductance included in the voltages.
    """

    speed_rpm: np.ndarray
    torque_Nm: np.ndarray
    power_W: np.ndarray
    i_d_A: np.ndarray
    i_q_A: np.ndarray
    current_peak_A: np.ndarray
    current_angle_deg: np.ndarray
    voltage_peak_V: np.ndarray
    power_factor: np.ndarray
    region: tuple[str, ...]
    base_speed_rpm: float
    base_torque_Nm: float
    current_limit_peak_A: float
    voltage_limit_peak_V: float
    resistance_Ohm: float
    end_leakage_H: float = 0.0

    @property
    def power_at_max_speed_W(self) -> float:
        """Mechanical power at the highest speed of the sweep, W."""
        return float(self.power_W[-1])


def _region(current, voltage, i_max, v_max) -> str:
    on_i, on_v = current >= i_max * (1 - _ACTIVE), voltage >= v_max * (1 - _ACTIVE)
    if on_i and on_v:
        return "flux weakening"
    return "MTPV" if on_v else ("MTPA" if on_i else "none")


def torque_speed_envelope(
    fmap: FluxMap,
    resistance_Ohm: float,
    current_limit_peak_A: float,
    voltage_limit_peak_V: float,
    speeds_rpm: Sequence[float],
    end_leakage_H: float = 0.0,
) -> Envelope:
    """Largest torque at each speed (rpm) under a peak-current and a peak-voltage limit.

    ``fmap`` must cover the current limit (its grid reaches ``current_limit_peak_A`` on both
    axes); the base speed is added to the speeds when it lies inside their range.
    ``end_leakage_H``: the end-winding leakage inductance, added to the map's flux linkages
    for the voltages (:class:`FluxInterpolator`); it leaves the torque unchanged.
    """
    problems = []
    if not (math.isfinite(current_limit_peak_A) and 0 < current_limit_peak_A <= fmap.max_current_A
            * (1 + 1e-9)):
        problems.append(f"current limit = {current_limit_peak_A!r} A: must be > 0 and within the "
                        f"flux map's {fmap.max_current_A:.4g} A")
    if not (math.isfinite(voltage_limit_peak_V) and voltage_limit_peak_V > 0):
        problems.append(f"voltage limit = {voltage_limit_peak_V!r} V: must be > 0")
    if not (math.isfinite(resistance_Ohm) and resistance_Ohm >= 0):
        problems.append(f"resistance = {resistance_Ohm!r} Ohm: must be >= 0")
    speeds = np.asarray(speeds_rpm, dtype=float)
    if speeds.ndim != 1 or speeds.size < 1 or not np.all(np.isfinite(speeds) & (speeds >= 0)):
        problems.append(f"speeds_rpm = {speeds_rpm!r}: must be finite values >= 0")
    if problems:
        raise ValueError("; ".join(problems))
    interp, p = FluxInterpolator(fmap, end_leakage_H), fmap.pole_pairs
    gamma = mtpa_point(interp, current_limit_peak_A)
    i_d, i_q = current_limit_peak_A * math.cos(gamma), current_limit_peak_A * math.sin(gamma)
    psi_d, psi_q = (float(x) for x in interp.psi(i_d, i_q))
    base = speed_at_voltage(psi_d, psi_q, i_d, i_q, resistance_Ohm, voltage_limit_peak_V) / p / RPM
    if base == 0:
        log.warning("the voltage limit %.4g V is below R I_max: no speed is reachable",
                    voltage_limit_peak_V)
    if speeds.min() < base < speeds.max():
        speeds = np.unique(np.append(speeds, base))
    rows = []
    for n in speeds:
        omega_e = p * n * RPM
        x, y = max_torque_point(interp, resistance_Ohm, omega_e, current_limit_peak_A,
                                voltage_limit_peak_V)
        pd, pq = (float(v) for v in interp.psi(x, y))
        vd, vq = dq_voltage(pd, pq, x, y, resistance_Ohm, omega_e)
        torque = dq_torque(p, pd, pq, x, y)
        pf = math.cos(math.atan2(vq, vd) - math.atan2(y, x)) if math.hypot(x, y) else math.nan
        rows.append((torque, torque * n * RPM, x, y, math.hypot(x, y),
                     math.degrees(math.atan2(y, x)), math.hypot(vd, vq), pf))
    cols = [np.array(c) for c in zip(*rows, strict=True)]
    regions = tuple(_region(c, v, current_limit_peak_A, voltage_limit_peak_V)
                    for c, v in zip(cols[4], cols[6], strict=True))
    return Envelope(speeds, *cols, regions, float(base),
                    dq_torque(p, psi_d, psi_q, i_d, i_q), float(current_limit_peak_A),
                    float(voltage_limit_peak_V), float(resistance_Ohm), interp.end_leakage_H)
