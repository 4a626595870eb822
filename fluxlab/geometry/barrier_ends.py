"""Barrier ends placed at the rotor slot pitch (``rotor.rotor_slots_per_pole_pair``).

The rule (published; cited from memory): A. Vagati et al., "Design of low-torque-ripple
synchronous reluctance motors", IEEE Trans. Ind. Appl., 1998. The ends of the barriers of
a transverse-laminated rotor act as equivalent rotor slots, equally spaced at the rotor
slot pitch alpha_r = 360 / (p n_r) mechanical degrees (p pole pairs, n_r equivalent rotor
slots per pole pair); the torque ripple is low when n_r differs from the stator's slots
per pole pair Q/p by about 4. fluxlab places the ends by n_r and prints Q/p - n_r
(``fluxlab check``); it does not judge the difference.

Placement: counted from the d-axis, so that the d-axis lies midway between the two ends
that flank it, the ends sit at (k + 1/2) alpha_r, k = 0, 1, ... The innermost barrier (the
last, nearest the d-axis) takes k = 0, the next one outwards k = 1, and so on; the q-axis
is tau/2 = 90 / p degrees from the d-axis (tau the pole pitch), so barrier i of m (0 the
outermost) has its end at tau/2 - (m - 1 - i + 1/2) alpha_r from the q-axis, the angle
``end_angle_deg`` gives otherwise. Positions left over fall around the q-axis, unused.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from fluxlab.spec.types import BarrierSpec

__all__ = [
    "SLOTS_KEY",
    "least_rotor_slots",
    "mixing_problems",
    "resolve_end_angles",
    "slot_pitch",
    "slot_pitch_end_angles",
    "slot_pitch_problems",
    "tag_end_angle_problems",
]

#: The machine-file key of n_r.
SLOTS_KEY = "rotor.rotor_slots_per_pole_pair"


def slot_pitch(pole_pairs: int, n_r: int) -> float:
    """alpha_r = 2 pi / (p n_r), rad mechanical."""
    return 2 * math.pi / (pole_pairs * n_r)


def slot_pitch_end_angles(pole_pairs: int, n_r: int, count: int) -> tuple[float, ...]:
    """End angles, rad from the q-axis, of ``count`` barriers, barrier 0 (outermost) first.

    Barrier i sits at tau/2 - (count - 1 - i + 1/2) alpha_r (see the module's docstring);
    a value <= 0 means n_r is too small for ``count`` barriers (:func:`slot_pitch_problems`).
    """
    alpha, half_pole = slot_pitch(pole_pairs, n_r), math.pi / (2 * pole_pairs)
    return tuple(half_pole - (count - 1 - i + 0.5) * alpha for i in range(count))


def least_rotor_slots(count: int) -> int:
    """Least n_r that places ``count`` barrier ends strictly between the d- and q-axis.

    The outermost end (k = count - 1) must stay below tau/2: (count - 1/2) 360 / (p n_r)
    < 90 / p, that is n_r > 4 count - 2, whatever the pole count.
    """
    return 4 * count - 1


def slot_pitch_problems(poles: int, n_r: int, count: int) -> list[str]:
    """Why ``n_r`` cannot place ``count`` barriers' ends on a rotor of ``poles`` poles."""
    head = f"{SLOTS_KEY} = {n_r}"
    if count == 0:
        return [f"{head}: a round rotor (no rotor.barriers) has no barrier ends to place; "
                "leave the key out"]
    p = poles // 2
    angles = slot_pitch_end_angles(p, n_r, count)
    if angles[0] > 0:
        return []
    alpha = math.degrees(slot_pitch(p, n_r))
    fit = sum(a > 0 for a in angles)
    return [
        f"{head}: too few rotor slots for {count} barriers (machine.poles = {poles}); the "
        f"rotor slot pitch 360 / (p n_r) = {alpha:.4g} deg places the barrier ends at "
        f"(k + 1/2) x {alpha:.4g} deg from the d-axis, and only {fit} of them fall before "
        f"the q-axis at {90 / p:.4g} deg; {count} barriers need n_r at least "
        f"{least_rotor_slots(count)}"
    ]


def tag_end_angle_problems(problems: list[str], poles: int, n_r: int | None) -> list[str]:
    """Geometry messages about end angles, each naming n_r as the key that set them
    (unchanged when the file gives the end angles, ``n_r`` None)."""
    if n_r is None:
        return problems
    alpha = math.degrees(slot_pitch(poles // 2, n_r))
    note = (f" [end_angle_deg set by {SLOTS_KEY} = {n_r}: rotor slot pitch {alpha:.4g} deg, "
            f"machine.poles = {poles}]")
    return [m + note if "end_angle_deg" in m else m for m in problems]


def mixing_problems(data: list, n_r: Any) -> list[str]:
    """n_r is given: every barrier table that also gives end_angle_deg, in one message."""
    mixed = [f"rotor.barriers[{i}].end_angle_deg = {item['end_angle_deg']!r}"
             for i, item in enumerate(data)
             if isinstance(item, dict) and item.get("end_angle_deg") is not None]
    if not mixed:
        return []
    return [f"{SLOTS_KEY} = {n_r!r} with {', '.join(mixed)}: give either {SLOTS_KEY} "
            "(barrier ends at the rotor slot pitch) or every barrier's end_angle_deg, not both"]


def resolve_end_angles(barriers: tuple[BarrierSpec, ...], data: Any, n_r: int | None,
                       poles: int | None, problems: list[str]) -> tuple[BarrierSpec, ...]:
    """The barriers with every end angle set from n_r, when it is given.

    ``data`` is the file's ``rotor.barriers`` array (None: a round rotor); ``n_r`` and
    ``poles`` are None when absent or invalid (already reported). Problems are appended.
    """
    if n_r is None or poles is None or not isinstance(data, (list, type(None))):
        return barriers  # no n_r, or a problem already reported
    count = len(data or ())
    found = slot_pitch_problems(poles, n_r, count)
    problems.extend(found)
    if found or len(barriers) != count:
        return barriers
    angles = slot_pitch_end_angles(poles // 2, n_r, count)
    return tuple(replace(b, end_angle=a) for b, a in zip(barriers, angles))
