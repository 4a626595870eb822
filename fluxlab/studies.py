"""Studies of one machine: sets of operating points and what a designer reads from them.

Each study is a function of a :class:`~fluxlab.model.MachineModel` returning a plain frozen
result. Currents are peak phase amperes; the current angle gamma is measured from the
d-axis (gamma = 0: pure id); positive torque turns the rotor counter-clockwise.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from .model import MachineModel, current_density, phase_currents
from .post import flux_linkage_abc, machine_energy, park, torque_maxwell
from .solver import FieldSolution, solve_field

__all__ = [
    "PointResult",
    "solve_point",
    "torque_period",
    "ripple_steps",
    "TorqueVsPosition",
    "torque_vs_position",
    "solve_positions",
    "position_study",
    "TorqueVsAngle",
    "torque_vs_current_angle",
    "InductanceCurves",
    "inductance_curves",
    "power_factor",
]

Progress = Callable[[str], None]


@dataclass(frozen=True, eq=False)
class PointResult:
    """One solved operating point at one rotor step (whole machine, SI units)."""

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


def solve_point(
    model: MachineModel,
    current_peak: float,
    current_angle: float,
    step: int,
    initial: np.ndarray | None = None,
) -> PointResult:
    """Solve one operating point at rotor step ``step`` (see :func:`fluxlab.model.rotor_step`).

    The phase currents follow the rotor: the dq current is fixed in the rotor frame.
    """
    p = model.spec.pole_pairs
    position = (step - model.axis_step) * model.step_angle
    theta_e = p * position
    i_abc = phase_currents(current_peak, current_angle, theta_e)
    solution = solve_field(model.problem, current_density(model, i_abc), step, initial=initial,
                           rtol=model.newton_rtol, linear_solver=model.linear_solver)
    psi_d, psi_q = park(flux_linkage_abc(model, solution), theta_e)
    i_d, i_q = current_peak * math.cos(current_angle), current_peak * math.sin(current_angle)
    return PointResult(
        current_peak_A=current_peak,
        current_angle=current_angle,
        step=step,
        position=position,
        i_d=i_d,
        i_q=i_q,
        psi_d=psi_d,
        psi_q=psi_q,
        torque_maxwell_Nm=torque_maxwell(model, solution),
        # T = 3/2 p (psi_d i_q - psi_q i_d): amplitude-invariant Park transform
        torque_dq_Nm=1.5 * p * (psi_d * i_q - psi_q * i_d),
        coenergy_J=machine_energy(model, solution)[1],
        iterations=solution.iterations,
        solution=solution,
    )


def power_factor(psi_d: float, psi_q: float, i_d: float, i_q: float) -> float:
    """Displacement power factor with the resistance neglected.

    Steady state v_d = -omega psi_q, v_q = omega psi_d; the factor is the cosine of the angle
    between the voltage and current vectors.
    """
    v_angle = math.atan2(psi_d, -psi_q)
    i_angle = math.atan2(i_q, i_d)
    return math.cos(v_angle - i_angle)


def torque_period(model: MachineModel) -> float:
    """Mechanical period of torque versus rotor position at fixed dq current, rad.

    Two families of torque harmonics set it: slotting against the rotor poles repeats at
    2 pi / lcm(Q, 2p) (the cogging period), and the winding's space harmonics against the
    rotor repeat every 60 electrical degrees, 2 pi / 6p. The sum repeats at the least
    common multiple of the two periods, i.e. 2 pi / gcd(lcm(Q, 2p), 6p) (common practice,
    no source). Integral-slot windings: 60 electrical degrees.
    """
    q_slots, p = model.spec.stator.slots, model.spec.pole_pairs
    return 2 * math.pi / math.gcd(math.lcm(q_slots, 2 * p), 6 * p)


def ripple_steps(model: MachineModel, samples: int | None = None) -> np.ndarray:
    """Rotor steps over one torque period, evenly spaced, end point excluded.

    Default: ``steps_per_slot`` samples per slot pitch of span (at least 12 per slot pitch).
    """
    period_steps = round(torque_period(model) / model.step_angle)
    if samples is None:
        per_slot = model.spec.mesh.steps_per_slot
        slot_steps = 2 * math.pi / model.spec.stator.slots / model.step_angle
        samples = max(1, round(per_slot * period_steps / slot_steps))
    stride = max(1, period_steps // samples)
    return model.axis_step + np.arange(0, period_steps, stride)


@dataclass(frozen=True, eq=False)
class TorqueVsPosition:
    """Torque versus rotor position at a fixed dq current over one torque period.

    ``position_deg``: mechanical degrees from position zero (d-axis on phase-a axis).
    ``harmonic_orders`` / ``harmonic_amplitudes_Nm``: torque harmonics above 1 % of the mean,
    orders counted per electrical period (order 6 repeats six times per electrical cycle).
    """

    current_peak_A: float
    current_angle_deg: float
    position_deg: np.ndarray
    torque_Nm: np.ndarray
    torque_dq_Nm: np.ndarray
    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    torque_mean_Nm: float
    ripple_pct: float
    harmonic_orders: np.ndarray
    harmonic_amplitudes_Nm: np.ndarray
    iterations: np.ndarray


def _harmonics(model: MachineModel, torque: np.ndarray, mean: float):
    spectrum = np.abs(np.fft.rfft(torque)) / len(torque)
    spectrum[1:] *= 2
    # the sampled span is one torque period: harmonic k has k periods in it
    per_electrical = 2 * math.pi / torque_period(model) / model.spec.pole_pairs
    orders = np.arange(len(spectrum)) * per_electrical
    keep = (np.arange(len(spectrum)) > 0) & (spectrum > 0.01 * abs(mean))
    return np.round(orders[keep], 6), spectrum[keep]


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
    points, initial = [], None
    for k, step in enumerate(steps):
        point = solve_point(model, current_peak, current_angle, int(step), initial)
        initial = point.solution.a
        points.append(point)
        if progress:
            progress(f"torque vs position {k + 1}/{len(steps)}")
    return points


def position_study(model: MachineModel, points: Sequence[PointResult]) -> TorqueVsPosition:
    """The torque-versus-position result of points at one dq current over a torque period."""
    torque = np.array([pt.torque_maxwell_Nm for pt in points])
    mean = float(torque.mean())
    orders, amplitudes = _harmonics(model, torque, mean)
    return TorqueVsPosition(
        current_peak_A=points[0].current_peak_A,
        current_angle_deg=math.degrees(points[0].current_angle),
        position_deg=np.degrees([pt.position for pt in points]),
        torque_Nm=torque,
        torque_dq_Nm=np.array([pt.torque_dq_Nm for pt in points]),
        psi_d_Wb=np.array([pt.psi_d for pt in points]),
        psi_q_Wb=np.array([pt.psi_q for pt in points]),
        torque_mean_Nm=mean,
        ripple_pct=float(100 * np.ptp(torque) / abs(mean)) if mean else math.inf,
        harmonic_orders=orders,
        harmonic_amplitudes_Nm=amplitudes,
        iterations=np.array([pt.iterations for pt in points]),
    )


def torque_vs_position(
    model: MachineModel,
    current_peak: float,
    current_angle: float,
    steps: Sequence[int] | None = None,
    progress: Progress | None = None,
) -> tuple[TorqueVsPosition, list[PointResult]]:
    """Torque over one torque period (see :func:`torque_period`), warm-started step to step."""
    steps = ripple_steps(model) if steps is None else np.asarray(steps)
    points = solve_positions(model, current_peak, current_angle, steps, progress)
    return position_study(model, points), points


@dataclass(frozen=True, eq=False)
class TorqueVsAngle:
    """Mean torque versus current angle at a fixed current amplitude.

    Each torque is the mean over ``positions`` rotor positions spread over one torque
    period. ``mtpa_angle_deg``: the angle of maximum torque (maximum torque per ampere).
    """

    current_peak_A: float
    current_angle_deg: np.ndarray
    torque_Nm: np.ndarray
    torque_dq_Nm: np.ndarray
    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    power_factor: np.ndarray
    mtpa_angle_deg: float
    mtpa_torque_Nm: float
    positions: int


def _mean_point(model, current_peak, angle, steps, starts: dict):
    """Mean over ``steps``; each step starts from ``starts[step]`` (the same rotor step at
    the previous angle: 40 % fewer Newton steps than the previous position) and updates it."""
    points = []
    for step in steps:
        pt = solve_point(model, current_peak, angle, int(step), starts.get(int(step)))
        starts[int(step)] = pt.solution.a
        points.append(pt)
    return {k: float(np.mean([getattr(pt, k) for pt in points]))
            for k in ("torque_maxwell_Nm", "torque_dq_Nm", "psi_d", "psi_q")}


def _parabola_peak(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    """Vertex of the parabola through three points."""
    c2, c1, c0 = np.polyfit(x, y, 2)
    if c2 >= 0:
        k = int(np.argmax(y))
        return float(x[k]), float(y[k])
    xv = -c1 / (2 * c2)
    return float(xv), float(np.polyval([c2, c1, c0], xv))


def torque_vs_current_angle(
    model: MachineModel,
    current_peak: float,
    angle_step_deg: float = 10.0,
    positions: int = 4,
    progress: Progress | None = None,
) -> TorqueVsAngle:
    """Mean torque from 0 to 90 degrees of current angle, with the MTPA angle refined.

    The coarse grid has ``angle_step_deg`` spacing; the peak is then refined with two more
    angles at a quarter step on either side of the best grid angle and the vertex of the
    parabola through the three best points (a smooth peak; common practice, no source).
    """
    steps = ripple_steps(model, positions)
    angles = list(np.radians(np.arange(0.0, 90.0 + 1e-9, angle_step_deg)))
    results: dict[float, dict] = {}
    starts: dict[int, np.ndarray] = {}
    snapshots = {}
    for k, angle in enumerate(angles):
        results[angle] = _mean_point(model, current_peak, angle, steps, starts)
        snapshots[angle] = dict(starts)
        if progress:
            progress(f"torque vs current angle {k + 1}/{len(angles)} at {current_peak:g} A")
    best = max(results, key=lambda a: results[a]["torque_maxwell_Nm"])
    h = math.radians(angle_step_deg) / 4
    for angle in (best - h, best + h):
        if 0 < angle < math.pi / 2:  # start from the best grid angle's fields
            results[angle] = _mean_point(model, current_peak, angle, steps,
                                         dict(snapshots[best]))
    order = sorted(results)
    torque = np.array([results[a]["torque_maxwell_Nm"] for a in order])
    k = int(np.argmax(torque))
    k = min(max(k, 1), len(order) - 2)
    mtpa, mtpa_torque = _parabola_peak(np.array(order[k - 1:k + 2]), torque[k - 1:k + 2])
    psi_d = np.array([results[a]["psi_d"] for a in order])
    psi_q = np.array([results[a]["psi_q"] for a in order])
    pf = np.array([power_factor(pd, pq, current_peak * math.cos(a), current_peak * math.sin(a))
                   for pd, pq, a in zip(psi_d, psi_q, order)])
    return TorqueVsAngle(
        current_peak_A=current_peak,
        current_angle_deg=np.degrees(order),
        torque_Nm=torque,
        torque_dq_Nm=np.array([results[a]["torque_dq_Nm"] for a in order]),
        psi_d_Wb=psi_d,
        psi_q_Wb=psi_q,
        power_factor=pf,
        mtpa_angle_deg=math.degrees(mtpa),
        mtpa_torque_Nm=mtpa_torque,
        positions=len(steps),
    )


@dataclass(frozen=True, eq=False)
class InductanceCurves:
    """Apparent inductances versus current at rotor position zero (saturation curves).

    ``L_d_H`` = psi_d / i_d with i_q = 0; ``L_q_H`` = psi_q / i_q with i_d = 0.
    """

    current_peak_A: np.ndarray
    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    L_d_H: np.ndarray
    L_q_H: np.ndarray


def inductance_curves(
    model: MachineModel, currents: Sequence[float], progress: Progress | None = None
) -> InductanceCurves:
    """Ld(id) at iq = 0 and Lq(iq) at id = 0, at rotor position zero."""
    currents = np.asarray(currents, dtype=float)
    psi = {0.0: [], math.pi / 2: []}
    for angle in psi:
        initial = None
        for current in currents:
            pt = solve_point(model, float(current), angle, model.axis_step, initial)
            initial = pt.solution.a
            psi[angle].append(pt.psi_d if angle == 0.0 else pt.psi_q)
            if progress:
                progress(f"{'d' if angle == 0 else 'q'}-axis inductance at {current:.3g} A")
    psi_d, psi_q = np.array(psi[0.0]), np.array(psi[math.pi / 2])
    return InductanceCurves(currents, psi_d, psi_q, psi_d / currents, psi_q / currents)
