"""Evaluate one candidate machine: the rated point, ripple, current-angle and saturation studies.

``evaluate(spec)`` returns an :class:`Evaluation` without writing files; the command line
(``fluxlab evaluate``) writes its tables, figures and review sheet. Every position-averaged
figure comes from the operating-point engine (:mod:`fluxlab.studies.operating_point`) over the
machine's averaging positions (:mod:`fluxlab.studies.averaging`).
"""

from __future__ import annotations

import dataclasses
import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from fluxlab.fem.solver import linear_backend
from fluxlab.machine.model import MachineModel, build_model
from fluxlab.machine.terminal import terminal_figures
from fluxlab.mesh.machine_mesh import build_mesh
from fluxlab.spec.machine_file import without_skew
from fluxlab.spec.types import MachineSpec
from fluxlab.studies.averaging import (
    averaging_positions,
    effective_skew_deg,
    periods_per_revolution,
    residual_orders,
    torque_period,
)
from fluxlab.studies.curves import (
    ANGLE_STEP_DEG,
    InductanceCurves,
    TorqueVsAngle,
    TorqueVsPosition,
    inductance_curves,
    join_inductance_curves,
    position_study,
    ripple_steps,
    solve_position_sets,
    torque_vs_current_angle,
)
from fluxlab.studies.flux_density import region_flux_densities
from fluxlab.studies.operating_point import (
    AveragedPoint,
    OperatingPoints,
    PointResult,
    averaged_points,
)
from fluxlab.studies.pool import StudyPool
from fluxlab.version import __version__

__all__ = ["StudySettings", "Evaluation", "evaluate", "averaging_note", "CONVENTIONS"]

log = logging.getLogger(__name__)

#: Conventions stated in every summary.
CONVENTIONS = ("peak phase currents and voltages; amplitude-invariant Park transform; current "
               "angle from the d-axis; d-axis = least reluctance; saliency = Ld/Lq; "
               "*_apparent: 2-D model, no end winding; *_with_end_leakage, power_factor, "
               "terminal voltage: with the end-winding leakage")


@dataclass(frozen=True)
class StudySettings:
    """How much work an evaluation does.

    ``studies``: ``"full"`` (all studies) or ``"point"`` (the rated point only: the cheap
    mode of sweeps). ``angle_step_deg``: grid of the current-angle study (the MTPA is then
    searched between grid angles); ``inductance_points``: currents of the saturation curves,
    from ``inductance_min_fraction`` to ``inductance_max_fraction`` times rated. The rotor
    positions of every mean are the machine's (``mesh.averaging_positions``).
    """

    studies: str = "full"
    angle_step_deg: float = ANGLE_STEP_DEG
    inductance_points: int = 6
    inductance_min_fraction: float = 1 / 3
    inductance_max_fraction: float = 2.0

    def __post_init__(self):
        if self.studies not in ("full", "point"):
            raise ValueError(f"studies = {self.studies!r}: must be 'full' or 'point'")
        if not 0 < self.angle_step_deg <= 45:
            raise ValueError(f"angle_step_deg = {self.angle_step_deg}: must be in (0, 45]")
        if self.inductance_points < 2:
            raise ValueError(f"inductance_points = {self.inductance_points}: need at least 2")
        if not 0 < self.inductance_min_fraction < self.inductance_max_fraction:
            raise ValueError(
                f"inductance fractions {self.inductance_min_fraction}, "
                f"{self.inductance_max_fraction}: need 0 < min < max")


