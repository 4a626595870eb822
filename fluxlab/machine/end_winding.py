"""The end winding: its length per coil end and its leakage inductance.

Both are estimates from textbook formulas with the inputs taken from the winding and the
machine file; the 2-D field model has no end region, so the leakage inductance is added to
its flux linkages where the terminal quantities are formed (voltage, power factor, the
voltage-limited envelope), while the pure 2-D inductances are still reported apart.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from fluxlab.machine.winding import series_turns_per_phase, winding_layout
from fluxlab.spec.types import MachineSpec

__all__ = [
    "END_WINDING_PERMEANCE",
    "EndWindingLeakage",
    "coil_span",
    "end_winding_length",
    "end_winding_length_estimate",
    "end_winding_leakage",
]

MU0 = 4e-7 * math.pi  # H/m
PHASES = 3

#: Permeance factor lambda_w of the end winding (per unit length of end winding), a middle
#: value of those quoted for double-layer windings of low-voltage machines, about 0.2-0.4
#: (Pyrhonen, Jokinen, Hrabovcova, "Design of Rotating Electrical Machines", Wiley 2008,
#: section 4.3 on end-winding leakage; value from memory).
END_WINDING_PERMEANCE = 0.3


@dataclass(frozen=True)
class EndWindingLeakage:
    """End-winding leakage inductance of one phase and its inputs (SI units).

    ``inductance_H`` adds to Ld and Lq alike (a stator leakage, amplitude-invariant Park
    transform); ``given`` is True when the machine file sets it (``winding.end_leakage_mH``),
    then the other fields are the estimate's inputs for reference.
    """

    inductance_H: float
    given: bool
    series_turns: float
    slots_per_pole_phase: float
    end_length_m: float
    permeance: float


def coil_span(spec: MachineSpec) -> float:
    """Coil span W at the mid-slot diameter, m: y pi (D_bore + h_slot) / Q."""
    st = spec.stator
    mid_slot_diameter = st.bore_diameter + st.slot_depth
    return spec.winding.coil_pitch_slots * math.pi * mid_slot_diameter / st.slots


def end_winding_length_estimate(spec: MachineSpec) -> float:
    """End-winding length of one coil end, m: 1.2 W + 0.05 m.

    Half of the average turn's end-winding length 2.4 W + 0.1 m for low-voltage machines
    with round-wire coils, W the coil span at mid-slot (J. Pyrhonen, T. Jokinen,
    V. Hrabovcova, "Design of Rotating Electrical Machines", Wiley 2008, ch. 9 on the
    resistance of windings; formula from memory).
    """
    return 1.2 * coil_span(spec) + 0.05


def end_winding_length(spec: MachineSpec) -> float:
    """End-winding length of one coil end, m: ``drive.end_winding_length_mm`` or the estimate."""
    given = spec.drive.end_winding_length
    return end_winding_length_estimate(spec) if given is None else given


def end_winding_leakage(spec: MachineSpec) -> EndWindingLeakage:
    """End-winding leakage inductance of a phase, H.

    L_w = (4 m / Q) q N^2 mu0 l_w lambda_w (Pyrhonen, Jokinen, Hrabovcova, "Design of Rotating
    Electrical Machines", Wiley 2008, section 4.3, the end-winding leakage inductance; formula
    from memory), with m = 3 phases, Q slots, q slots per pole and phase, N series turns per
    phase (turns per coil x coils per phase / parallel paths), l_w the end-winding length of
    one coil end (:func:`end_winding_length`) and lambda_w = :data:`END_WINDING_PERMEANCE`.
    ``winding.end_leakage_mH`` in the machine file replaces the estimate.
    """
    w, st = spec.winding, spec.stator
    layout = winding_layout(st.slots, spec.poles, w.layers, w.coil_pitch_slots)
    turns = series_turns_per_phase(layout, w.turns_per_coil, w.parallel_paths)
    q = float(layout.slots_per_pole_phase)
    length = end_winding_length(spec)
    estimate = (4 * PHASES / st.slots) * q * turns**2 * MU0 * length * END_WINDING_PERMEANCE
    given = w.end_leakage_mH
    inductance = estimate if given is None else given * 1e-3
    return EndWindingLeakage(float(inductance), given is not None, float(turns), q, length,
                             END_WINDING_PERMEANCE)
