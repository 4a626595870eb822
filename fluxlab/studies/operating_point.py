"""The operating-point engine: a dq current averaged over rotor positions, and the MTPA.

Every figure that stands for "the machine at this current" comes from here, in every study
(quick mode, current-angle study, rated point, inductance curves, flux maps, envelope):

- the flux linkages psi_d, psi_q are means over the positions of
  :func:`fluxlab.studies.averaging.averaging_steps` (N equally spaced over one torque period);
- the torque is T = 3/2 p (<psi_d> i_q - <psi_q> i_d) of those means (amplitude-invariant
  Park transform). At fixed dq current the air-gap torque is this dq torque plus the
  rotor-position derivative of the co-energy (from memory; any text on the dq model with
  space harmonics), whose mean over a whole period is zero: the two agree as period means.
  The flux linkages vary with position by a few percent where the air-gap torque varies by
  tens of percent, so the dq form of an N-position mean is the one that does not alias. The
  air-gap (Maxwell stress) torque at the same positions is kept as a cross-check.

Currents are peak phase amperes; gamma is measured from the d-axis (gamma = 0: pure i_d).
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.fem.solver import FieldSolution, solve_field
from fluxlab.machine.dq import dq_torque, power_factor
from fluxlab.machine.model import MachineModel, current_density, phase_currents
from fluxlab.machine.post import flux_linkage_abc, machine_energy, park, torque_maxwell
from fluxlab.studies.averaging import averaging_steps, skew_step_offsets

log = logging.getLogger(__name__)

__all__ = [
    "PointResult",
    "solve_point",
    "AveragedPoint",
    "averaged_point",
    "averaged_points",
    "point_mean",
    "MTPAResult",
    "mtpa_search",
    "peak_angle",
    "OperatingPoints",
]


@dataclass(frozen=True, eq=False)
class PointResult:
    """One solved operating point at one rotor step (whole machine, SI units).

    A skewed rotor (``spec.skew``) is solved slice by slice: ``slices`` holds every slice's
    field, the figures are slice means and ``solution`` is the slice nearest the middle of
    the stack (for the field figure and the flux densities).
    """

    current_peak_A: float
    current_angle: float
    step: int
    position: float
    i_d: float
    i_q: float
    psi_d: float
    psi_q: float
    torque_maxwell_Nm: float
    torque_dq_Nm: float
    coenergy_J: float
    iterations: int
    solution: FieldSolution
    slices: tuple[FieldSolution, ...] = ()

    @property
    def start(self):
        """What the next solve of this rotor step starts from (``initial`` of
        :func:`solve_point`): the field, or the slices' fields of a skewed rotor."""
        return tuple(s.a for s in self.slices) if self.slices else self.solution.a


def solve_point(
    model: MachineModel,
    current_peak: float,
    current_angle: float,
    step: int,
    initial=None,
) -> PointResult:
    """Solve one operating point at rotor step ``step``.

    Rotor steps: see :func:`fluxlab.machine.model.rotor_step`. The phase currents follow
    the rotor: the dq current is fixed in the rotor frame. A skewed rotor is solved as its
    slices, each at its own rotor offset with the same stator currents (so each slice sees
    its own current angle); flux linkages (phase quantities, then Park at this step),
    torque and co-energy are slice means. ``initial``: a start vector, or one per slice
    (:attr:`PointResult.start` of an earlier point).
    """
    p = model.spec.pole_pairs
    position = (step - model.axis_step) * model.step_angle
    theta_e = p * position
    i_abc = phase_currents(current_peak, current_angle, theta_e)
    density = current_density(model, i_abc)
    offsets = skew_step_offsets(model)
    starts = initial if isinstance(initial, tuple) else (initial,) * len(offsets)
    solutions = [solve_field(model.problem, density, step + off, initial=start,
                             rtol=model.newton_rtol, linear_solver=model.linear_solver)
                 for off, start in zip(offsets, starts)]
    psi_abc = np.mean([flux_linkage_abc(model, sol) for sol in solutions], axis=0)
    psi_d, psi_q = park(psi_abc, theta_e)
    i_d, i_q = current_peak * math.cos(current_angle), current_peak * math.sin(current_angle)
    middle = min(range(len(offsets)), key=lambda k: abs(offsets[k]))
    return PointResult(
        current_peak_A=current_peak,
        current_angle=current_angle,
        step=step,
        position=position,
        i_d=i_d,
        i_q=i_q,
        psi_d=psi_d,
        psi_q=psi_q,
        torque_maxwell_Nm=float(np.mean([torque_maxwell(model, sol) for sol in solutions])),
        torque_dq_Nm=dq_torque(p, psi_d, psi_q, i_d, i_q),
        coenergy_J=float(np.mean([machine_energy(model, sol)[1] for sol in solutions])),
        iterations=sum(sol.iterations for sol in solutions),
        solution=solutions[middle],
        slices=tuple(solutions) if len(solutions) > 1 else (),
    )


