"""Evaluate one candidate machine: the rated point, ripple, current-angle and saturation studies.

``evaluate(spec)`` returns an :class:`Evaluation` without writing files; the command line
(``fluxlab evaluate``) writes its tables, figures and review sheet.
"""

from __future__ import annotations

import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from . import __version__
from .mesh import build_mesh
from .model import MachineModel, build_model
from .solver import linear_backend
from .spec import MachineSpec
from .studies import (
    InductanceCurves,
    PointResult,
    TorqueVsAngle,
    TorqueVsPosition,
    inductance_curves,
    position_study,
    power_factor,
    ripple_steps,
    solve_positions,
    torque_vs_current_angle,
    torque_vs_position,
)

__all__ = ["StudySettings", "Evaluation", "evaluate"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class StudySettings:
    """How much work an evaluation does.

    ``studies``: ``"full"`` (all studies) or ``"point"`` (the rated point only, averaged over
    ``angle_positions`` rotor positions: the cheap mode of sweeps).
    ``angle_step_deg``: grid of the current-angle study; ``angle_positions``: rotor positions
    averaged per current angle; ``inductance_points``: currents of the saturation curves,
    from ``inductance_min_fraction`` to ``inductance_max_fraction`` times rated.
    """

    studies: str = "full"
    angle_step_deg: float = 10.0
    angle_positions: int = 4
    inductance_points: int = 8
    inductance_min_fraction: float = 0.1
    inductance_max_fraction: float = 2.0

    def __post_init__(self):
        from .errors import SpecError

        if self.studies not in ("full", "point"):
            raise SpecError(f"studies = {self.studies!r}: must be 'full' or 'point'")
        if not 0 < self.angle_step_deg <= 45:
            raise SpecError(f"angle_step_deg = {self.angle_step_deg}: must be in (0, 45]")
        if self.angle_positions < 1 or self.inductance_points < 2:
            raise SpecError(
                f"angle_positions = {self.angle_positions}, inductance_points = "
                f"{self.inductance_points}: need at least 1 and 2"
            )


@dataclass(frozen=True, eq=False)
class Evaluation:
    """Results of one evaluation. ``summary`` holds the key figures (JSON-able).

    ``timings_s``: wall time in s of ``mesh`` (absent when a model was given), ``model``
    (assembly) and ``studies`` (the solves and their post-processing).
    """

    spec: MachineSpec
    model: MachineModel
    settings: StudySettings
    summary: dict
    rated_point: PointResult
    torque_vs_position: TorqueVsPosition | None
    torque_vs_angle: list[TorqueVsAngle]
    inductances: InductanceCurves | None
    timings_s: dict = field(default_factory=dict)


def _summary(spec, model, settings, angle, ripple, angle_studies, point, elapsed) -> dict:
    psi_d, psi_q = ripple_means(ripple) if ripple is not None else (point.psi_d, point.psi_q)
    i_d, i_q = point.i_d, point.i_q
    l_d = psi_d / i_d if abs(i_d) > 1e-12 else math.nan
    l_q = psi_q / i_q if abs(i_q) > 1e-12 else math.nan
    torque = ripple.torque_mean_Nm if ripple is not None else point.torque_maxwell_Nm
    torque_dq = 1.5 * spec.pole_pairs * (psi_d * i_q - psi_q * i_d)
    rated_angle = angle_studies[0] if angle_studies else None
    return {
        "machine": spec.name,
        "current_peak_A": spec.operating.current_peak_A,
        "current_angle_deg": math.degrees(angle),
        "psi_d_Wb": psi_d,
        "psi_q_Wb": psi_q,
        "Ld_H": l_d,
        "Lq_H": l_q,
        "saliency_ratio": l_d / l_q if l_q else math.nan,
        "torque_mean_Nm": torque,
        "torque_dq_Nm": torque_dq,
        "torque_ripple_pct": ripple.ripple_pct if ripple is not None else None,
        "mtpa_angle_deg": rated_angle.mtpa_angle_deg if rated_angle else None,
        "mtpa_torque_Nm": rated_angle.mtpa_torque_Nm if rated_angle else None,
        "power_factor": power_factor(psi_d, psi_q, i_d, i_q),
        "overload_current_peak_A": spec.operating.overload_current_peak_A,
        "overload_mtpa_angle_deg": (angle_studies[1].mtpa_angle_deg
                                    if len(angle_studies) > 1 else None),
        "overload_mtpa_torque_Nm": (angle_studies[1].mtpa_torque_Nm
                                    if len(angle_studies) > 1 else None),
        "b_max_T": float(point.solution.b_norm.max()),
        "nodes": int(model.mesh.mesh.p.shape[1]),
        "elements": int(model.mesh.mesh.t.shape[1]),
        "element_order": spec.mesh.element_order,
        "sector_deg": math.degrees(model.mesh.sector_angle),
        "rotor_step_deg": math.degrees(model.step_angle),
        "solver": {"newton_rtol": model.newton_rtol,
                   "linear_solver": linear_backend(model.problem, model.linear_solver).describe()},
        "studies": settings.studies,
        "conventions": "peak phase currents; amplitude-invariant Park transform; current "
                       "angle from the d-axis; d-axis = least reluctance; saliency = Ld/Lq",
        "fluxlab_version": __version__,
        "wall_time_s": elapsed,
    }


def ripple_means(ripple: TorqueVsPosition) -> tuple[float, float]:
    """Mean psi_d and psi_q over the positions of a ripple study, Wb."""
    return float(ripple.psi_d_Wb.mean()), float(ripple.psi_q_Wb.mean())


def _point_task(model, current, angle, positions):
    return torque_vs_position(model, current, angle, ripple_steps(model, positions))


_RIPPLE = "torque vs position"


def _ripple_tasks(model, current, angle, pieces: int) -> list:
    """The ripple study as ``pieces`` chains of neighbouring positions, one task each: short
    tasks keep both cores busy to the end (a piece costs one cold start more)."""
    chains = [c for c in np.array_split(ripple_steps(model), pieces) if c.size]
    return [(f"{_RIPPLE}, part {k + 1}/{len(chains)}", solve_positions, (current, angle, c))
            for k, c in enumerate(chains)]


def _ripple_result(model, done: dict) -> tuple[TorqueVsPosition, list[PointResult]]:
    """The ripple study from its finished chains (:func:`_ripple_tasks`), in step order."""
    points = sorted((pt for name, chain in done.items() if name.startswith(_RIPPLE)
                     for pt in chain), key=lambda pt: pt.step)
    return position_study(model, points), points


def _full_tasks(model, settings, angle, workers: int) -> list:
    """The independent studies, the longest first: the current-angle studies, the ripple
    chains, the saturation curves."""
    op = model.spec.operating
    tasks = []
    for label, current in (("overload", op.overload_current_peak_A),
                           ("rated", op.current_peak_A)):
        if current is not None:
            tasks.append((f"torque vs current angle, {label}", torque_vs_current_angle,
                          (current, settings.angle_step_deg, settings.angle_positions)))
    if angle is not None:
        tasks += _ripple_tasks(model, op.current_peak_A, angle, workers + 1 if workers > 1 else 1)
    currents = op.current_peak_A * np.linspace(
        settings.inductance_min_fraction, settings.inductance_max_fraction,
        settings.inductance_points)
    tasks.append(("inductance curves", inductance_curves, (currents,)))
    return tasks


def evaluate(
    spec: MachineSpec,
    settings: StudySettings | None = None,
    *,
    studies: str | None = None,
    progress: Callable[[str], None] | None = None,
    model: MachineModel | None = None,
    workers: int = 1,
    linear_solver: str = "auto",
) -> Evaluation:
    """Evaluate a candidate: model once, then the studies (see :class:`StudySettings`).

    The rated point uses ``operating.current_peak_A`` at ``operating.current_angle_deg``, or
    at the MTPA angle of the rated-current study when the angle is not given. ``workers``
    > 1 runs the independent studies in that many processes (leave it at 1 inside a sweep
    that already uses the cores). ``linear_solver``: see :class:`fluxlab.model.MachineModel`.
    """
    from .study_pool import StudyPool

    settings = settings or StudySettings(**({"studies": studies} if studies else {}))
    say = progress or (lambda message: None)
    start = time.perf_counter()
    op = spec.operating
    angle = op.current_angle
    angle_studies: list[TorqueVsAngle] = []
    curves = None
    # the workers start now and import their libraries while this process meshes
    with StudyPool(workers if settings.studies == "full" else 1) as pool:
        say("meshing and assembling")
        timings = {}
        if model is None:
            mesh = build_mesh(spec)
            timings["mesh"] = time.perf_counter() - start
            model = build_model(spec, mesh, linear_solver)
        timings["model"] = time.perf_counter() - start - timings.get("mesh", 0.0)
        if settings.studies == "point":
            angle = math.pi / 4 if angle is None else angle
            ripple, points = _point_task(model, op.current_peak_A, angle,
                                         settings.angle_positions)
        else:
            say(f"running the studies in {pool.workers} process(es)")
            done = pool.run(model, _full_tasks(model, settings, angle, pool.workers), say)
            angle_studies = [done[k] for k in ("torque vs current angle, rated",
                                               "torque vs current angle, overload") if k in done]
            curves = done["inductance curves"]
            if angle is None:
                angle = math.radians(angle_studies[0].mtpa_angle_deg)
                done.update(pool.run(model, _ripple_tasks(model, op.current_peak_A, angle,
                                                          pool.workers), say))
            ripple, points = _ripple_result(model, done)
    timings["studies"] = time.perf_counter() - start - sum(timings.values())
    point = points[0]
    summary = _summary(spec, model, settings, angle, ripple, angle_studies, point,
                       time.perf_counter() - start)
    if settings.studies == "point":
        summary["torque_ripple_pct"] = None  # a few positions do not resolve the ripple
        ripple = None
    return Evaluation(spec, model, settings, summary, point, ripple, angle_studies, curves,
                      timings)
