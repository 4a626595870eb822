"""Efficiency over the torque-speed plane under the drive's current and voltage limits.

At each (speed, torque) the drive takes the least current that gives the torque within the
voltage limit (MTPA below base speed, flux weakening above it), read from the flux maps
(terminal flux linkages, the end-winding leakage included). Losses at that point:

- copper: 3/2 R I^2 (R at the copper temperature of ``[drive]``);
- iron: the rated point's FEM iron loss per region and term, scaled to the point's
  frequency f and flux level b = |psi| / |psi_rated| (2-D flux linkages of the map) by the
  loss-separation model's own exponents, P_h f b^alpha, P_c f^2 b^2, P_e f^1.5 b^1.5
  (G. Bertotti, IEEE Trans. Magn. 24(1), 1988): every region's flux density taken to follow
  the air-gap flux linkage (common practice, no source; the harmonic content is kept);
- mechanical: ``[drive] mechanical_loss_at_max_speed_W`` times (n / n_max)^2, between
  bearing friction (~n) and windage (~n^3) (common practice, no source); 0 by default.

Efficiency (T w - P_mech) / (T w + P_cu + P_fe), T the electromagnetic torque. Points above
the envelope are unreachable and left out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.envelope.drive import Envelope
from fluxlab.envelope.fluxmap import FluxMap
from fluxlab.envelope.interp import FluxInterpolator
from fluxlab.envelope.ironloss import IronLoss, efficiency
from fluxlab.machine.dq import dq_torque, dq_voltage
from fluxlab.machine.resistance import copper_loss
from fluxlab.machine.terminal import RPM

__all__ = ["LossModel", "EfficiencyMap", "mechanical_loss", "iron_loss_scaled",
           "efficiency_map"]

_CURRENTS, _ANGLES = 400, 179  # samples of the polar grid (current, angle 0.5..89.5 deg)


@dataclass(frozen=True)
class LossModel:
    """What the losses at any point need (SI units).

    ``iron``: the rated point's iron loss (None: left out); ``psi_reference_Wb``: |psi| of
    the flux map at that point's current; ``alphas``: hysteresis exponent per iron region;
    ``mechanical_at_max_speed_W`` at ``max_speed_rpm``.
    """

    resistance_Ohm: float
    iron: IronLoss | None
    psi_reference_Wb: float
    alphas: dict
    mechanical_at_max_speed_W: float
    max_speed_rpm: float


def mechanical_loss(model: LossModel, speed_rpm):
    """Friction and windage, W: P_max (n / n_max)^2 (see the module text)."""
    return model.mechanical_at_max_speed_W * (np.asarray(speed_rpm) / model.max_speed_rpm) ** 2


def iron_loss_scaled(model: LossModel, frequency_Hz, psi_Wb):
    """Iron loss, W, at ``frequency_Hz`` and 2-D flux linkage magnitude ``psi_Wb`` (arrays)."""
    if model.iron is None:
        return np.zeros(np.broadcast(frequency_Hz, psi_Wb).shape)
    f = np.asarray(frequency_Hz) / model.iron.frequency_Hz
    b = np.asarray(psi_Wb) / model.psi_reference_Wb
    total = 0.0
    for r in model.iron.regions:
        alpha = model.alphas[r.name]
        total = total + r.hysteresis_W * f * b**alpha + r.eddy_W * (f * b) ** 2 \
            + r.excess_W * (f * b) ** 1.5
    return total


@dataclass(frozen=True, eq=False)
class EfficiencyMap:
    """Efficiency and losses on a (speed, torque) grid; NaN where the point is unreachable.

    Arrays ``[speed, torque]``; currents and voltages peak phase values; the envelope's
    speeds and torques are kept for the figure.
    """

    speed_rpm: np.ndarray
    torque_Nm: np.ndarray
    current_peak_A: np.ndarray
    current_angle_deg: np.ndarray
    voltage_peak_V: np.ndarray
    copper_loss_W: np.ndarray
    iron_loss_W: np.ndarray
    mechanical_loss_W: np.ndarray
    efficiency: np.ndarray
    envelope_speed_rpm: np.ndarray
    envelope_torque_Nm: np.ndarray
    iron_included: bool


def _polar_tables(interp: FluxInterpolator, current_limit: float):
    """Torque and flux linkages on rays: currents (n,), angles (m,), tables (n, m)."""
    currents = np.linspace(0.0, current_limit, _CURRENTS)
    angles = np.radians(np.linspace(0.5, 89.5, _ANGLES))
    c, g = np.meshgrid(currents, angles, indexing="ij")
    i_d, i_q = c * np.cos(g), c * np.sin(g)
    psi_d, psi_q = interp.psi_inside(i_d, i_q)
    torque = dq_torque(interp.fmap.pole_pairs, psi_d, psi_q, i_d, i_q)
    # the torque grows with the current along a ray; a flat spot must not break the inversion
    return currents, angles, np.maximum.accumulate(torque, axis=0), psi_d, psi_q


def _points_for_torque(tables, target: float):
    """Per ray: the current giving ``target`` N m and its terminal flux linkages (NaN if none)."""
    currents, angles, torque, psi_d, psi_q = tables
    out = np.full((3, angles.size), np.nan)
    for k in range(angles.size):
        if target <= torque[-1, k]:
            current = np.interp(target, torque[:, k], currents)
            out[:, k] = (current, np.interp(current, currents, psi_d[:, k]),
                         np.interp(current, currents, psi_q[:, k]))
    return out


def efficiency_map(fmap: FluxMap, env: Envelope, losses: LossModel,
                   speeds_rpm, torques_Nm) -> EfficiencyMap:
    """Efficiency and losses at every (speed, torque) of the grid (see the module text)."""
    speeds, torques = np.asarray(speeds_rpm, float), np.asarray(torques_Nm, float)
    interp = FluxInterpolator(fmap, env.end_leakage_H)
    tables = _polar_tables(interp, env.current_limit_peak_A)
    angles, p = tables[1], fmap.pole_pairs
    shape = (speeds.size, torques.size)
    cols = {name: np.full(shape, np.nan) for name in
            ("current", "angle", "voltage", "psi")}
    for j, target in enumerate(torques):
        current, psi_d, psi_q = _points_for_torque(tables, target)
        i_d, i_q = current * np.cos(angles), current * np.sin(angles)
        for i, n in enumerate(speeds):
            v_d, v_q = dq_voltage(psi_d, psi_q, i_d, i_q, env.resistance_Ohm, p * n * RPM)
            voltage = np.hypot(v_d, v_q)
            ok = np.isfinite(current) & (voltage <= env.voltage_limit_peak_V * (1 + 1e-9))
            if not ok.any():
                continue
            k = int(np.argmin(np.where(ok, current, np.inf)))
            leak = env.end_leakage_H  # the iron sees the 2-D flux linkage
            cols["current"][i, j], cols["angle"][i, j] = current[k], math.degrees(angles[k])
            cols["voltage"][i, j] = voltage[k]
            cols["psi"][i, j] = math.hypot(psi_d[k] - leak * i_d[k], psi_q[k] - leak * i_q[k])
    n_grid, t_grid = np.meshgrid(speeds, torques, indexing="ij")
    copper = copper_loss(env.resistance_Ohm, cols["current"])
    iron = np.where(np.isfinite(cols["psi"]),
                    iron_loss_scaled(losses, p * n_grid / 60.0, cols["psi"]), np.nan)
    mech = np.where(np.isfinite(copper), mechanical_loss(losses, n_grid), np.nan)
    power = t_grid * n_grid * RPM
    with np.errstate(invalid="ignore", divide="ignore"):
        eff = np.vectorize(efficiency)(power, copper, iron, mech)
    return EfficiencyMap(speeds, torques, cols["current"], cols["angle"], cols["voltage"],
                         copper, iron, mech, eff, env.speed_rpm, env.torque_Nm,
                         losses.iron is not None)
