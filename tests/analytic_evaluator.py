"""A test double for the optimisation tests: the ZDT1 problem behind the evaluator interface.

Not part of fluxlab. ZDT1 (E. Zitzler, K. Deb, L. Thiele, "Comparison of multiobjective
evolutionary algorithms: empirical results", Evolutionary Computation 8(2), 2000, 173-195):
for x in [0, 1]^n, f1 = x1, g = 1 + 9/(n-1) sum(x2..xn), f2 = g (1 - sqrt(f1/g)); both are
minimised and the true front is f2 = 1 - sqrt(f1), 0 <= f1 <= 1 (g = 1).

Each x_i is a machine key that leaves the demo machine valid anywhere in its range
(:data:`ZDT1_KEYS`), scaled to [0, 1]; the summary holds ``zdt1_f1`` and ``zdt1_f2``.
``FLUXLAB_TEST_COUNTER``, when set, names a file to which each call appends its x as one
JSON line (to count evaluations); ``FLUXLAB_FAKE_EVAL_DELAY_S`` sleeps before returning.
"""

from __future__ import annotations

import json
import math
import os
import time
from dataclasses import dataclass

__all__ = ["ZDT1_KEYS", "zdt1", "zdt1_evaluate"]

#: key path -> (low, high): the ZDT1 variables x1..x4 as machine keys of the demo.
ZDT1_KEYS = {
    "machine.stack_length_mm": (100.0, 200.0),
    "winding.fill_factor": (0.3, 0.5),
    "operating.speed_rpm": (1000.0, 1400.0),
    "drive.copper_temperature_C": (20.0, 120.0),
}


@dataclass(frozen=True)
class AnalyticEvaluation:
    """What :func:`zdt1_evaluate` returns: the attribute the optimisation reads."""

    summary: dict


def zdt1(x: list[float]) -> tuple[float, float]:
    """(f1, f2) of ZDT1 at x in [0, 1]^n (see the module docstring)."""
    f1 = x[0]
    g = 1.0 + 9.0 * sum(x[1:]) / (len(x) - 1)
    return f1, g * (1.0 - math.sqrt(f1 / g))


def zdt1_evaluate(spec, studies: str = "point") -> AnalyticEvaluation:
    """ZDT1 of the demo machine's :data:`ZDT1_KEYS`, scaled to [0, 1]."""
    raw = spec.raw
    x = []
    for path, (low, high) in ZDT1_KEYS.items():
        table, _, name = path.rpartition(".")
        x.append((raw[table][name] - low) / (high - low))
    delay = float(os.environ.get("FLUXLAB_FAKE_EVAL_DELAY_S", "0") or 0)
    if delay > 0:
        time.sleep(delay)
    counter = os.environ.get("FLUXLAB_TEST_COUNTER")
    if counter:
        with open(counter, "a", encoding="utf-8") as f:
            f.write(json.dumps(x) + "\n")
    f1, f2 = zdt1(x)
    return AnalyticEvaluation({"zdt1_f1": f1, "zdt1_f2": f2})
