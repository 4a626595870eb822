"""The dq relations of a three-phase machine: torque and power factor from flux linkages.

Amplitude-invariant Park transform; currents and flux linkages are peak phase values;
the current angle is measured from the d-axis.
"""

from __future__ import annotations

import math

__all__ = ["dq_torque", "dq_voltage", "power_factor"]


def dq_torque(pole_pairs: int, psi_d, psi_q, i_d, i_q):
    """T = 3/2 p (psi_d i_q - psi_q i_d), N m (scalars or arrays; Wb-turns and A).

    The 3/2 belongs to the amplitude-invariant transform (any machine-theory text; e.g.
    P. C. Krause et al., "Analysis of Electric Machinery and Drive Systems", ch. on
    reference-frame theory; from memory).
    """
    return 1.5 * pole_pairs * (psi_d * i_q - psi_q * i_d)


def dq_voltage(psi_d, psi_q, i_d, i_q, resistance: float, omega_e: float):
    """Steady-state (v_d, v_q), V peak: v_d = R i_d - w psi_q, v_q = R i_q + w psi_d.

    ``omega_e``: electrical angular speed, rad/s; ``resistance``: phase resistance, Ohm.
    """
    return resistance * i_d - omega_e * psi_q, resistance * i_q + omega_e * psi_d


def power_factor(psi_d: float, psi_q: float, i_d: float, i_q: float) -> float:
    """Displacement power factor with the resistance neglected.

    Steady state v_d = -omega psi_q, v_q = omega psi_d; the factor is the cosine of the angle
    between the voltage and current vectors.
    """
    v_angle = math.atan2(psi_d, -psi_q)
    i_angle = math.atan2(i_q, i_d)
    return math.cos(v_angle - i_angle)
