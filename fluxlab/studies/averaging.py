"""The rule that chooses the rotor positions over which a figure is averaged.

At a fixed dq current the torque and the flux linkages repeat with the rotor every torque
period 2 pi / P mechanical, P = gcd(lcm(Q, 2p), 6p) periods per revolution (Q slots, p pole
pairs): slotting against the rotor's 2p poles repeats at 2 pi / lcm(Q, 2p), the winding's
space harmonics against the rotor every 60 electrical degrees, 2 pi / 6p; the sum repeats at
the least common multiple of the two periods (common practice, no source). Integral-slot
windings: 60 electrical degrees.

Within the period the harmonics have orders h = 1, 2, ... (h cycles per period, electrical
order h P / p). The slot family, the largest part of the ripple, has the orders that are
multiples of s = lcm(Q, 2p) / P (s = q, the slots per pole and phase, for integral-slot
windings; 5 for 4 poles / 30 slots).

N positions equally spaced over one period sum every harmonic to zero except the orders that
are multiples of N (a discrete Fourier sum; any text on sampling): the mean keeps orders
N, 2N, 3N ... and nothing else. A subsample that is a multiple of s (4 positions over 60
electrical degrees when q = 4) lands every position on the same point of the slot ripple.
The default count is the smallest N >= 4 with gcd(N, s) = 1: orders 1 to 3 (for integral-slot
windings the 6th, 12th and 18th electrical torque harmonics, the largest of the winding
family) cancel, and the first slot-family order left in the mean is N s (the N-th slot
harmonic). On the five layouts of ``tests/test_averaging.py`` the default mean is within
0.5 % of a dense mean.

The mesh puts a whole number of rotor steps between the positions (see
:func:`fluxlab.mesh.machine_mesh.sliding_divisions`), so every count the machine file asks
for is exact.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "periods_per_revolution",
    "torque_period",
    "slot_order",
    "slot_order_electrical",
    "default_positions",
    "averaging_positions",
    "residual_orders",
    "period_steps",
    "equally_spaced_steps",
    "averaging_steps",
    "division_unit",
    "ripple_positions",
    "position_counts",
    "skew_offsets",
    "skew_step_offsets",
    "effective_skew_deg",
]

#: Smallest default count: orders 1 to 3 of the torque period cancel.
MIN_DEFAULT_POSITIONS = 4


def periods_per_revolution(slots: int, pole_pairs: int) -> int:
    """P, the torque periods per mechanical revolution at a fixed dq current."""
    return math.gcd(math.lcm(slots, 2 * pole_pairs), 6 * pole_pairs)


def torque_period(slots: int, pole_pairs: int) -> float:
    """Mechanical period of torque versus rotor position at a fixed dq current, rad."""
    return 2 * math.pi / periods_per_revolution(slots, pole_pairs)


def slot_order(slots: int, pole_pairs: int) -> int:
    """s: the order, within the torque period, of the slot-harmonic family's first member."""
    return math.lcm(slots, 2 * pole_pairs) // periods_per_revolution(slots, pole_pairs)


def slot_order_electrical(slots: int, pole_pairs: int) -> int:
    """The slot-harmonic order of the torque per electrical period, lcm(Q, 2p) / p.

    The stator's slotting and the rotor's poles come back into the same relative place
    lcm(Q, 2p) times per revolution, which holds p electrical periods: 18 for 36 slots and
    4 poles, 6 q for any integral-slot winding (q slots per pole and phase)."""
    return math.lcm(slots, 2 * pole_pairs) // pole_pairs


def default_positions(slots: int, pole_pairs: int) -> int:
    """The smallest count N >= 4 with gcd(N, s) = 1 (see the module docstring)."""
    s = slot_order(slots, pole_pairs)
    n = MIN_DEFAULT_POSITIONS
    while math.gcd(n, s) != 1:
        n += 1
    return n


def averaging_positions(spec) -> int:
    """The machine's count: ``mesh.averaging_positions``, else :func:`default_positions`."""
    return spec.mesh.averaging_positions or default_positions(spec.stator.slots,
                                                              spec.pole_pairs)


