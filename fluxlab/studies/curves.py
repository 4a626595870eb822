"""Studies of one machine: sets of operating points and what a designer reads from them.

Each study is a function of a :class:`~fluxlab.machine.model.MachineModel` returning a plain frozen
result. Currents are peak phase amperes; the current angle gamma is measured from the
d-axis (gamma = 0: pure id); positive torque turns the rotor counter-clockwise.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.machine.model import MachineModel
from fluxlab.studies.averaging import (
    averaging_steps,
    equally_spaced_steps,
    period_steps,
    periods_per_revolution,
    ripple_positions,
)
from fluxlab.studies.operating_point import (
    AveragedPoint,
    PointResult,
    averaged_point,
    mtpa_search,
    solve_point,
)

__all__ = [
    "ANGLE_STEP_DEG",
    "ripple_steps",
    "torque_harmonics",
    "TorqueVsPosition",
    "torque_vs_position",
    "solve_positions",
    "position_study",
    "TorqueVsAngle",
    "torque_vs_current_angle",
    "InductanceCurves",
    "inductance_curves",
    "join_inductance_curves",
]

Progress = Callable[[str], None]

#: Grid step of the current-angle study, deg: the curve's shape; the MTPA search between the
#: grid angles around the best one finds the peak to 0.1 deg whatever the step.
ANGLE_STEP_DEG = 22.5


def ripple_steps(model: MachineModel, samples: int | None = None) -> np.ndarray:
    """Rotor steps of the torque-ripple study: equally spaced over one torque period.

    Default: :func:`fluxlab.studies.averaging.ripple_positions` (``mesh.steps_per_slot`` per slot
    pitch of span). A count that does not divide the period's steps is refused
    (:func:`fluxlab.studies.averaging.equally_spaced_steps`).
    """
    count = ripple_positions(model.spec) if samples is None else samples
    return equally_spaced_steps(model, period_steps(model), count, "ripple positions")


@dataclass(frozen=True, eq=False)
class TorqueVsPosition:
    """Torque versus rotor position at a fixed dq current over one torque period.

    ``position_deg``: mechanical degrees from position zero (d-axis on phase-a axis).
    ``torque_Nm``: air-gap (Maxwell stress) torque; ``torque_maxwell_mean_Nm`` its mean over
    the positions; ``ripple_pct``: peak to peak over that mean. ``harmonic_*``: every order
    the sampling resolves (up to half the sample count per period), with
    torque = mean + sum A_k cos(k theta_e + phi_k), k the order per electrical period and
    theta_e the electrical rotor position from position zero.
    """

    current_peak_A: float
    current_angle_deg: float
    position_deg: np.ndarray
    torque_Nm: np.ndarray
    torque_dq_Nm: np.ndarray
    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    torque_maxwell_mean_Nm: float
    ripple_pct: float
    harmonic_orders: np.ndarray
    harmonic_amplitudes_Nm: np.ndarray
    harmonic_phases_deg: np.ndarray
    iterations: np.ndarray


def torque_harmonics(model: MachineModel, torque: np.ndarray):
    """Orders (per electrical period), amplitudes (N m) and phases (deg) of a torque series.

    ``torque``: samples equally spaced over one torque period from position zero, end point
    excluded. Every order the samples resolve is returned, 1 to n // 2 cycles per period (at
    n // 2, for even n, the cosine part only).
    """
    n = len(torque)
    coefficients = np.fft.rfft(torque)[1:] / n
    amplitudes = 2 * np.abs(coefficients)
    if n % 2 == 0:
        amplitudes[-1] /= 2
    spec = model.spec
    per_period = periods_per_revolution(spec.stator.slots, spec.pole_pairs) / spec.pole_pairs
    orders = np.arange(1, len(coefficients) + 1) * per_period
    return np.round(orders, 9), amplitudes, np.degrees(np.angle(coefficients))


def solve_positions(
    model: MachineModel,
    current_peak: float,
    current_angle: float,
    steps: Sequence[int],
    progress: Progress | None = None,
) -> list[PointResult]:
    """Operating points at ``steps`` in order, each started from the one before.

    A chain can be cut into pieces solved apart (in parallel): each piece costs one cold
    start more, and the results agree within the Newton tolerance.
    """
    return solve_position_sets(model, ((current_peak, current_angle),), steps, progress)[0]


def solve_position_sets(
    model: MachineModel,
    currents: Sequence[tuple[float, float]],
    steps: Sequence[int],
    progress: Progress | None = None,
    first_starts: Sequence | None = None,
) -> list[list[PointResult]]:
    """:func:`solve_positions` for several dq currents ((peak A, angle rad) each) at once.

    At each rotor step every current is solved in turn, each started from its own point at
    the step before: the linear solver's pattern depends on the rotor step only, so one
    analysis serves them all (two currents: 18 % less time than two chains on the demo).
    ``first_starts``: per current, a start for the first step (a field of the same current
    and step solved before) or None. Returns one list of points per current, in ``steps``
    order.
    """
    chains: list[list[PointResult]] = [[] for _ in currents]
    heads = list(first_starts) if first_starts is not None else [None] * len(currents)
    for k, step in enumerate(steps):
        for chain, head, (current_peak, current_angle) in zip(chains, heads, currents):
            initial = chain[-1].start if chain else head
            chain.append(solve_point(model, current_peak, current_angle, int(step), initial))
        if progress:
            progress(f"torque vs position {k + 1}/{len(steps)}")
    return chains


def position_study(model: MachineModel, points: Sequence[PointResult]) -> TorqueVsPosition:
    """The torque-versus-position result of points at one dq current over a torque period."""
    torque = np.array([pt.torque_maxwell_Nm for pt in points])
    mean = float(torque.mean())
    orders, amplitudes, phases = torque_harmonics(model, torque)
    return TorqueVsPosition(
        current_peak_A=points[0].current_peak_A,
        current_angle_deg=math.degrees(points[0].current_angle),
        position_deg=np.degrees([pt.position for pt in points]),
        torque_Nm=torque,
        torque_dq_Nm=np.array([pt.torque_dq_Nm for pt in points]),
        psi_d_Wb=np.array([pt.psi_d for pt in points]),
        psi_q_Wb=np.array([pt.psi_q for pt in points]),
        torque_maxwell_mean_Nm=mean,
        ripple_pct=float(100 * np.ptp(torque) / abs(mean)) if mean else math.inf,
        harmonic_orders=orders,
        harmonic_amplitudes_Nm=amplitudes,
        harmonic_phases_deg=phases,
        iterations=np.array([pt.iterations for pt in points]),
    )


def torque_vs_position(
    model: MachineModel,
    current_peak: float,
    current_angle: float,
    steps: Sequence[int] | None = None,
    progress: Progress | None = None,
) -> tuple[TorqueVsPosition, list[PointResult]]:
    """Torque over one torque period (:func:`fluxlab.studies.averaging.torque_period`), warm-started
    step to step."""
    steps = ripple_steps(model) if steps is None else np.asarray(steps)
    points = solve_positions(model, current_peak, current_angle, steps, progress)
    return position_study(model, points), points


@dataclass(frozen=True, eq=False)
class TorqueVsAngle:
    """Averaged torque versus current angle at one current amplitude (peak A).

    Each angle is an :class:`~fluxlab.studies.operating_point.AveragedPoint` (the same engine as the
    rated point): the grid, the angles asked for, and the MTPA search's angles, in angle
    order. ``torque_Nm``: 3/2 p (psi_d i_q - psi_q i_d) of the position-mean flux linkages;
    ``torque_maxwell_Nm``: the mean air-gap torque at the same positions (a cross-check).
    ``mtpa_angle_deg`` / ``mtpa_torque_Nm``: the maximum found by
    :func:`~fluxlab.studies.operating_point.mtpa_search`, to ``mtpa_tolerance_deg``, in
    ``mtpa_solves`` 2-D solves; ``positions``: rotor positions per angle. ``fields``: the
    solved fields per rotor step (``PointResult.start``) of the MTPA point and of the angles
    asked for, by current angle in rad, for a later study at those angles to start from.
    """

    current_peak_A: float
    points: tuple[AveragedPoint, ...]
    mtpa: AveragedPoint
    mtpa_tolerance_deg: float
    mtpa_solves: int
    positions: int
    fields: dict = dataclasses.field(default_factory=dict, repr=False)

    def fields_at(self, angle: float) -> dict:
        """The fields per rotor step kept for current angle ``angle`` (rad), or {}."""
        near = [a for a in self.fields if abs(a - angle) < 1e-9]
        return self.fields[near[0]] if near else {}

    @property
    def current_angle_deg(self) -> np.ndarray:
        return np.array([pt.current_angle_deg for pt in self.points])

    @property
    def torque_Nm(self) -> np.ndarray:
        return np.array([pt.torque_Nm for pt in self.points])

    @property
    def torque_maxwell_Nm(self) -> np.ndarray:
        return np.array([pt.torque_maxwell_Nm for pt in self.points])

    @property
    def psi_d_Wb(self) -> np.ndarray:
        return np.array([pt.psi_d for pt in self.points])

    @property
    def psi_q_Wb(self) -> np.ndarray:
        return np.array([pt.psi_q for pt in self.points])

    @property
    def power_factor(self) -> np.ndarray:
        return np.array([pt.power_factor for pt in self.points])

    @property
    def mtpa_angle_deg(self) -> float:
        return self.mtpa.current_angle_deg

    @property
    def mtpa_torque_Nm(self) -> float:
        return self.mtpa.torque_Nm

    def with_points(self, extra: Sequence[AveragedPoint]) -> TorqueVsAngle:
        """A copy with ``extra`` points of this current joined to the curve (angle order)."""
        merged = {round(pt.current_angle_deg, 9): pt for pt in (*self.points, *extra)}
        return dataclasses.replace(self, points=tuple(merged[a] for a in sorted(merged)))

    def at(self, angle_deg: float) -> AveragedPoint:
        """The point solved at ``angle_deg`` (KeyError when that angle was not solved)."""
        for pt in self.points:
            if abs(pt.current_angle_deg - angle_deg) < 1e-9:
                return pt
        raise KeyError(f"current angle {angle_deg} deg was not solved")


def torque_vs_current_angle(
    model: MachineModel,
    current_peak: float,
    angle_step_deg: float = ANGLE_STEP_DEG,
    positions: int | None = None,
    progress: Progress | None = None,
    extra_angles_deg: Sequence[float] = (),
    ends: bool = True,
) -> TorqueVsAngle:
    """Averaged torque from 0 to 90 degrees of current angle, and the MTPA angle.

    A grid of ``angle_step_deg`` (plus ``extra_angles_deg``) draws the curve; the MTPA is
    then found by a bounded maximisation between the grid angles on either side of the best
    one (:func:`~fluxlab.studies.operating_point.mtpa_search`, to 0.1 deg). ``positions``: rotor
    positions per angle (default: the machine's averaging count). ``ends`` False leaves out
    0 and 90 deg (pure i_d and pure i_q: the one-axis points of :func:`inductance_curves`,
    to be joined with :meth:`TorqueVsAngle.with_points`). Every point of one rotor step
    starts from the same step's field at the grid angle before, or, in the search, at the
    nearest angle solved.
    """
    steps = averaging_steps(model, positions)
    # rounded, so that an angle asked for in radians and the grid's do not come out twice
    grid = sorted({*np.arange(0.0, 90.0 + 1e-9, angle_step_deg).round(9).tolist(), 90.0,
                   *(round(float(a), 9) for a in extra_angles_deg)})
    if not ends:
        grid = [a for a in grid if 0.0 < a < 90.0]
    starts: dict[int, np.ndarray] = {}
    fields: dict[float, dict[int, np.ndarray]] = {}  # angle (rad) -> field per rotor step
    points: dict[float, AveragedPoint] = {}
    for k, angle in enumerate(grid):
        points[angle] = averaged_point(model, current_peak, math.radians(angle), steps, starts)
        fields[math.radians(angle)] = dict(starts)
        if progress:
            progress(f"torque vs current angle {k + 1}/{len(grid)} at {current_peak:g} A")
    search = mtpa_search(model, current_peak, list(points.values()), steps, fields)
    for pt in search.evaluated:
        points.setdefault(round(pt.current_angle_deg, 9), pt)
    kept = {search.point.current_angle, *(math.radians(round(float(a), 9))
                                          for a in extra_angles_deg)}
    return TorqueVsAngle(
        current_peak_A=current_peak,
        points=tuple(points[a] for a in sorted(points)),
        mtpa=search.point,
        mtpa_tolerance_deg=search.tolerance_deg,
        mtpa_solves=search.solves,
        positions=len(steps),
        fields={a: f for a, f in fields.items() if a in kept},
    )


@dataclass(frozen=True, eq=False)
class InductanceCurves:
    """Apparent inductances with the current on one axis, against current (saturation).

    ``Ld_one_axis_H`` = <psi_d> / i_d with i_q = 0; ``Lq_one_axis_H`` = <psi_q> / i_q with
    i_d = 0; flux linkages averaged over ``positions`` rotor positions of a torque period
    (``d_points``, ``q_points``: the averaged points per current, None where not solved).
    Not the apparent inductances at an operating point (both currents on, cross-saturated),
    nor the incremental ones of the flux maps.
    """

    current_peak_A: np.ndarray
    d_points: tuple[AveragedPoint | None, ...]
    q_points: tuple[AveragedPoint | None, ...]
    positions: int

    @property
    def psi_d_Wb(self) -> np.ndarray:
        return np.array([math.nan if pt is None else pt.psi_d for pt in self.d_points])

    @property
    def psi_q_Wb(self) -> np.ndarray:
        return np.array([math.nan if pt is None else pt.psi_q for pt in self.q_points])

    @property
    def Ld_one_axis_H(self) -> np.ndarray:
        return self.psi_d_Wb / self.current_peak_A

    @property
    def Lq_one_axis_H(self) -> np.ndarray:
        return self.psi_q_Wb / self.current_peak_A

    @property
    def saliency_one_axis(self) -> np.ndarray:
        """Ld / Lq with the current on one axis at a time, per current."""
        return self.Ld_one_axis_H / self.Lq_one_axis_H

    def ends_at(self, current_peak: float) -> tuple[AveragedPoint, ...]:
        """The solved points at ``current_peak`` (0 and 90 deg of a current-angle curve)."""
        k = np.flatnonzero(np.isclose(self.current_peak_A, current_peak, rtol=1e-12))
        return tuple(pt for pts in (self.d_points, self.q_points) for j in k
                     if (pt := pts[j]) is not None)


def inductance_curves(
    model: MachineModel, currents: Sequence[float], progress: Progress | None = None,
    positions: int | None = None, axes: Sequence[str] = ("d", "q"),
) -> InductanceCurves:
    """Ld(i_d) at i_q = 0 and Lq(i_q) at i_d = 0, averaged over the machine's positions.

    ``axes``: both (default), or one of them (the other curve is then not solved), so that
    the two can run in parallel and be joined with :func:`join_inductance_curves`. Along a
    curve every rotor step starts from its field at the current before.
    """
    currents = np.asarray(currents, dtype=float)
    steps = averaging_steps(model, positions)
    points: dict[str, list] = {"d": [None] * currents.size, "q": [None] * currents.size}
    for axis in axes:
        starts: dict[int, np.ndarray] = {}
        for k, current in enumerate(currents):
            angle = 0.0 if axis == "d" else math.pi / 2
            points[axis][k] = averaged_point(model, float(current), angle, steps, starts)
            if progress:
                progress(f"{axis}-axis inductance at {current:.3g} A")
    return InductanceCurves(currents, tuple(points["d"]), tuple(points["q"]), len(steps))


def join_inductance_curves(d: InductanceCurves, q: InductanceCurves) -> InductanceCurves:
    """The d-axis curve of ``d`` and the q-axis curve of ``q`` (same currents) as one."""
    return InductanceCurves(d.current_peak_A, d.d_points, q.q_points, d.positions)
