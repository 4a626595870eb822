"""Terminal figures of an operating point: voltage, power factor, power, copper loss.

From an averaged point's flux linkages (no further field solve) and cheap formulas: the
phase resistance (:mod:`fluxlab.machine.resistance`) and the end-winding leakage
(:mod:`fluxlab.machine.end_winding`), which the 2-D flux linkages leave out and which is added
as L_w i to both (terminal flux linkages). Peak phase voltages and currents.
"""

from __future__ import annotations

import math

from fluxlab.machine.dq import dq_voltage, power_factor
from fluxlab.machine.end_winding import end_winding_leakage
from fluxlab.machine.resistance import (
    copper_loss,
    copper_mass,
    current_density_rms,
    phase_resistance,
)
from fluxlab.spec.types import MachineSpec

__all__ = ["RPM", "terminal_flux_linkage", "terminal_figures"]

RPM = 2 * math.pi / 60  # rad/s per rpm


def terminal_flux_linkage(psi_d, psi_q, i_d, i_q, end_leakage_H: float):
    """(psi_d + L_w i_d, psi_q + L_w i_q), Wb: the 2-D flux linkages with the end winding's."""
    return psi_d + end_leakage_H * i_d, psi_q + end_leakage_H * i_q


def terminal_figures(spec: MachineSpec, psi_d: float, psi_q: float, i_d: float, i_q: float,
                     torque_Nm: float, speed_rpm: float) -> dict:
    """Terminal figures of a dq point (2-D flux linkages, Wb; currents, peak A) at a speed.

    Returns a JSON-able dict: the end-winding leakage and Ld, Lq with it; the peak phase
    voltage with resistance and end leakage; the power factor with end leakage (R
    neglected) and without (pure 2-D); the mechanical power; the phase resistance, copper
    loss, copper mass and current density (rms) at the copper temperature of ``[drive]``.
    """
    leak = end_winding_leakage(spec)
    res = phase_resistance(spec)
    td, tq = terminal_flux_linkage(psi_d, psi_q, i_d, i_q, leak.inductance_H)
    omega_e = spec.pole_pairs * speed_rpm * RPM
    v_d, v_q = dq_voltage(td, tq, i_d, i_q, res.resistance_Ohm, omega_e)
    current = math.hypot(i_d, i_q)
    return {
        "end_leakage_H": leak.inductance_H,
        "end_leakage_source": ("machine file (winding.end_leakage_mH)" if leak.given else
                               "estimate L_w = (4 m/Q) q N^2 mu0 l_w lambda_w, "
                               f"l_w = {leak.end_length_m:.4g} m, lambda_w = {leak.permeance:g}"),
        "Ld_with_end_leakage_H": td / i_d if abs(i_d) > 1e-12 else math.nan,
        "Lq_with_end_leakage_H": tq / i_q if abs(i_q) > 1e-12 else math.nan,
        "power_factor": power_factor(td, tq, i_d, i_q),
        "power_factor_2d": power_factor(psi_d, psi_q, i_d, i_q),
        "speed_rpm": speed_rpm,
        "terminal_voltage_peak_V": math.hypot(v_d, v_q),
        "power_W": torque_Nm * speed_rpm * RPM,
        "phase_resistance_Ohm": res.resistance_Ohm,
        "copper_temperature_C": res.temperature_C,
        "copper_loss_W": copper_loss(res.resistance_Ohm, current),
        "copper_mass_kg": copper_mass(res),
        "current_density_rms_A_per_mm2": current_density_rms(res, current) * 1e-6,
    }
