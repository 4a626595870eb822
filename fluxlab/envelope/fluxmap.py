"""Flux maps: psi_d(id, iq) and psi_q(id, iq) from FEM solves on a current grid.

The grid covers the first quadrant id >= 0, iq >= 0 (peak phase amperes). A reluctance
machine without magnets has psi_d odd in id and even in iq, psi_q the reverse (mirror
symmetry of the rotor about its d- and q-axes; common practice, no source), so the first
quadrant holds the whole map. Rows of the grid (fixed id) are solved in parallel worker
processes, each row warm-started from one iq to the next.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from fluxlab.machine.dq import dq_torque
from fluxlab.studies.averaging import averaging_steps
from fluxlab.studies.operating_point import averaged_point
from fluxlab.studies.pool import run_tasks

__all__ = [
    "FluxMap",
    "current_grid",
    "flux_map",
    "incremental_inductances",
    "flux_map_from_arrays",
]

log = logging.getLogger(__name__)


@dataclass(frozen=True, eq=False)
class FluxMap:
    """Flux linkages on a regular (id, iq) grid, whole machine, peak values.

    Attributes
    ----------
    i_d_A, i_q_A
        (n,) and (m,) grid currents, peak phase A, increasing, from 0.
    psi_d_Wb, psi_q_Wb
        (n, m) flux linkages, Wb-turns, indexed ``[i_d, i_q]``.
    torque_Nm
        (n, m) mean air-gap (Maxwell stress) torque at the averaged positions, N m (a
        cross-check of :attr:`torque_dq_Nm`; NaN for maps not from the FEM).
    pole_pairs
        p, for the torque T = 3/2 p (psi_d iq - psi_q id).
    positions
        Rotor positions averaged per grid point (over one torque period).
    """

    i_d_A: np.ndarray
    i_q_A: np.ndarray
    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    torque_Nm: np.ndarray
    pole_pairs: int
    positions: int

    @property
    def torque_dq_Nm(self) -> np.ndarray:
        """(n, m) torque from the maps, T = 3/2 p (psi_d iq - psi_q id), N m."""
        i_d, i_q = np.meshgrid(self.i_d_A, self.i_q_A, indexing="ij")
        return dq_torque(self.pole_pairs, self.psi_d_Wb, self.psi_q_Wb, i_d, i_q)

    @property
    def max_current_A(self) -> float:
        """Largest current amplitude wholly inside the grid, peak A."""
        return float(min(self.i_d_A[-1], self.i_q_A[-1]))


def current_grid(max_current_A: float, points: int) -> np.ndarray:
    """``points`` equally spaced currents from 0 to ``max_current_A`` (peak A)."""
    if not (isinstance(points, int) and points >= 2):
        raise ValueError(f"flux map points = {points!r}: must be an integer of at least 2")
    if not (math.isfinite(max_current_A) and max_current_A > 0):
        raise ValueError(f"flux map max current = {max_current_A!r} A: must be > 0 and finite")
    return np.linspace(0.0, float(max_current_A), points)


def flux_map_from_arrays(i_d_A, i_q_A, psi_d_Wb, psi_q_Wb, pole_pairs: int,
                         torque_Nm=None, positions: int = 1) -> FluxMap:
    """A :class:`FluxMap` from arrays (for tables read back or synthetic machines), checked."""
    i_d, i_q = np.asarray(i_d_A, float), np.asarray(i_q_A, float)
    shape = (i_d.size, i_q.size)
    psi_d, psi_q = np.asarray(psi_d_Wb, float), np.asarray(psi_q_Wb, float)
    problems = []
    for name, axis in (("i_d_A", i_d), ("i_q_A", i_q)):
        if axis.ndim != 1 or axis.size < 2 or not np.all(np.diff(axis) > 0) or axis[0] != 0:
            problems.append(f"flux map {name}: must rise strictly from 0 with at least 2 values")
    for name, table in (("psi_d_Wb", psi_d), ("psi_q_Wb", psi_q)):
        if table.shape != shape or not np.all(np.isfinite(table)):
            problems.append(f"flux map {name}: shape {table.shape}, must be finite {shape}")
    if problems:
        raise ValueError("; ".join(problems))
    torque = np.full(shape, np.nan) if torque_Nm is None else np.asarray(torque_Nm, float)
    return FluxMap(i_d, i_q, psi_d, psi_q, torque, int(pole_pairs), int(positions))


def _row_task(model, i_d: float, i_q_values: Sequence[float], positions: int | None):
    """One grid row (fixed id): the engine's mean psi_d, psi_q and air-gap torque."""

    steps = averaging_steps(model, positions)
    starts: dict[int, np.ndarray] = {}  # warm start per rotor step along the row
    out = np.zeros((3, len(i_q_values)))
    for k, i_q in enumerate(i_q_values):
        current = math.hypot(i_d, i_q)
        if current == 0.0:
            continue  # no source and no magnet: the field is zero
        pt = averaged_point(model, current, math.atan2(i_q, i_d), steps, starts)
        out[:, k] = pt.psi_d, pt.psi_q, pt.torque_maxwell_Nm
    return out


