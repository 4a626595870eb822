"""The dq relations of a three-phase machine: torque and power factor from flux linkages.

Amplitude-invariant Park transform; currents and flux linkages are peak phase values;
the current angle is measured from the d-axis.
"""

from __future__ import annotations

import math

__all__ = ["dq_torque", "power_factor"]


def dq_torque(pole_pairs: int, psi_d, psi_q, i_d, i_q):
    """T = 3/2 p (psi_d i_q - psi_q i_d), N m (scalars or arrays; Wb-turns and A).

    The 3/2 belongs to the amplitude-invariant transform (any machine-theory text; e.g.
    P. C. Krause et al., "Analysis of Electric Machinery and Drive Systems", ch. on
    reference-frame theory; from memory).
    """
    return 1.5 * pole_pairs * (psi_d * i_q - psi_q * i_d)


def power_factor(psi_d: float, psi_q: float, i_d: float, i_q: float) -> float:
    """Displacement power factor with the resistance neglected.

    Steady state v_d = -omega psi_q, v_q = omega psi_d; the factor is the cosine of the angle
    between the voltage and current vectors.
    """
    v_angle = math.atan2(psi_d, -psi_q)
    i_angle = math.atan2(i_q, i_d)
    return math.cos(v_angle - i_angle)