@dataclass(frozen=True, eq=False)
class Evaluation:
    """Results of one evaluation. ``summary`` holds the key figures (JSON-able).

    ``rated``: the rated operating point averaged over rotor positions; ``rated_point``: its
    solved field at rotor position zero (for the field figure and the flux densities).
    ``timings_s``: wall time in s of ``mesh`` (absent when a model was given), ``model``
    (assembly) and ``studies`` (the solves and their post-processing).
    ``torque_vs_position_overload``: the ripple study at the overload current's MTPA angle
    (None without an overload current, or in the rated-point mode).
    """

    spec: MachineSpec
    model: MachineModel
    settings: StudySettings
    summary: dict
    rated: AveragedPoint
    rated_point: PointResult
    torque_vs_position: TorqueVsPosition | None
    torque_vs_angle: list[TorqueVsAngle]
    inductances: InductanceCurves | None
    timings_s: dict = field(default_factory=dict)
    torque_vs_position_unskewed: TorqueVsPosition | None = None
    torque_vs_position_overload: TorqueVsPosition | None = None

    def ripple_studies(self) -> dict[str, TorqueVsPosition]:
        """The torque-versus-position studies by label (``rated``, ``overload MTPA``)."""
        found = {"rated": self.torque_vs_position,
                 "overload MTPA": self.torque_vs_position_overload}
        return {label: study for label, study in found.items() if study is not None}

    def operating_points(self) -> OperatingPoints:
        """The rated point and the MTPA per current that the envelope reports as well."""
        return OperatingPoints(self.rated, {s.current_peak_A: s.mtpa
                                            for s in self.torque_vs_angle})


def averaging_note(spec: MachineSpec) -> dict:
    """How the position-averaged figures of ``spec`` are averaged (JSON-able)."""
    slots, p = spec.stator.slots, spec.pole_pairs
    count = averaging_positions(spec)
    period = math.degrees(torque_period(slots, p))
    return {
        "positions": count,
        "interval_deg": period,
        "interval_electrical_deg": period * p,
        "periods_per_revolution": periods_per_revolution(slots, p),
        "orders_left_in_mean": residual_orders(slots, p, count),
        "order_convention": "harmonic orders per electrical period",
        "torque": "3/2 p (<psi_d> i_q - <psi_q> i_d) of the flux linkages averaged over the "
                  "positions, equally spaced over the interval from rotor position 0",
    }


def _apparent(psi: float, current: float) -> float:
    return psi / current if abs(current) > 1e-12 else math.nan


def _one_axis_at(curves: InductanceCurves | None, current: float) -> dict:
    """Apparent inductances with the current on one axis at ``current`` (on the curves)."""
    if curves is None:
        return {"Ld_one_axis_H": None, "Lq_one_axis_H": None, "saliency_one_axis": None}
    ld = float(np.interp(current, curves.current_peak_A, curves.Ld_one_axis_H))
    lq = float(np.interp(current, curves.current_peak_A, curves.Lq_one_axis_H))
    return {"Ld_one_axis_H": ld, "Lq_one_axis_H": lq, "saliency_one_axis": ld / lq}


def _get(study, name):
    return getattr(study, name) if study is not None else None


def _summary(evaluation_parts: dict, settings: StudySettings, elapsed: float) -> dict:
    spec, model = evaluation_parts["spec"], evaluation_parts["model"]
    rated, ripple = evaluation_parts["rated"], evaluation_parts["ripple"]
    studies = evaluation_parts["angle_studies"]
    rated_study = studies[0] if studies else None
    overload = studies[1] if len(studies) > 1 else None
    l_d, l_q = _apparent(rated.psi_d, rated.i_d), _apparent(rated.psi_q, rated.i_q)
    return {
        "machine": spec.name,
        "current_peak_A": spec.operating.current_peak_A,
        "current_angle_deg": rated.current_angle_deg,
        "psi_d_Wb": rated.psi_d,
        "psi_q_Wb": rated.psi_q,
        "Ld_apparent_H": l_d,
        "Lq_apparent_H": l_q,
        "saliency_apparent": l_d / l_q if l_q else math.nan,
        **_one_axis_at(evaluation_parts["curves"], spec.operating.current_peak_A),
        "torque_mean_Nm": rated.torque_Nm,
        "torque_maxwell_mean_Nm": ripple.torque_maxwell_mean_Nm if ripple else None,
        "torque_ripple_pct": ripple.ripple_pct if ripple else None,
        **terminal_figures(spec, rated.psi_d, rated.psi_q, rated.i_d, rated.i_q,
                           rated.torque_Nm, spec.operating.speed_rpm),
        "mtpa_angle_deg": _get(rated_study, "mtpa_angle_deg"),
        "mtpa_torque_Nm": _get(rated_study, "mtpa_torque_Nm"),
        "overload_current_peak_A": spec.operating.overload_current_peak_A,
        "overload_mtpa_angle_deg": _get(overload, "mtpa_angle_deg"),
        "overload_mtpa_torque_Nm": _get(overload, "mtpa_torque_Nm"),
        "overload_torque_ripple_pct": _get(evaluation_parts["overload_ripple"], "ripple_pct"),
        "mtpa_tolerance_deg": _get(rated_study, "mtpa_tolerance_deg"),
        "mtpa_solves": sum(s.mtpa_solves for s in studies) if studies else None,
        "averaging": {**averaging_note(spec),
                      "ripple_positions": len(ripple.torque_Nm) if ripple else None},
        **_skew_figures(model, evaluation_parts["unskewed"]),
        "flux_density": region_flux_densities(model, evaluation_parts["point"].solution),
        "nodes": int(model.mesh.mesh.p.shape[1]),
        "elements": int(model.mesh.mesh.t.shape[1]),
        "element_order": spec.mesh.element_order,
        "sector_deg": math.degrees(model.mesh.sector_angle),
        "rotor_step_deg": math.degrees(model.step_angle),
        "solver": {"newton_rtol": model.newton_rtol,
                   "linear_solver": linear_backend(model.problem, model.linear_solver).describe()},
        "studies": settings.studies,
        "conventions": CONVENTIONS,
        "fluxlab_version": __version__,
        "wall_time_s": elapsed,
    }