def residual_orders(slots: int, pole_pairs: int, count: int, up_to: float = 60.0
                    ) -> list[float]:
    """Electrical orders (per electrical period) left in an N-position mean, up to ``up_to``.

    They are the multiples of N of the torque period's orders: j N P / p, j >= 1.
    """
    step = count * periods_per_revolution(slots, pole_pairs) / pole_pairs
    return [round(j * step, 6) for j in range(1, int(up_to // step) + 1)]


def period_steps(model) -> int:
    """Rotor steps in one torque period of ``model``'s mesh (a whole number by construction)."""
    spec = model.spec
    steps = torque_period(spec.stator.slots, spec.pole_pairs) / model.step_angle
    if abs(steps - round(steps)) > 1e-6:
        raise ValueError(f"the torque period holds {steps:.6g} rotor steps, not a whole number")
    return round(steps)


def equally_spaced_steps(model, interval_steps: int, count: int, what: str) -> np.ndarray:
    """``count`` rotor steps equally spaced over ``interval_steps``, from position zero.

    Raises ValueError naming ``what`` when the count does not divide the interval: the
    positions would be uneven, and an uneven set does not cancel the harmonics.
    """
    if not (isinstance(count, (int, np.integer)) and count >= 1):
        raise ValueError(f"{what} = {count!r}: must be a whole number of at least 1")
    if interval_steps % count:
        valid = [n for n in range(1, min(interval_steps, 72) + 1) if interval_steps % n == 0]
        raise ValueError(
            f"{what} = {count}: the interval holds {interval_steps} rotor steps on this mesh, "
            f"which {count} equal spacings do not divide; counts that do: "
            f"{', '.join(map(str, valid))} (or set mesh.averaging_positions = {count} in the "
            "machine file, so that the mesh is made for it)")
    return model.axis_step + np.arange(count) * (interval_steps // count)


def averaging_steps(model, count: int | None = None) -> np.ndarray:
    """Rotor steps of an N-position mean over one torque period (N: ``count`` or the rule)."""
    count = averaging_positions(model.spec) if count is None else count
    return equally_spaced_steps(model, period_steps(model), count, "averaging positions")


def division_unit(spec, sectors: int, counts: list[int]) -> int:
    """Sliding-circle segments per sector must be a multiple of this for ``counts``.

    A count N needs N equal spacings of whole steps in the torque period: the period holds
    divisions * sectors / P steps, so divisions must be a multiple of N P / gcd(N P, sectors).
    """
    p_rev = periods_per_revolution(spec.stator.slots, spec.pole_pairs)
    unit = 1
    for n in counts:
        unit = math.lcm(unit, n * p_rev // math.gcd(n * p_rev, sectors))
    return unit


def ripple_positions(spec) -> int:
    """Positions of the torque-ripple study: ``mesh.steps_per_slot`` per slot pitch of span."""
    slots, p = spec.stator.slots, spec.pole_pairs
    return max(1, round(spec.mesh.steps_per_slot * slots / periods_per_revolution(slots, p)))


def position_counts(spec) -> list[int]:
    """Every count the studies of ``spec`` average over (the mesh is made for all of them)."""
    counts = [averaging_positions(spec), ripple_positions(spec)]
    if spec.drive.flux_map_positions:
        counts.append(spec.drive.flux_map_positions)
    return counts


def skew_offsets(spec) -> tuple[float, ...]:
    """Rotor offsets (rad, mechanical) of the skew slices, centred on zero; (0.0,) unskewed.

    ``slices`` offsets spaced angle / slices: the midpoint rule of a continuous skew of
    ``angle``, and exactly a step skew of ``slices`` segments.
    """
    if spec.skew is None:
        return (0.0,)
    n, spacing = spec.skew.slices, spec.skew.angle / spec.skew.slices
    return tuple((k - (n - 1) / 2) * spacing for k in range(n))


def skew_step_offsets(model) -> tuple[int, ...]:
    """The slice offsets in whole rotor steps of ``model``'s mesh (rounded to the nearest)."""
    return tuple(round(offset / model.step_angle) for offset in skew_offsets(model.spec))


def effective_skew_deg(model) -> float:
    """The skew angle the slices model on this mesh, deg: slices x their step spacing."""
    steps = skew_step_offsets(model)
    if len(steps) < 2:
        return 0.0
    return math.degrees((steps[1] - steps[0]) * len(steps) * model.step_angle)
