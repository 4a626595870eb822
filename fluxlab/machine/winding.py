"""Slot-phase layout of a three-phase winding: star of slots, winding factors, phase axes.

Conventions (fixed for the whole project)
-----------------------------------------
- Slot ``k`` (``k = 0 .. Q-1``) has its centre at the mechanical angle
  ``(k + 1/2) * 2*pi/Q``, counter-clockwise from the x-axis. ``2p`` poles, ``p`` pole
  pairs; electrical angle = ``p`` * mechanical angle.
- Layer 0 is the coil side nearer the air gap (top), layer 1 the one nearer the slot
  bottom. A single-layer winding has layer 0 only.
- ``sign`` +1: the coil side carries the phase current in +z (out of the page).
- Phases 0, 1, 2 = a, b, c in positive sequence counter-clockwise: the b axis leads the
  a axis by +120 electrical degrees, c by +240.

The top layer follows the star of slots with 60-degree phase belts +a, -c, +b, -a, +c, -b
(the +a belt starts at electrical angle 0, so slot 0 is the first +a slot of an integral
slot winding). In a double-layer winding of coil pitch ``y`` slots, the coil whose top side
is in slot ``k`` returns in the bottom layer of slot ``k + y``.
"""

from __future__ import annotations

import logging
import math
import operator
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from fluxlab.errors import WindingError

__all__ = [
    "WindingLayout",
    "winding_layout",
    "slot_angles",
    "winding_factor",
    "winding_factors",
    "phase_axis_angle",
    "series_turns_per_phase",
    "machine_symmetry",
    "coil_groups",
    "check_parallel_paths",
]

logger = logging.getLogger(__name__)

# Belt j covers electrical angles [j, j+1) * 60 degrees: +a, -c, +b, -a, +c, -b.
_BELT_PHASE = np.array([0, 2, 1, 0, 2, 1])
_BELT_SIGN = np.array([1, -1, 1, -1, 1, -1])
_PHASE_NAMES = "ABC"


@dataclass(frozen=True, eq=False)
class WindingLayout:
    """Which phase, with which sign, occupies each layer of each slot.

    Attributes
    ----------
    slots
        Number of stator slots Q.
    poles
        Number of poles 2p.
    layers
        1 (single layer) or 2 (double layer).
    coil_pitch_slots
        Coil pitch y, in slots.
    phase
        ``(layers, slots)`` int array, 0/1/2 for phases a/b/c (read-only).
    sign
        ``(layers, slots)`` int array, +1 for current in +z, -1 for -z (read-only).

    Build it with :func:`winding_layout`; comparison is by identity (the arrays make
    value equality ambiguous).
    """

    slots: int
    poles: int
    layers: int
    coil_pitch_slots: int
    phase: np.ndarray
    sign: np.ndarray

    def __post_init__(self) -> None:
        for name in ("phase", "sign"):
            arr = np.array(getattr(self, name), dtype=int)
            if arr.shape != (self.layers, self.slots):
                raise ValueError(
                    f"WindingLayout.{name}: shape {arr.shape}, expected "
                    f"(layers, slots) = ({self.layers}, {self.slots})"
                )
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def pole_pairs(self) -> int:
        """p, the number of pole pairs."""
        return self.poles // 2

    @property
    def slots_per_pole_phase(self) -> Fraction:
        """q = Q / (2p * 3), exact."""
        return Fraction(self.slots, 3 * self.poles)

    def labels(self) -> np.ndarray:
        """``(layers, slots)`` array of labels such as ``"+A"`` and ``"-C"``."""
        names = np.array(list(_PHASE_NAMES))[self.phase]
        return np.where(self.sign > 0, "+", "-").astype(object) + names


def slot_angles(slots: int) -> np.ndarray:
    """Mechanical angles of the slot centres, rad: ``(k + 1/2) * 2*pi/slots``."""
    return (np.arange(slots) + 0.5) * (2 * math.pi / slots)


def _int_key(value: object, key: str, low: int) -> int:
    try:
        if isinstance(value, bool):
            raise TypeError
        number = operator.index(value)
    except TypeError:
        raise WindingError(f"{key} = {value!r}: must be an integer") from None
    if number < low:
        raise WindingError(f"{key} = {number}: must be at least {low}")
    return number