def _skew_figures(model, unskewed: TorqueVsPosition | None) -> dict:
    """The skew (effective angle on this mesh, slices, 2-D solves per operating point) and,
    for a skewed rotor, the same rotor's figures straight."""
    if model.spec.skew is None:
        return {"skew": None}
    return {
        "skew": {"angle_deg": effective_skew_deg(model), "slices": model.spec.skew.slices,
                 "solves_per_point": model.spec.skew.slices},
        "torque_mean_unskewed_Nm": unskewed.torque_maxwell_mean_Nm if unskewed else None,
        "torque_ripple_unskewed_pct": unskewed.ripple_pct if unskewed else None,
    }


_RIPPLE = "torque vs position"
_ANGLE = "torque vs current angle"
_INDUCTANCE = "inductance curve"


def _ripple_tasks(model, currents: dict[str, tuple[float, float]], pieces: int,
                  fields: dict[str, dict] | None = None) -> list:
    """The ripple studies at ``currents`` (label -> (peak A, angle rad)) as ``pieces`` chains
    of neighbouring positions, one task each, every chain solving all the currents at each
    of its steps (:func:`fluxlab.studies.curves.solve_position_sets`): short tasks keep both
    cores busy to the end. A chain starts from ``fields`` (label -> field per rotor step of
    the same current, from the angle study) where its first step has one, else cold."""
    chains = [c for c in np.array_split(ripple_steps(model), pieces) if c.size]
    fields = fields or {}
    return [(f"{_RIPPLE} ({', '.join(currents)}), part {k + 1}/{len(chains)}",
             solve_position_sets,
             (tuple(currents.values()), c, None,
              tuple(fields.get(label, {}).get(int(c[0])) for label in currents)))
            for k, c in enumerate(chains)]


def _ripple_results(model, done: dict, labels: list[str]) -> dict:
    """Each current's ripple study (label -> (TorqueVsPosition, points in step order)) from
    the finished chains of :func:`_ripple_tasks`."""
    chains = [sets for name, sets in done.items() if name.startswith(_RIPPLE)]
    out = {}
    for k, label in enumerate(labels):
        points = sorted((pt for sets in chains for pt in sets[k]), key=lambda pt: pt.step)
        out[label] = (position_study(model, points), points)
    return out


def _inductance_currents(spec: MachineSpec, settings: StudySettings) -> np.ndarray:
    """Currents of the saturation curves (peak A): the settings' span, with the rated and the
    overload current on them (their points are the current-angle curves' ends)."""
    op = spec.operating
    span = op.current_peak_A * np.linspace(settings.inductance_min_fraction,
                                           settings.inductance_max_fraction,
                                           settings.inductance_points)
    wanted = [c for c in (op.current_peak_A, op.overload_current_peak_A) if c is not None]
    return np.array(sorted({*span.round(9).tolist(), *wanted}))


