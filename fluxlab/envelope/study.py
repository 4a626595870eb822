"""The whole operating-envelope study of one machine: maps, MTPA, limits, losses, ribs.

The rotor is checked by the finite-element stress peak (:mod:`fluxlab.stress`) at the top
speed and at ``drive.overspeed_rpm`` if given: one elastic solve serves both, the stress
scaling with the square of the speed. The mean rib-stress estimate stays as a cross-check.
"""

from __future__ import annotations

import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from fluxlab.envelope.drive import Envelope, phase_voltage_limit, torque_speed_envelope
from fluxlab.envelope.efficiency import (
    EfficiencyMap,
    LossModel,
    efficiency_map,
    mechanical_loss,
)
from fluxlab.envelope.fluxmap import FluxMap, current_grid, flux_map
from fluxlab.envelope.interp import FluxInterpolator
from fluxlab.envelope.ironloss import IronLoss, efficiency, iron_loss_estimate
from fluxlab.envelope.mtpa import MTPATrajectory, mtpa_trajectory, with_engine_points
from fluxlab.envelope.ribstress import RibStress, rib_stress
from fluxlab.errors import MaterialError, SpecError
from fluxlab.machine.end_winding import end_winding_leakage
from fluxlab.machine.model import build_model
from fluxlab.machine.resistance import PhaseResistance, phase_resistance
from fluxlab.machine.terminal import terminal_figures
from fluxlab.spec.types import MachineSpec
from fluxlab.stress.study import RotorStress, rotor_stress, speed_checks
from fluxlab.studies.averaging import averaging_positions
from fluxlab.studies.curves import ANGLE_STEP_DEG, torque_vs_current_angle
from fluxlab.studies.operating_point import AveragedPoint, OperatingPoints
from fluxlab.studies.pool import run_tasks

__all__ = [
    "EnvelopeSettings",
    "EnvelopeResult",
    "envelope_settings",
    "envelope_study",
    "operating_points",
    "loss_model",
    "efficiency_grid",
    "grid_warnings",
]

log = logging.getLogger(__name__)

#: Speeds and torques of the efficiency map, each.
EFFICIENCY_POINTS = 40
#: Largest deviation of the flux map's torque from the solver's at a point the solver
#: computed directly before the map's figures are flagged as too coarse (judgement: the
#: figures are read to a few percent; common practice, no source).
MAP_TORQUE_TOLERANCE = 0.02


@dataclass(frozen=True)
class EnvelopeSettings:
    """Settings of an envelope study, SI units except where the name says.

    Defaults come from the machine file's ``drive`` section (see :func:`envelope_settings`).
    ``map_positions``: rotor positions averaged per map point (the machine's averaging
    count by default); ``loss_samples``: rotor positions per electrical period of the
    iron-loss sweep (0 skips the iron loss); ``speed_points``: speeds of the envelope from 0
    to ``max_speed_rpm``.
    """

    current_limit_peak_A: float
    voltage_limit_peak_V: float
    max_speed_rpm: float
    map_points: int
    map_max_current_A: float
    map_positions: int
    speed_points: int = 61
    loss_samples: int = 48
    rib_safety_factor: float = 1.5

    def __post_init__(self):
        problems = []
        if not self.map_max_current_A >= self.current_limit_peak_A > 0:
            problems.append(f"flux map max current {self.map_max_current_A} A: must be at "
                            f"least the current limit {self.current_limit_peak_A} A (> 0)")
        if not (math.isfinite(self.max_speed_rpm) and self.max_speed_rpm > 0):
            problems.append(f"max speed {self.max_speed_rpm!r} rpm: must be > 0")
        if self.speed_points < 2:
            problems.append(f"speed points = {self.speed_points}: need at least 2")
        if self.loss_samples != 0 and self.loss_samples < 4:
            problems.append(f"iron loss samples = {self.loss_samples}: 0 (skip) or >= 4")
        if self.map_points < 2 or self.map_positions < 1:
            problems.append(f"flux map points = {self.map_points}, positions = "
                            f"{self.map_positions}: need at least 2 and 1")
        if problems:
            raise ValueError("; ".join(problems))


def envelope_settings(spec: MachineSpec, **overrides) -> EnvelopeSettings:
    """Settings from ``spec.drive`` (defaults filled in), with keyword overrides."""
    d, op = spec.drive, spec.operating
    limit = d.current_limit_peak_A or op.overload_current_peak_A or op.current_peak_A
    values = dict(
        current_limit_peak_A=limit,
        voltage_limit_peak_V=phase_voltage_limit(d.dc_link_voltage_V, d.modulation_limit),
        max_speed_rpm=spec.top_speed_rpm,
        map_points=d.flux_map_points,
        map_max_current_A=d.flux_map_max_current_peak_A or limit,
        map_positions=d.flux_map_positions or averaging_positions(spec),
        rib_safety_factor=d.rib_safety_factor,
    )
    values.update({k: v for k, v in overrides.items() if v is not None})
    return EnvelopeSettings(**values)


