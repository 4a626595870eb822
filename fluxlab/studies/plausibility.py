"""Plausibility warnings for a solved operating point: figures far beyond what a machine
carries or beyond the material data.

A warning does not stop anything: the solve is valid mathematics, but its numbers likely
come from a mistyped current or winding. The command line prints the warnings and writes
them under ``warnings`` in summary.json and solve.json.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["MAX_CONDUCTOR_J_RMS_A_MM2", "MAX_PLAUSIBLE_B_T", "conductor_current_density",
           "point_warnings"]

# Common practice, no source: continuous duty of air-cooled machines rarely exceeds
# 10 A/mm^2 rms in the conductor, short overloads a few times that; 50 A/mm^2 is far past both.
MAX_CONDUCTOR_J_RMS_A_MM2 = 50.0
# Common practice, no source: laminated steels saturate near 2 T; past the B-H table's last
# point the solver holds the polarization J at its last value (H = (B - J_last)/mu0, a
# mu0 slope), so a field above 3 T and above the table end rests on that extrapolation only.
MAX_PLAUSIBLE_B_T = 3.0


def conductor_current_density(model, current_peak_A: float) -> float:
    """RMS current density in the conductors of the most loaded coil side, A/mm^2.

    A coil side of ``turns_per_coil`` turns in ``parallel_paths`` paths fills the slot area
    of its layer (the model's conductor weight is turns / (side area * paths), 1/m^2); the
    copper is ``winding.fill_factor`` of that area, so the conductor density is the slot
    density divided by the fill factor. Peak phase current to rms: divided by sqrt(2).
    """
    weight = float(np.abs(model.conductor_weight).max())  # 1/m^2
    fill = model.spec.winding.fill_factor
    return weight * abs(current_peak_A) / math.sqrt(2.0) / fill * 1e-6


def _table_end_T(spec) -> float:
    """The highest last B of the machine's nonlinear B-H tables (0 if all are linear)."""
    ends = [float(m.b_table[-1]) for m in spec.materials.values()
            if getattr(m, "kind", "") == "nonlinear" and len(m.b_table)]
    return max(ends, default=0.0)


def point_warnings(model, current_peak_A: float, b_peak_T: float) -> list[str]:
    """Warnings for a point solved at ``current_peak_A`` (peak phase A) with the largest
    element flux density ``b_peak_T``; an empty list when nothing is implausible."""
    out = []
    j = conductor_current_density(model, current_peak_A)
    if j > MAX_CONDUCTOR_J_RMS_A_MM2:
        out.append(
            f"conductor current density {j:.0f} A/mm² rms at {current_peak_A:g} A peak "
            f"(winding.turns_per_coil, parallel_paths, fill_factor and the slot area) is above "
            f"{MAX_CONDUCTOR_J_RMS_A_MM2:g} A/mm²; continuous duty rarely exceeds 10 A/mm² "
            "(common practice, no source): check the current and the winding")
    end = _table_end_T(model.spec)
    if b_peak_T > max(MAX_PLAUSIBLE_B_T, end):
        out.append(
            f"peak flux density {b_peak_T:.2f} T is above {MAX_PLAUSIBLE_B_T:g} T and the B-H "
            f"table's last point ({end:.2f} T); beyond it the curve is extrapolated with slope "
            "mu0, so the field there rests on that extrapolation, not on material data")
    return out