def _full_tasks(model, settings, angle) -> list:
    """The independent studies, the longest first: the current-angle studies (without their
    0 and 90 deg ends, which the saturation curves solve), the two saturation curves. The
    rated angle joins the rated grid."""
    op = model.spec.operating
    tasks = []
    for label, current in (("overload", op.overload_current_peak_A),
                           ("rated", op.current_peak_A)):
        if current is not None:
            extra = [math.degrees(angle)] if angle is not None and label == "rated" else []
            tasks.append((f"{_ANGLE}, {label}", torque_vs_current_angle,
                          (current, settings.angle_step_deg, None, None, extra, False)))
    currents = _inductance_currents(model.spec, settings)
    for axis in ("d", "q"):
        tasks.append((f"{_INDUCTANCE}, {axis}-axis", inductance_curves,
                      (currents, None, None, (axis,))))
    return tasks


def _full_studies(model, settings, angle, pool, say) -> dict:
    """Run the full studies in ``pool``; the parts of the evaluation."""
    op = model.spec.operating
    say(f"running the studies in {pool.workers} process(es)")
    done = pool.run(model, _full_tasks(model, settings, angle), say)
    curves = join_inductance_curves(done[f"{_INDUCTANCE}, d-axis"],
                                    done[f"{_INDUCTANCE}, q-axis"])
    studies = [study.with_points(curves.ends_at(study.current_peak_A))
               for study in (done.get(f"{_ANGLE}, {k}") for k in ("rated", "overload"))
               if study is not None]
    rated = studies[0].mtpa if angle is None else studies[0].at(math.degrees(angle))
    # the ripple studies wait for their MTPA angles and run together, step by step
    currents = {"rated": (op.current_peak_A, rated.current_angle)}
    fields = {"rated": studies[0].fields_at(rated.current_angle)}
    if len(studies) > 1:
        currents["overload"] = (op.overload_current_peak_A, studies[1].mtpa.current_angle)
        fields["overload"] = studies[1].fields_at(studies[1].mtpa.current_angle)
    done.update(pool.run(model, _ripple_tasks(model, currents, pool.workers, fields), say))
    ripples = _ripple_results(model, done, list(currents))
    ripple, points = ripples["rated"]
    overload = ripples["overload"][0] if "overload" in ripples else None
    unskewed = None
    if model.spec.skew is not None:  # the same rotor straight, for the comparison
        plain = dataclasses.replace(build_model(without_skew(model.spec), model.mesh,
                                                model.linear_solver),
                                    newton_rtol=model.newton_rtol)
        say("torque vs position without skew, for comparison")
        plain_done = pool.run(plain, _ripple_tasks(plain, {"rated": currents["rated"]},
                                                   pool.workers), say)
        unskewed = _ripple_results(plain, plain_done, ["rated"])["rated"][0]
    return {"rated": rated, "point": points[0], "ripple": ripple, "angle_studies": studies,
            "curves": curves, "unskewed": unskewed, "overload_ripple": overload}


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
    at the MTPA angle of the rated-current study when the angle is not given (quick mode:
    45 deg). ``workers`` > 1 runs the independent studies in that many processes (leave it
    at 1 inside a sweep that already uses the cores). ``linear_solver``: see
    :class:`fluxlab.machine.model.MachineModel`.
    """

    settings = settings or StudySettings(**({"studies": studies} if studies else {}))
    say = progress or (lambda message: None)
    start = time.perf_counter()
    op = spec.operating
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
            angle = math.pi / 4 if op.current_angle is None else op.current_angle
            rated, points = averaged_points(model, op.current_peak_A, angle)
            parts = {"rated": rated, "point": points[0], "ripple": None, "angle_studies": [],
                     "curves": None, "unskewed": None, "overload_ripple": None}
        else:
            parts = _full_studies(model, settings, op.current_angle, pool, say)
    timings["studies"] = time.perf_counter() - start - sum(timings.values())
    parts.update(spec=spec, model=model)
    summary = _summary(parts, settings, time.perf_counter() - start)
    return Evaluation(spec, model, settings, summary, parts["rated"], parts["point"],
                      parts["ripple"], parts["angle_studies"], parts["curves"], timings,
                      parts["unskewed"], parts["overload_ripple"])