@dataclass(frozen=True, eq=False)
class EnvelopeResult:
    """Everything an envelope study found; ``summary`` holds the key figures (JSON-able).

    ``operating``: the engine's points (:class:`OperatingPoints`) that the summary reports
    for the rated current and the current limit; the flux maps add the points between.
    ``stress``: the rotor's finite-element stress field (None when the rotor steel lacks
    elastic data), ``stress_warnings`` where its safety factor is too low.
    """

    spec: MachineSpec
    settings: EnvelopeSettings
    flux_map: FluxMap
    mtpa: MTPATrajectory
    resistance: PhaseResistance
    envelope: Envelope
    iron_loss: IronLoss | None
    rated_point: dict
    ribs: RibStress
    operating: OperatingPoints
    summary: dict
    timings_s: dict = field(default_factory=dict)
    efficiency_map: EfficiencyMap | None = None
    stress: RotorStress | None = None
    stress_warnings: tuple[str, ...] = ()


def operating_points(model, currents: list[float], workers: int = 1,
                     progress: Callable[[str], None] | None = None) -> OperatingPoints:
    """The rated point and the MTPA at ``currents`` (peak A) by the operating-point engine.

    The same studies as :func:`fluxlab.studies.evaluate.evaluate` (current-angle grid and bounded
    MTPA search, :func:`fluxlab.studies.curves.torque_vs_current_angle`), run in ``workers``.
    """

    op = model.spec.operating
    rated_angle = [] if op.current_angle is None else [math.degrees(op.current_angle)]
    currents = sorted({op.current_peak_A, *currents})
    tasks = [(f"MTPA at {c:g} A", torque_vs_current_angle,
              (c, ANGLE_STEP_DEG, None, None, rated_angle if c == op.current_peak_A else []))
             for c in currents]
    done = run_tasks(model, tasks, workers, progress)
    studies = {c: done[name] for c, (name, _, _) in zip(currents, tasks)}
    rated_study = studies[op.current_peak_A]
    rated = (rated_study.mtpa if op.current_angle is None
             else rated_study.at(math.degrees(op.current_angle)))
    return OperatingPoints(rated, {c: s.mtpa for c, s in studies.items()})


def loss_model(spec: MachineSpec, fmap: FluxMap, rated: AveragedPoint, res: PhaseResistance,
               iron: IronLoss | None, max_speed_rpm: float) -> LossModel:
    """The losses' inputs: the rated point's iron loss referred to the flux map's |psi| there."""
    psi_d, psi_q = FluxInterpolator(fmap).psi(rated.i_d, rated.i_q)
    alphas = {name: spec.materials[name.split()[0]].loss.alpha for name in
              ("stator teeth", "stator yoke", "rotor")} if iron is not None else {}
    return LossModel(res.resistance_Ohm, iron, float(math.hypot(psi_d, psi_q)), alphas,
                     spec.drive.mechanical_loss_at_max_speed_W, max_speed_rpm)


def efficiency_grid(env: Envelope, points: int = EFFICIENCY_POINTS):
    """Speeds and torques of the efficiency map: ``points`` each, from 1/points of the top
    speed and of the largest envelope torque up to them (the torque to 0.999 of it: the
    map's 0.5 deg angle grid reaches the envelope's refined MTPA torque within 1e-4)."""
    top_speed, top_torque = float(env.speed_rpm.max()), 0.999 * float(env.torque_Nm.max())
    return (np.linspace(top_speed / points, top_speed, points),
            np.linspace(top_torque / points, top_torque, points))


def _rated_point(spec, rated: AveragedPoint, iron, losses: LossModel) -> dict:
    """The rated point at the rated speed: terminal figures (end leakage included), losses."""
    terminal = terminal_figures(spec, rated.psi_d, rated.psi_q, rated.i_d, rated.i_q,
                                rated.torque_Nm, spec.operating.speed_rpm)
    fe = iron.total_W if iron is not None else math.nan
    cu = terminal["copper_loss_W"]
    mech = float(mechanical_loss(losses, terminal["speed_rpm"]))
    return {"current_peak_A": rated.current_peak_A, "current_angle_deg": rated.current_angle_deg,
            "speed_rpm": terminal["speed_rpm"], "torque_Nm": rated.torque_Nm,
            "power_W": terminal["power_W"], "copper_loss_W": cu, "iron_loss_W": fe,
            "mechanical_loss_W": mech, "efficiency": efficiency(terminal["power_W"], cu, fe, mech),
            "power_factor": terminal["power_factor"],
            "power_factor_2d": terminal["power_factor_2d"],
            "terminal_voltage_peak_V": terminal["terminal_voltage_peak_V"],
            "copper_mass_kg": terminal["copper_mass_kg"]}


