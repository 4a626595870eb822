"""A sweep evaluator that adds the rotor stress to the plain evaluation.

The plain :func:`fluxlab.studies.evaluate.evaluate` stays free of mechanics (a sweep of the
rated point costs seconds; the stress solve adds about as much again). A sweep that wants
``safety_factor`` as a column, or as a constraint on its results, names this evaluator:
``run_sweep(sweep, out, evaluator="fluxlab.stress.evaluator:evaluate_with_stress")``.
"""

from __future__ import annotations

import dataclasses

from fluxlab.spec.types import MachineSpec
from fluxlab.stress.study import rotor_stress
from fluxlab.studies.evaluate import Evaluation, evaluate

__all__ = ["evaluate_with_stress"]


def evaluate_with_stress(spec: MachineSpec, **kwargs) -> Evaluation:
    """:func:`~fluxlab.studies.evaluate.evaluate` (same arguments), its summary extended by
    the rotor stress at the drive's top speed: ``stress_speed_rpm``,
    ``stress_von_mises_max_MPa``, ``safety_factor`` (yield over the peak) and
    ``yield_speed_rpm``."""
    result = evaluate(spec, **kwargs)
    stress = rotor_stress(spec)
    speed = spec.top_speed_rpm
    summary = {**result.summary, "stress_speed_rpm": speed,
               "stress_von_mises_max_MPa": stress.peak_Pa(speed) / 1e6,
               "safety_factor": stress.safety_factor(speed),
               "yield_speed_rpm": stress.yield_speed_rpm()}
    return dataclasses.replace(result, summary=summary)
