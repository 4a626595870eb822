"""From a stored result to what the search compares: objectives, constraint violations.

The search minimises: a maximised figure enters negated. A constraint's violation is
relative to its bound (``(0.65 - pf) / 0.65`` for ``power_factor >= 0.65``), so that
constraints of different units weigh alike; zero or less is satisfied. A design without
usable figures (an invalid geometry, a failed solve, a figure not computed) gets
:data:`INVALID_VIOLATION` in an extra constraint column: it loses to every evaluated design
and its message is kept.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.sweep.store import StoredResult

__all__ = ["INVALID_VIOLATION", "Score", "score", "dominates", "non_dominated"]

#: Violation of a design that has no figures; far above any relative bound violation.
INVALID_VIOLATION = 1e3


@dataclass(frozen=True)
class Score:
    """``F`` (objectives to minimise), ``G`` (violations, <= 0 satisfied; the last entry is
    0 for an evaluated design, :data:`INVALID_VIOLATION` otherwise), ``feasible`` and the
    reason when it is not."""

    F: np.ndarray
    G: np.ndarray
    feasible: bool
    message: str


def _violation(value: float, constraint) -> float:
    out = -math.inf
    for bound, sign in ((constraint.low, 1.0), (constraint.high, -1.0)):
        if bound is not None:
            out = max(out, sign * (bound - value) / (abs(bound) or 1.0))
    return out


def score(result: StoredResult, objectives: Sequence, constraints: Sequence) -> Score:
    """The :class:`Score` of a stored result for the given objectives and constraints."""
    n_f, n_g = len(objectives), len(constraints) + 1
    if result.status != "done":
        message = result.message.strip().splitlines()[0] if result.message else ""
        return Score(np.zeros(n_f), np.full(n_g, INVALID_VIOLATION), False,
                     f"{result.status}: {message}".rstrip(": "))
    summary = result.summary or {}
    missing = [name for name in [o.figure for o in objectives] + [c.figure for c in constraints]
               if not isinstance(summary.get(name), (int, float))]
    if missing:
        return Score(np.zeros(n_f), np.full(n_g, INVALID_VIOLATION), False,
                     f"not computed: {', '.join(missing)}")
    F = np.array([-summary[o.figure] if o.goal == "max" else summary[o.figure]
                  for o in objectives], float)
    G = np.array([_violation(summary[c.figure], c) for c in constraints] + [0.0], float)
    broken = [f"{c.figure} = {summary[c.figure]:.4g} outside {c.describe()}"
              for c, g in zip(constraints, G, strict=False) if g > 0]
    return Score(F, G, not broken, "; ".join(broken))


def dominates(a: np.ndarray, b: np.ndarray) -> bool:
    """Whether objective vector ``a`` dominates ``b`` (minimising: no worse in all, better
    in one)."""
    return bool(np.all(a <= b) and np.any(a < b))


def non_dominated(F: np.ndarray) -> np.ndarray:
    """Indices of the rows of ``F`` (minimised) that no other row dominates; of equal rows
    the first is kept. Pairwise, O(n²) in numpy: fronts here have some thousand designs."""
    F = np.asarray(F, float)
    keep = []
    for i in range(len(F)):
        no_worse = np.all(F <= F[i], axis=1)
        beaten = no_worse & np.any(F < F[i], axis=1)
        equal_before = no_worse & np.all(F == F[i], axis=1) & (np.arange(len(F)) < i)
        if not (beaten.any() or equal_before.any()):
            keep.append(i)
    return np.array(keep, dtype=int)