def envelope_study(spec: MachineSpec, settings: EnvelopeSettings | None = None, *,
                   model=None, workers: int = 1,
                   progress: Callable[[str], None] | None = None,
                   operating: OperatingPoints | None = None) -> EnvelopeResult:
    """Run the envelope study of ``spec`` (FEM flux map and iron-loss sweep in ``workers``).

    The rated point and the MTPA at the rated current and the current limit come from the
    operating-point engine (``operating``, as an evaluation found them, or solved here), so
    they equal :func:`fluxlab.studies.evaluate.evaluate`'s; the flux maps, averaged over the same
    rotor positions, add the trajectory and the torque-speed envelope between them. Iron
    loss is computed at the rated point at the rated speed; it is skipped, with a warning,
    when a steel has no loss coefficients.
    """

    settings = settings or envelope_settings(spec)
    say = progress or (lambda message: None)
    start = time.perf_counter()
    model = model or build_model(spec)
    timings = {"model": time.perf_counter() - start}
    if operating is None or settings.current_limit_peak_A not in operating.mtpa:
        say("rated point and MTPA")
        operating = operating_points(model, [settings.current_limit_peak_A], workers, say)
    timings["operating_points"] = time.perf_counter() - start - sum(timings.values())
    grid = current_grid(settings.map_max_current_A, settings.map_points)
    say(f"flux map {grid.size} x {grid.size}")
    fmap = flux_map(model, grid, grid, settings.map_positions, workers, say)
    timings["flux_map"] = time.perf_counter() - start - sum(timings.values())
    mtpa = with_engine_points(mtpa_trajectory(fmap, np.linspace(0, settings.current_limit_peak_A,
                                                                21)), operating.mtpa)
    res = phase_resistance(spec)
    speeds = np.linspace(0.0, settings.max_speed_rpm, settings.speed_points)
    leakage = end_winding_leakage(spec)
    env = torque_speed_envelope(fmap, res.resistance_Ohm, settings.current_limit_peak_A,
                                settings.voltage_limit_peak_V, speeds, leakage.inductance_H)
    rated = operating.rated
    iron = None
    if settings.loss_samples:
        try:
            say("iron loss position sweep")
            iron = iron_loss_estimate(model, rated.current_peak_A, rated.current_angle,
                                      spec.operating.speed_rpm, settings.loss_samples,
                                      workers, say)
        except MaterialError as err:
            log.warning("iron loss skipped: %s", err)
    timings["iron_loss"] = time.perf_counter() - start - sum(timings.values())
    ribs = rib_stress(spec, settings.max_speed_rpm, settings.rib_safety_factor)
    say("rotor stress")
    stress, checks, stress_warnings = _rotor_stress(spec, settings)
    timings["rotor_stress"] = time.perf_counter() - start - sum(timings.values())
    losses = loss_model(spec, fmap, rated, res, iron, settings.max_speed_rpm)
    rated_point = _rated_point(spec, rated, iron, losses)
    emap = efficiency_map(fmap, env, losses, *efficiency_grid(env))
    warnings = grid_warnings(fmap, operating)
    for warning in warnings:
        log.warning("%s", warning)
    summary = {**_summary(settings, env, res, rated_point, ribs, fmap, operating),
               **_efficiency_summary(emap, spec), "grid_warnings": warnings,
               "rotor_stress": checks}
    timings["efficiency_map"] = time.perf_counter() - start - sum(timings.values())
    return EnvelopeResult(spec, settings, fmap, mtpa, res, env, iron, rated_point, ribs,
                          operating, summary, timings, emap, stress, tuple(stress_warnings))


def _rotor_stress(spec: MachineSpec, settings: EnvelopeSettings):
    """The finite-element stress at the top speed and the overspeed; (None, note, []) when
    the rotor steel has no elastic data (logged: the envelope itself needs none)."""
    try:
        stress = rotor_stress(spec)
    except SpecError as err:
        log.warning("rotor stress skipped: %s", err)
        return None, {"skipped": str(err)}, []
    speeds = {"top_speed": settings.max_speed_rpm}
    if spec.drive.overspeed_rpm is not None:
        speeds["overspeed"] = spec.drive.overspeed_rpm
    checks, warnings = speed_checks(stress, speeds, settings.rib_safety_factor)
    for w in warnings:
        log.warning("%s", w)
    return stress, checks, warnings


