"""Sampling plans: the full grid, plain random draws, or a Latin hypercube, all seeded.

Each plan returns a list of points, one dict ``{path: value}`` per candidate in file units.
Drawn values are rounded to :data:`DECIMALS` decimals of the file unit (1e-6 mm or deg, far
below any manufacturing tolerance) so the same plan gives the same keys on every platform.
"""

from __future__ import annotations

import itertools

import numpy as np

from fluxlab.sweep.sweepfile import ParameterSpec, SweepSpec

__all__ = ["DECIMALS", "plan_points", "grid_values", "scale_unit"]

DECIMALS = 6


def _clean(p: ParameterSpec, value: float) -> int | float:
    return int(round(value)) if p.kind is int else round(float(value), DECIMALS)


def grid_values(p: ParameterSpec) -> list[int | float]:
    """The values a grid plan takes for one parameter, in order, without repeats."""
    raw = p.values if p.values is not None else np.linspace(p.low, p.high, p.steps)
    return list(dict.fromkeys(_clean(p, v) for v in raw))


def scale_unit(p: ParameterSpec, u: np.ndarray) -> list[int | float]:
    """Map draws ``u`` in [0, 1) to the parameter's values (a range, or its value list).

    A value list is split into equal bins of [0, 1); an integer range is widened by half a
    step at each end so that every whole number in it has the same chance.
    """
    u = np.asarray(u, dtype=float)
    if p.values is not None:
        idx = np.minimum((u * len(p.values)).astype(int), len(p.values) - 1)
        return [p.values[i] for i in idx]
    low, high = p.low, p.high
    if p.kind is int:
        low, high = np.ceil(low) - 0.5, np.floor(high) + 0.5
        return [int(np.clip(np.round(low + x * (high - low)), p.low, p.high)) for x in u]
    return [_clean(p, low + x * (high - low)) for x in u]


def _unit_draws(sweep: SweepSpec) -> np.ndarray:
    d, n, seed = len(sweep.parameters), sweep.plan.samples, sweep.plan.seed
    if sweep.plan.kind == "random":
        return np.random.default_rng(seed).random((n, d))
    from scipy.stats import qmc

    try:
        sampler = qmc.LatinHypercube(d, rng=seed)
    except TypeError:  # scipy < 1.15 names the generator argument `seed`
        sampler = qmc.LatinHypercube(d, seed=seed)
    return sampler.random(n)


def plan_points(sweep: SweepSpec) -> list[dict[str, int | float]]:
    """The candidates of a sweep as ``{path: value}`` dicts, in plan order.

    A grid varies the last parameter fastest. Random and lhs plans are reproducible from
    ``plan.seed``.
    """
    names = [p.path for p in sweep.parameters]
    if sweep.plan.kind == "grid":
        axes = [grid_values(p) for p in sweep.parameters]
        return [dict(zip(names, combo, strict=True)) for combo in itertools.product(*axes)]
    u = _unit_draws(sweep)
    columns = [scale_unit(p, u[:, j]) for j, p in enumerate(sweep.parameters)]
    return [dict(zip(names, row, strict=True)) for row in zip(*columns, strict=True)]