@dataclass(frozen=True)
class AveragedPoint:
    """A dq current averaged over ``positions`` rotor positions (whole machine, SI units).

    ``torque_Nm``: 3/2 p (psi_d i_q - psi_q i_d) of the mean flux linkages;
    ``torque_maxwell_Nm``: the mean air-gap torque at the same positions (a cross-check);
    ``newton_iterations``: summed over the positions.
    """

    current_peak_A: float
    current_angle: float
    i_d: float
    i_q: float
    psi_d: float
    psi_q: float
    torque_Nm: float
    torque_maxwell_Nm: float
    power_factor: float
    positions: int
    newton_iterations: int

    @property
    def current_angle_deg(self) -> float:
        """Current angle from the d-axis, deg (to 1e-9 deg: 60, not 59.99999999999999)."""
        return round(math.degrees(self.current_angle), 9)


def averaged_point(model, current_peak: float, current_angle: float,
                   steps: Sequence[int] | None = None,
                   starts: dict[int, np.ndarray] | None = None) -> AveragedPoint:
    """The dq current (``current_peak`` A, ``current_angle`` rad) averaged over ``steps``.

    ``steps``: rotor steps (default :func:`fluxlab.studies.averaging.averaging_steps`). ``starts``:
    start vectors per rotor step (the same step at a nearby current: 40 % fewer Newton steps
    than the previous position), updated in place with this point's fields.
    """
    return averaged_points(model, current_peak, current_angle, steps, starts)[0]


def averaged_points(model, current_peak: float, current_angle: float,
                    steps: Sequence[int] | None = None,
                    starts: dict[int, np.ndarray] | None = None
                    ) -> tuple[AveragedPoint, list[PointResult]]:
    """:func:`averaged_point` and the solved points it averaged (in ``steps`` order)."""
    steps = averaging_steps(model) if steps is None else steps
    starts = {} if starts is None else starts
    points: list[PointResult] = []
    for step in (int(s) for s in steps):
        # a step not solved before starts from the position before it at this current
        start = starts.get(step, points[-1].start if points else None)
        pt = solve_point(model, current_peak, current_angle, step, start)
        starts[step] = pt.start
        points.append(pt)
    return point_mean(model, points), points


def point_mean(model, points) -> AveragedPoint:
    """The :class:`AveragedPoint` of solved points of one dq current (see the module)."""
    first = points[0]
    psi_d = float(np.mean([pt.psi_d for pt in points]))
    psi_q = float(np.mean([pt.psi_q for pt in points]))
    return AveragedPoint(
        current_peak_A=first.current_peak_A,
        current_angle=first.current_angle,
        i_d=first.i_d,
        i_q=first.i_q,
        psi_d=psi_d,
        psi_q=psi_q,
        torque_Nm=dq_torque(model.spec.pole_pairs, psi_d, psi_q, first.i_d, first.i_q),
        torque_maxwell_Nm=float(np.mean([pt.torque_maxwell_Nm for pt in points])),
        power_factor=power_factor(psi_d, psi_q, first.i_d, first.i_q),
        positions=len(points),
        newton_iterations=int(sum(pt.iterations for pt in points)),
    )


@dataclass(frozen=True)
class MTPAResult:
    """The maximum-torque-per-ampere point at one current and every point the search solved.

    ``point``: the best angle found, known to ``tolerance_deg``; ``evaluated``: every new
    angle of the search, in the order solved; ``solves``: its 2-D solves.
    """

    point: AveragedPoint
    evaluated: tuple[AveragedPoint, ...]
    tolerance_deg: float
    solves: int