def grid_warnings(fmap: FluxMap, operating: OperatingPoints) -> list[str]:
    """Warnings when the flux map is too coarse for the figures drawn from it.

    The map's interpolated torque at each current and angle the operating-point engine
    solved directly (rated point, MTPA points) against the engine's torque; more than
    :data:`MAP_TORQUE_TOLERANCE` apart flags the MTPA trajectory, envelope and efficiency map.
    """
    interp = FluxInterpolator(fmap)
    points = [operating.rated, *operating.mtpa.values()]
    worst = max(points, key=lambda pt: abs(float(interp.torque(pt.i_d, pt.i_q)) / pt.torque_Nm
                                           - 1) if pt.torque_Nm else 0.0)
    mapped = float(interp.torque(worst.i_d, worst.i_q))
    off = mapped / worst.torque_Nm - 1 if worst.torque_Nm else 0.0
    if abs(off) <= MAP_TORQUE_TOLERANCE:
        return []
    return [f"flux map grid too coarse ({fmap.i_d_A.size} points per axis): its torque at "
            f"{worst.current_peak_A:g} A peak, {worst.current_angle_deg:.1f} deg is "
            f"{mapped:.1f} N·m against {worst.torque_Nm:.1f} N·m solved directly "
            f"({100 * off:+.0f} %); the MTPA trajectory, torque-speed envelope and efficiency "
            f"map come from the map: raise --points (drive.flux_map_points)"]


def _efficiency_summary(emap: EfficiencyMap, spec: MachineSpec) -> dict:
    """The efficiency map's best point and the mechanical-loss input."""
    k = np.unravel_index(np.nanargmax(emap.efficiency), emap.efficiency.shape)
    return {"efficiency_map_max": float(emap.efficiency[k]),
            "efficiency_map_max_at_rpm": float(emap.speed_rpm[k[0]]),
            "efficiency_map_max_at_Nm": float(emap.torque_Nm[k[1]]),
            "efficiency_map_iron_loss": emap.iron_included,
            "mechanical_loss_at_max_speed_W": spec.drive.mechanical_loss_at_max_speed_W}


def _summary(settings, env, res, rated, ribs, fmap, operating: OperatingPoints) -> dict:
    worst = max(ribs.barriers, key=lambda b: b.stress_Pa, default=None)
    return {
        "current_limit_peak_A": settings.current_limit_peak_A,
        "voltage_limit_peak_V": settings.voltage_limit_peak_V,
        "max_speed_rpm": settings.max_speed_rpm,
        "base_speed_rpm": env.base_speed_rpm,
        "base_torque_Nm": env.base_torque_Nm,
        "base_power_W": env.base_torque_Nm * env.base_speed_rpm * 2 * math.pi / 60,
        "torque_at_max_speed_Nm": float(env.torque_Nm[-1]),
        "power_at_max_speed_W": env.power_at_max_speed_W,
        "max_power_W": float(env.power_W.max()),
        "phase_resistance_Ohm": res.resistance_Ohm,
        "copper_temperature_C": res.temperature_C,
        "end_winding_length_m": res.end_winding_length_m,
        "end_leakage_H": env.end_leakage_H,
        "rated": rated,
        "mtpa": [{"current_peak_A": c, "current_angle_deg": pt.current_angle_deg,
                  "torque_Nm": pt.torque_Nm} for c, pt in sorted(operating.mtpa.items())],
        "operating_points": "rated and MTPA points: the operating-point engine (as evaluate); "
                            "the flux maps give the trajectory and the envelope between them",
        "flux_map_points": int(fmap.i_d_A.size),
        "flux_map_positions": fmap.positions,
        "rib_estimate": "mean rib stress, a hand estimate kept as a cross-check of "
                        "rotor_stress (the finite-element peak)",
        "rib_speed_rpm": ribs.speed_rpm,
        "rib_max_stress_MPa": worst.stress_Pa / 1e6 if worst else None,
        "rib_allowed_stress_MPa": worst.allowed_Pa / 1e6 if worst else None,
        "rib_stress_exceeded": ribs.exceeded,
        "rib_caution": ribs.caution,
        "conventions": "peak phase currents and voltages; amplitude-invariant Park "
                       "transform; current angle from the d-axis; V_max = m V_dc / sqrt(3); "
                       "voltages with the phase resistance and the end-winding leakage",
    }