def flux_map(
    model,
    i_d_A: Sequence[float],
    i_q_A: Sequence[float],
    positions: int | None = None,
    workers: int = 1,
    progress: Callable[[str], None] | None = None,
) -> FluxMap:
    """Solve the flux map of ``model`` on the grid ``i_d_A`` x ``i_q_A`` (peak phase A).

    Each grid point is the operating-point engine's (:mod:`fluxlab.studies.operating_point`) at
    current_peak = hypot(id, iq) and current angle atan2(iq, id), averaged over
    ``positions`` rotor positions of one torque period (default: the machine's averaging
    count). Rows run in ``workers`` processes.
    """

    i_d, i_q = np.asarray(i_d_A, float), np.asarray(i_q_A, float)
    flux_map_from_arrays(i_d, i_q, np.zeros((i_d.size, i_q.size)),
                         np.zeros((i_d.size, i_q.size)), model.spec.pole_pairs)  # checks axes
    steps = averaging_steps(model, positions)  # checks the count before the pool starts
    tasks = [(f"flux map row id = {x:.4g} A", _row_task, (float(x), tuple(i_q), len(steps)))
             for x in i_d]
    log.info("flux map: %d x %d points, %d position(s), %d worker(s)",
             i_d.size, i_q.size, len(steps), workers)
    done = run_tasks(model, tasks, workers, progress)
    rows = np.stack([done[name] for name, _, _ in tasks])  # (n, 3, m)
    return FluxMap(i_d, i_q, rows[:, 0], rows[:, 1], rows[:, 2], model.spec.pole_pairs,
                   len(steps))


def incremental_inductances(fmap: FluxMap) -> dict[str, np.ndarray]:
    """Incremental (differential) inductances of the maps, H, by finite differences.

    Returns ``Ldd_incremental_H`` = d psi_d / d id, ``Ldq_incremental_H`` = d psi_d / d iq
    (cross-saturation), ``Lqd_incremental_H`` = d psi_q / d id and ``Lqq_incremental_H`` =
    d psi_q / d iq, each (n, m); second-order central differences inside, one-sided at the
    edges (numpy.gradient). Not the apparent inductances psi / i.
    """
    gd = np.gradient(fmap.psi_d_Wb, fmap.i_d_A, fmap.i_q_A, edge_order=1)
    gq = np.gradient(fmap.psi_q_Wb, fmap.i_d_A, fmap.i_q_A, edge_order=1)
    return {"Ldd_incremental_H": gd[0], "Ldq_incremental_H": gd[1],
            "Lqd_incremental_H": gq[0], "Lqq_incremental_H": gq[1]}