def _checked_machine(slots: object, poles: object) -> tuple[int, int]:
    Q = _int_key(slots, "stator.slots", 3)
    P2 = _int_key(poles, "machine.poles", 2)
    if P2 % 2:
        raise WindingError(f"machine.poles = {P2}: must be even")
    p = P2 // 2
    t = math.gcd(Q, p)
    # Star of slots: Q/t distinct spokes, each holding t slots; three phases get equal,
    # 120-degree-rotated shares only if Q/t is a multiple of 3 (N. Bianchi, M. Dai Pre,
    # IEE Proc. Electr. Power Appl. 153(3), 2006, from memory).
    if Q % (3 * t):
        raise WindingError(
            f"stator.slots = {Q}, machine.poles = {P2}: no balanced three-phase winding: "
            f"slots/(3*gcd(slots, pole pairs)) = {Q}/(3*{t}) = {Q / (3 * t):.4g} "
            "must be an integer"
        )
    return Q, P2


def _belts(Q: int, p: int) -> np.ndarray:
    """Belt index 0..5 of each slot's top coil side, exact integer arithmetic.

    The electrical angle of slot k in units of 60 degrees is 6 p (k + 1/2) / Q.
    """
    k = np.arange(Q)
    return ((3 * p * (2 * k + 1)) // Q) % 6


def _single_layer_go_slots(Q: int, p: int, y: int) -> np.ndarray:
    """Slots holding the go side of a single-layer coil (the return side is at k + y)."""
    q = Fraction(Q, 6 * p)
    tau = Fraction(Q, 2 * p)
    if q.denominator == 1:
        if y != tau:
            raise WindingError(
                f"winding.coil_pitch_slots = {y}: a single-layer winding has full-pitch "
                f"coils, the pitch must be slots/poles = {Q}/{2 * p} = {tau}"
            )
        # The go sides are the +a, +b, +c belts; each returns in the opposite belt.
        return np.flatnonzero(_belts(Q, p) % 2 == 0)
    t = math.gcd(Q, p)
    # Alternate-coil single layer: go sides in the even slots, returns in the odd ones.
    # It repeats with the sector of machine_symmetry only if that sector holds an even
    # number of slots, i.e. Q/t a multiple of 4 (and of 3 for balance): 12 | Q/t.
    if (Q // t) % 12:
        raise WindingError(
            f"winding.layers = 1 with stator.slots = {Q}, machine.poles = {2 * p} "
            f"(q = {q} not an integer): a fractional-slot single layer is supported only "
            f"if slots/(12*gcd(slots, pole pairs)) = {Q}/(12*{t}) is an integer; "
            "use winding.layers = 2"
        )
    odd = np.arange(1, Q, 2)
    best = odd[np.abs(odd - float(tau)) <= np.min(np.abs(odd - float(tau))) + 1e-9]
    if y not in best:
        raise WindingError(
            f"winding.coil_pitch_slots = {y}: a fractional-slot single layer needs the odd "
            f"pitch nearest to slots/poles = {float(tau):.4g}: {' or '.join(map(str, best))}"
        )
    return np.arange(0, Q, 2)


def winding_layout(slots: int, poles: int, layers: int, coil_pitch_slots: int) -> WindingLayout:
    """Slot-phase layout of a balanced three-phase winding from the star of slots.

    Parameters
    ----------
    slots
        Number of stator slots Q.
    poles
        Number of poles 2p (even).
    layers
        1 or 2. A single layer has full-pitch coils: pitch Q/(2p) when q = Q/(6p) is an
        integer; for fractional q it is supported as an alternate-coil winding (go sides
        in even slots) when Q/(12 gcd(Q, p)) is an integer, with the odd pitch nearest
        Q/(2p).
    coil_pitch_slots
        Coil pitch y in slots, ``1 <= y <= Q-1``.

    Raises
    ------
    WindingError
        On impossible input; the message names the key, the value and the limit.
    """
    Q, P2 = _checked_machine(slots, poles)
    p = P2 // 2
    L = _int_key(layers, "winding.layers", 1)
    if L not in (1, 2):
        raise WindingError(f"winding.layers = {L}: must be 1 or 2")
    y = _int_key(coil_pitch_slots, "winding.coil_pitch_slots", 1)
    if y >= Q:
        raise WindingError(
            f"winding.coil_pitch_slots = {y}: must be less than stator.slots = {Q}"
        )
    belt = _belts(Q, p)
    if L == 2:
        top_phase, top_sign = _BELT_PHASE[belt], _BELT_SIGN[belt]
        # bottom[k] is the return side of the coil whose top side is in slot k - y.
        phase = np.stack([top_phase, np.roll(top_phase, y)])
        sign = np.stack([top_sign, -np.roll(top_sign, y)])
    else:
        go = _single_layer_go_slots(Q, p, y)
        ret = (go + y) % Q
        phase = np.empty((1, Q), dtype=int)
        sign = np.empty((1, Q), dtype=int)
        phase[0, go] = phase[0, ret] = _BELT_PHASE[belt[go]]
        sign[0, go], sign[0, ret] = _BELT_SIGN[belt[go]], -_BELT_SIGN[belt[go]]
    layout = WindingLayout(Q, P2, L, y, phase, sign)
    kw1 = winding_factor(layout, 1)
    if kw1 < 1e-9:  # e.g. y = 2*Q/(2p): both sides of every coil in the same field
        raise WindingError(
            f"winding.coil_pitch_slots = {y}: gives zero fundamental winding factor "
            f"(slots = {Q}, poles = {P2}); a pitch of slots/poles = {Q / P2:.4g} is full"
        )
    logger.debug("winding %d/%d, %d layer(s), y=%d: k_w1 = %.4f", Q, P2, L, y, kw1)
    return layout


def _phase_sides(layout: WindingLayout, phase: int) -> tuple[np.ndarray, np.ndarray]:
    """Mechanical angles (rad) and signs of all coil sides of one phase."""
    if phase not in (0, 1, 2):
        raise ValueError(f"phase = {phase!r}: must be 0, 1 or 2 (a, b, c)")
    mask = layout.phase == phase
    theta = np.broadcast_to(slot_angles(layout.slots), mask.shape)
    return theta[mask], layout.sign[mask]


def winding_factors(layout: WindingLayout, harmonics: Sequence[float] | np.ndarray) -> np.ndarray:
    """Winding factors of phase a for several space harmonics (see :func:`winding_factor`)."""
    nu = np.atleast_1d(np.asarray(harmonics, dtype=float))
    p = layout.pole_pairs
    order = nu * p
    bad = np.abs(order - np.round(order)) > 1e-9
    if np.any(bad):
        raise ValueError(
            f"harmonic = {nu[bad][0]:g}: harmonic * pole pairs ({p}) must be an integer "
            "(the mechanical order of the space harmonic)"
        )
    theta, s = _phase_sides(layout, 0)
    phasors = np.exp(1j * np.outer(order, theta)) @ s
    return np.abs(phasors) / theta.size


def winding_factor(layout: WindingLayout, harmonic: float = 1) -> float:
    """Winding factor of phase a for the space harmonic ``harmonic``.

    ``|sum_k s_k exp(j nu p theta_k)| / N`` over the N coil sides of phase a (equal turns),
    theta_k mechanical, nu the order relative to the fundamental (1, 5, 7, ...; fractional
    orders such as 1/5 are allowed when nu * p is an integer). Dimensionless, 0..1.
    """
    return float(winding_factors(layout, [harmonic])[0])


def phase_axis_angle(layout: WindingLayout, phase: int = 0) -> float:
    """Mechanical angle of a phase's magnetic axis, rad, in ``[0, 2*pi/p)``.

    The axis is where the fundamental of the radial air-gap flux density of a positive
    current in that phase alone is largest (outward positive). With ideal iron, Ampere's
    law gives ``g H_r = -integral of the conductor density``, so the axis lies a quarter
    period behind the peak ``theta_c = -arg(C)/p`` of the conductor density, where
    ``C = sum_k s_k exp(-j p theta_k)``: axis = ``(-arg(C) - pi/2) / p``.
    """
    theta, s = _phase_sides(layout, phase)
    p = layout.pole_pairs
    C = np.sum(s * np.exp(-1j * p * theta))
    if abs(C) < 1e-9 * theta.size:
        raise ValueError(f"phase = {phase}: no fundamental conductor density, axis undefined")
    period = 2 * math.pi / p
    axis = float(np.mod((-np.angle(C) - math.pi / 2) / p, period))
    return 0.0 if axis >= period else axis  # np.mod may round up to the period itself


def machine_symmetry(slots: int, poles: int) -> tuple[int, float, int]:
    """The smallest sector that slots, poles and a star-of-slots winding allow.

    With t = gcd(Q, p): if Q/t is even the machine is anti-periodic over pi/t
    (``2t`` sectors, edge sign -1 when p/t is odd, +1 when even; since gcd(Q/t, p/t) = 1,
    p/t is in fact always odd here); otherwise it is periodic over 2*pi/t (``t`` sectors,
    edge sign +1). Every layout :func:`winding_layout` returns repeats this way: slot
    ``k + Q/sectors`` carries ``edge_sign`` times the phase pattern of slot ``k``.

    Returns
    -------
    sectors, sector_angle, edge_sign
        Number of sectors in the machine, the sector's mechanical angle in rad, and
        +1 (periodic) or -1 (anti-periodic) for the sector edges.
    """
    Q, P2 = _checked_machine(slots, poles)
    p = P2 // 2
    t = math.gcd(Q, p)
    if (Q // t) % 2 == 0:
        return 2 * t, math.pi / t, (-1 if (p // t) % 2 else 1)
    return t, 2 * math.pi / t, 1


def _go_slots(layout: WindingLayout) -> np.ndarray:
    if layout.layers == 2:
        return np.arange(layout.slots)  # every coil starts in a top layer
    return _single_layer_go_slots(layout.slots, layout.pole_pairs, layout.coil_pitch_slots)


def coil_groups(layout: WindingLayout) -> int:
    """Number of identical coil groups per phase (equal EMF, possibly reversed).

    The smallest slot shift that maps the set of coils onto itself with the same phases and
    all signs equal or all reversed; the phase's coils then fall into ``Q / shift`` groups,
    one per repetition. Textbook values: 2p for an integral-slot double layer, p for an
    integral-slot single layer.
    """
    Q = layout.slots
    go = np.zeros(Q, dtype=bool)
    go[_go_slots(layout)] = True
    for shift in range(1, Q + 1):
        if Q % shift or not np.array_equal(np.roll(go, shift), go):
            continue
        same_phase = np.array_equal(np.roll(layout.phase, shift, axis=1), layout.phase)
        ratio = np.roll(layout.sign, shift, axis=1) * layout.sign
        if same_phase and (np.all(ratio == 1) or np.all(ratio == -1)):
            return Q // shift
    raise AssertionError("unreachable: the full turn is always a symmetry")


def check_parallel_paths(layout: WindingLayout, parallel_paths: int) -> None:
    """Check that the coils of each phase can form ``parallel_paths`` balanced paths.

    Rule: the number of parallel paths a must divide :func:`coil_groups` (each path then
    takes the same number of identical groups, so all paths have the same EMF and
    impedance). This is the usual sufficient rule: a | 2p for an integral-slot double
    layer, a | p for a single layer.

    Raises
    ------
    WindingError
        If ``parallel_paths`` is not a positive integer dividing the number of groups.
    """
    a = _int_key(parallel_paths, "winding.parallel_paths", 1)
    groups = coil_groups(layout)
    if groups % a:
        allowed = [d for d in range(1, groups + 1) if groups % d == 0]
        raise WindingError(
            f"winding.parallel_paths = {a}: must divide {groups}, the number of identical "
            f"coil groups per phase of this winding (slots = {layout.slots}, poles = "
            f"{layout.poles}, layers = {layout.layers}); allowed: {allowed}"
        )


def series_turns_per_phase(
    layout: WindingLayout, turns_per_coil: int, parallel_paths: int
) -> float:
    """Series turns per phase: coils per phase * turns per coil / parallel paths.

    A coil has two sides, so coils per phase = coil sides of the phase / 2 (Q/3 for a
    double layer, Q/6 for a single layer). Dimensionless (turns).
    """
    n = _int_key(turns_per_coil, "winding.turns_per_coil", 1)
    check_parallel_paths(layout, parallel_paths)
    coils = np.count_nonzero(layout.phase == 0) / 2
    return coils * n / parallel_paths