def mtpa_search(model, current_peak: float, known: Sequence[AveragedPoint],
                steps: Sequence[int] | None = None,
                fields: dict[float, dict[int, np.ndarray]] | None = None,
                tolerance_deg: float = 0.1) -> MTPAResult:
    """Maximise the averaged torque over the current angle, from points already solved.

    ``known``: points at this current (a grid); the search brackets the peak between the
    best one and its neighbours, bisecting towards 0 or 90 deg first when the best lies at
    the edge of ``known``, then refines it by parabolas through the best angle and its
    neighbours (:func:`peak_angle`) until the angle is known to ``tolerance_deg``. Each new angle
    costs one solve per averaging position; every rotor step starts from the field of the
    nearest angle solved so far (``fields``: current angle in rad -> start vector per rotor
    step, extended here).
    """

    steps = averaging_steps(model) if steps is None else steps
    fields = {} if fields is None else fields
    seen = {pt.current_angle: pt for pt in known}
    new: list[AveragedPoint] = []

    def torque(gamma: float) -> float:  # peak_angle asks for each angle once
        starts = dict(fields[min(fields, key=lambda a: abs(a - gamma))]) if fields else {}
        seen[gamma] = averaged_point(model, current_peak, gamma, steps, starts)
        fields[gamma] = starts
        new.append(seen[gamma])
        return seen[gamma].torque_Nm

    values = {gamma: pt.torque_Nm for gamma, pt in seen.items()}
    angle = peak_angle(torque, values, math.radians(tolerance_deg))
    if angle is None:
        log.warning("torque at %g A peaks at the edge of 0-90 deg of current angle (no "
                    "saliency?): the MTPA is that edge point", current_peak)
    best = max(seen.values(), key=lambda pt: pt.torque_Nm)
    return MTPAResult(best, tuple(new), tolerance_deg, len(new) * len(steps))


def peak_angle(value: Callable[[float], float], known: dict[float, float], tolerance: float
               ) -> float | None:
    """The current angle in [0, pi/2] (rad) where ``value`` is largest, to ``tolerance`` rad.

    ``known``: angle -> value already evaluated (a grid; extended with every new angle). The
    peak is bracketed between the best known angle and its neighbours, bisecting towards 0
    or pi/2 while the best lies at the edge, then found by successive parabolic
    interpolation through the best angle and its bracketing neighbours (W. H. Press et al.,
    "Numerical Recipes", 3rd ed., section 10.3, inverse parabolic interpolation; a golden
    section of the larger side where the parabola's vertex falls outside the bracket). It
    stops when the vertex lies within ``tolerance`` / 2 of the best angle: near its maximum
    the position-averaged torque is smooth and close to a parabola (a sum of sin 2k gamma
    terms), so the vertex of three points that close is within the tolerance of the peak.
    Returns None when ``value`` keeps rising to 0 or pi/2 (no interior maximum; the edge is
    then the best of ``known``). One maximiser for every MTPA in fluxlab.
    """

    def at(gamma: float) -> float:
        if gamma not in known:
            known[gamma] = value(gamma)
        return known[gamma]

    while True:
        angles = sorted(known)
        k = max(range(len(angles)), key=lambda i: known[angles[i]])
        if 0 < k < len(angles) - 1:
            break
        step = ((0.0 if k == 0 else math.pi / 2) - angles[k]) / 2  # towards pure i_d or i_q
        if abs(step) < tolerance:
            return None
        at(angles[k] + step)
    for _ in range(_MAX_PEAK_STEPS):
        angles = sorted(known)
        k = max(range(len(angles)), key=lambda i: known[angles[i]])
        a, b, c = angles[k - 1], angles[k], angles[k + 1]
        x = _vertex(a, b, c, known[a], known[b], known[c])
        if abs(x - b) < tolerance / 2 or c - a < tolerance:
            break
        at(x)
    return max(known, key=known.get)


#: Safeguard on the parabolic steps of :func:`peak_angle` (each is at least a golden section
#: of the bracket when the parabola misleads, so 40 shrink a 90-degree bracket below 1e-6 rad).
_MAX_PEAK_STEPS = 40
_GOLDEN = 0.381966011250105  # (3 - sqrt 5) / 2


def _vertex(a: float, b: float, c: float, fa: float, fb: float, fc: float) -> float:
    """The vertex of the parabola through (a, fa), (b, fb), (c, fc), a < b < c, fb the
    largest; where it is no maximum inside (a, c), a golden section of the larger side."""
    p = (b - a) ** 2 * (fb - fc) - (b - c) ** 2 * (fb - fa)
    q = (b - a) * (fb - fc) - (b - c) * (fb - fa)
    if q != 0.0:
        x = b - 0.5 * p / q
        if a < x < c and x != b:
            return x
    return b + _GOLDEN * (c - b) if c - b > b - a else b - _GOLDEN * (b - a)


@dataclass(frozen=True)
class OperatingPoints:
    """The operating-point engine's figures an envelope reports (see :func:`operating_points`).

    ``rated``: the rated current at the rated angle (the MTPA angle when the machine file
    gives none); ``mtpa``: the MTPA point per current amplitude (peak A), at least the rated
    current and the current limit.
    """

    rated: AveragedPoint
    mtpa: dict[float, AveragedPoint]
