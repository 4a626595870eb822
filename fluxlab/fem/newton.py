"""Damped Newton iteration on the reduced (tied) magnetostatic system.

Convergence: the relative residual ``||r_red(a)||_2 / ||r_red(a_red = 0)||_2`` drops below
``rtol``, where ``r_red = P^T (int nu grad A . grad v - int J v)`` is the reduced residual
(amperes) and the reference is its value with every free unknown at zero (only the fixed
values and jumps of the tie map set).  Without fixed values or jumps the reference is
``||P^T f||``, the norm of the reduced load; if the reference is zero, the zero field is the
solution.

Globalisation: backtracking (halving) line search with the Armijo condition on the energy
functional ``Pi(A) = int w(|grad A|^2) dS - int J A dS`` (convex for monotone B-H curves,
and the residual is its gradient, so a Newton step is a descent direction).  Near the
solution the predicted decrease of Pi falls below the round-off of Pi itself; there the
step is accepted when the residual norm decreases instead.

Every step assembles and factorises the Jacobian anew (keeping a factorisation for
several steps doubled the steps on the demo machine for no net gain, DEVELOPERS.md).
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import ConvergenceError, SpecError
from fluxlab.fem import assembly
from fluxlab.fem.linsolve import LinearSolver
from fluxlab.fem.tiemap import ReducedPattern, TieMap

__all__ = ["LinearSolver", "NewtonResult", "newton_solve"]

logger = logging.getLogger(__name__)

_ARMIJO = 1e-4  # sufficient-decrease constant (Nocedal & Wright, Numerical Optimization, ch. 3)
_MAX_HALVINGS = 30
#: Relative round-off level below which a change of Pi is not trusted.
_ENERGY_ROUNDOFF = 1e-11


@dataclass(frozen=True, eq=False)
class NewtonResult:
    """A converged Newton solve.

    Attributes
    ----------
    a
        (n_full,) potential, Wb/m.
    state
        The field at ``a`` (see :class:`fluxlab.fem.assembly.FieldState`).
    history
        Relative residual before the first and after every iteration.
    iterations
        Newton steps taken.
    """

    a: np.ndarray
    state: assembly.FieldState
    history: tuple[float, ...]
    iterations: int


@dataclass(frozen=True, eq=False)
class _Point:
    a_red: np.ndarray
    state: assembly.FieldState
    r: np.ndarray
    pi: float
    pi_scale: float


def _point(data, materials, tie: TieMap, load: np.ndarray, a_red: np.ndarray) -> _Point:
    a = tie.expand(a_red)
    state = assembly.evaluate(data, materials, a)
    r = tie.reduce(assembly.internal_force(data, state) - load)
    w = assembly.energy(data, materials, state)
    work = float(load @ a)
    return _Point(a_red, state, r, w - work, abs(w) + abs(work))


def _accept(trial: _Point, start: _Point, t: float, slope: float) -> bool:
    """Armijo on Pi, or residual decrease where Pi's change is below its round-off."""
    if abs(t * slope) > _ENERGY_ROUNDOFF * start.pi_scale:
        return trial.pi <= start.pi + _ARMIJO * t * slope
    return np.linalg.norm(trial.r) <= (1.0 - _ARMIJO * t) * np.linalg.norm(start.r)


def _reference(data, materials, tie: TieMap, load: np.ndarray) -> float:
    if not np.any(tie.offset):
        return float(np.linalg.norm(tie.reduce(load)))
    zero = np.zeros(tie.n_reduced)
    return float(np.linalg.norm(_point(data, materials, tie, load, zero).r))


def _line_search(data, materials, tie, load, start: _Point, step: np.ndarray) -> _Point:
    """The accepted point."""
    slope = float(start.r @ step)
    t = 1.0
    for _ in range(_MAX_HALVINGS):
        trial = _point(data, materials, tie, load, start.a_red + t * step)
        if _accept(trial, start, t, slope):
            return trial
        t *= 0.5
    raise ConvergenceError(f"line search: no acceptable step after {_MAX_HALVINGS} halvings")


def newton_solve(
    data: assembly.ElementData,
    materials: Sequence,
    tie: TieMap,
    pattern: ReducedPattern,
    load: np.ndarray,
    initial: np.ndarray | None = None,
    *,
    rtol: float = 1e-8,
    max_iter: int = 40,
    callback: Callable[[int, float], None] | None = None,
    linear_solver: LinearSolver,
) -> NewtonResult:
    """Solve ``P^T r(P a_red + c) = 0`` by damped Newton.

    Parameters
    ----------
    data, materials
        Precomputed element data and the materials of its groups.
    tie, pattern
        Tie map and the reduced Jacobian pattern for it.
    load
        (n_full,) ``int J v dS``, A.
    initial
        (n_full,) start potential, Wb/m (e.g. the previous rotor step's solution); each
        reduced unknown is read at its master dof.  None starts from zero.
    rtol
        Relative residual tolerance (see the module docstring for the definition).
    max_iter
        Newton steps allowed.
    callback
        Called as ``callback(iteration, relative_residual)`` before the first step
        (iteration 0) and after each step.
    linear_solver
        Factorisation of the reduced Jacobian, see :data:`LinearSolver` and
        :mod:`fluxlab.fem.linsolve`.

    Raises
    ------
    ConvergenceError
        Not converged in ``max_iter`` steps or line search failed; ``history`` holds the
        relative residuals so far.
    """
    if not (0.0 < rtol < 1.0):
        raise SpecError(f"rtol: {rtol!r} must be in (0, 1)")
    a_red = np.zeros(tie.n_reduced)
    if initial is not None:
        initial = np.asarray(initial, dtype=float)
        if initial.shape != (tie.P.shape[0],) or not np.all(np.isfinite(initial)):
            raise SpecError(
                f"initial: shape {initial.shape} (finite values) expected ({tie.P.shape[0]},)"
            )
        a_red = tie.restrict(initial).copy()
    reference = _reference(data, materials, tie, load)
    if reference == 0.0:  # no source, no fixed values: A = 0 solves it exactly
        point = _point(data, materials, tie, load, np.zeros(tie.n_reduced))
        return NewtonResult(point.state.a, point.state, (0.0,), 0)
    point = _point(data, materials, tie, load, a_red)
    history = [float(np.linalg.norm(point.r)) / reference]
    if callback is not None:
        callback(0, history[-1])
    iterations = 0
    while history[-1] > rtol:
        if iterations >= max_iter:
            raise ConvergenceError(
                f"newton: relative residual {history[-1]:.3g} > rtol {rtol:.3g} after "
                f"max_iter = {max_iter} steps",
                history,
            )
        try:
            solve = linear_solver(pattern.matrix(assembly.jacobian_values(data, point.state)))
            point = _line_search(data, materials, tie, load, point, -solve(point.r))
        except ConvergenceError as exc:
            raise ConvergenceError(f"newton step {iterations + 1}: {exc}", history) from exc
        iterations += 1
        history.append(float(np.linalg.norm(point.r)) / reference)
        logger.debug("newton %d: relative residual %.3e", iterations, history[-1])
        if callback is not None:
            callback(iterations, history[-1])
    return NewtonResult(point.state.a, point.state, tuple(history), iterations)
