"""Maximum torque per ampere: the current angle of largest torque at each current amplitude."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.envelope.fluxmap import FluxMap
from fluxlab.envelope.interp import FluxInterpolator
from fluxlab.machine.dq import dq_torque
from fluxlab.studies.operating_point import peak_angle

__all__ = ["MTPATrajectory", "mtpa_point", "mtpa_trajectory", "with_engine_points"]


@dataclass(frozen=True, eq=False)
class MTPATrajectory:
    """The MTPA trajectory: per current amplitude (peak phase A) the best angle and torque.

    ``current_angle_deg`` from the d-axis; ``torque_Nm`` = 3/2 p (psi_d iq - psi_q id)
    of the interpolated maps, or, where ``from_engine`` is True, of the operating-point
    engine's own MTPA search (:func:`with_engine_points`).
    """

    current_peak_A: np.ndarray
    current_angle_deg: np.ndarray
    torque_Nm: np.ndarray
    i_d_A: np.ndarray
    i_q_A: np.ndarray
    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    from_engine: np.ndarray | None = None


def with_engine_points(traj: MTPATrajectory, points) -> MTPATrajectory:
    """The trajectory with the engine's MTPA points (current, peak A -> AveragedPoint) in
    place of, or added to, the interpolated ones: where both exist the engine's are the
    figures (a flat torque peak is ill-conditioned in angle, and the maps only interpolate).
    """
    rows = {round(float(c), 9): (c, a, t, d, q, pd, pq, False) for c, a, t, d, q, pd, pq in zip(
        traj.current_peak_A, traj.current_angle_deg, traj.torque_Nm, traj.i_d_A, traj.i_q_A,
        traj.psi_d_Wb, traj.psi_q_Wb)}
    for current, pt in points.items():
        rows[round(float(current), 9)] = (current, pt.current_angle_deg, pt.torque_Nm, pt.i_d,
                                          pt.i_q, pt.psi_d, pt.psi_q, True)
    cols = [np.array(c) for c in zip(*(rows[k] for k in sorted(rows)))]
    return MTPATrajectory(*cols[:7], from_engine=cols[7].astype(bool))


def mtpa_point(interp: FluxInterpolator, current: float, samples: int = 181) -> float:
    """MTPA current angle, rad in [0, pi/2], at one current amplitude (peak A).

    The torque of the interpolated maps on a grid of ``samples`` angles, then the maximiser
    of the FEM studies (:func:`fluxlab.studies.operating_point.peak_angle`) to 1e-7 rad.
    """
    if current <= 0:
        return math.pi / 4  # undefined at zero current: the linear machine's value

    def torque(gamma: float) -> float:
        return float(interp.torque(current * math.cos(gamma), current * math.sin(gamma)))

    known = {float(g): torque(g) for g in np.linspace(0.0, math.pi / 2, samples)}
    angle = peak_angle(torque, known, 1e-7)
    return max(known, key=known.get) if angle is None else angle


def mtpa_trajectory(fmap: FluxMap, currents: Sequence[float] | None = None) -> MTPATrajectory:
    """MTPA trajectory of a flux map at ``currents`` (peak A; default 21 up to the grid's)."""
    interp = FluxInterpolator(fmap)
    currents = (np.linspace(0.0, fmap.max_current_A, 21) if currents is None
                else np.asarray(currents, dtype=float))
    gamma = np.array([mtpa_point(interp, float(c)) for c in currents])
    i_d, i_q = currents * np.cos(gamma), currents * np.sin(gamma)
    psi_d, psi_q = interp.psi(i_d, i_q)
    torque = dq_torque(fmap.pole_pairs, psi_d, psi_q, i_d, i_q)
    return MTPATrajectory(currents, np.degrees(gamma), torque, i_d, i_q, psi_d, psi_q)
