"""Start vectors for a field solve from a neighbouring solution.

In the studies the dq current is fixed in the rotor frame, so the whole field turns with
the rotor.  The previous solution's rotor dofs (stored in the rotor frame) are then
already right, but its stator dofs are left where they were: after the tie map of the
new step joins the two parts again, they disagree across the thin air-gap elements, and
such a start can be worse than zero.  :func:`rotated_initial` turns the stator part's
field with the rotor, ``A_new(x) = A_old(R(-delta) x)``, read by interpolation on the
stator mesh, wrapping angles that leave the sector back into it with ``edge_sign`` per
sector wrapped over (the same rule as the sliding tie, :mod:`fluxlab.tiemap`).
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

from .errors import MeshError, SpecError
from .solver import FieldProblem

__all__ = ["rotated_initial", "scaled_initial", "rotation_map"]

logger = logging.getLogger(__name__)

#: Nearest element centroids tried when locating a point; a point is almost always in
#: one of the first few, and the best candidate is taken when none contains it exactly.
_CANDIDATES = 8
#: Barycentric slack counted as inside (points on an edge, round-off of the rotation).
_INSIDE = -1e-9
#: Rotation maps kept per problem (one per step difference used: a study uses one or two).
_CACHED = 4


@dataclass(frozen=True, eq=False)
class _Parts:
    """Rotor/stator dof split and the stator triangles (vertex indices and coordinates)."""

    rotor_dofs: np.ndarray
    stator_dofs: np.ndarray
    stator_elements: np.ndarray
    tree: cKDTree


def _parts(problem: FieldProblem) -> _Parts:
    cache = problem._extra
    if "parts" in cache:
        return cache["parts"]
    machine = problem.machine
    if machine is None:
        raise MeshError("rotated start: the problem has no machine sector (rotor and stator)")
    dofs = problem.data.dofs
    rotor = np.zeros(problem.n_dofs, dtype=bool)
    rotor[dofs[:, machine.rotor_element].ravel()] = True
    stator_elements = np.flatnonzero(~machine.rotor_element)
    t = problem.mesh.t[:, stator_elements]
    centroids = problem.mesh.p[:, t].mean(axis=1)
    parts = _Parts(
        np.flatnonzero(rotor), np.flatnonzero(~rotor), stator_elements, cKDTree(centroids.T)
    )
    cache["parts"] = parts
    return parts


def _barycentric(p: np.ndarray, t: np.ndarray, xy: np.ndarray) -> np.ndarray:
    """(3, n, k) barycentric coordinates of points xy (2, n) in triangles t (3, n, k)."""
    x0, y0 = p[0][t[0]], p[1][t[0]]
    x1, y1 = p[0][t[1]] - x0, p[1][t[1]] - y0
    x2, y2 = p[0][t[2]] - x0, p[1][t[2]] - y0
    det = x1 * y2 - x2 * y1
    dx, dy = xy[0][:, None] - x0, xy[1][:, None] - y0
    l1 = (dx * y2 - dy * x2) / det
    l2 = (x1 * dy - y1 * dx) / det
    return np.stack([1.0 - l1 - l2, l1, l2])


def _local_weights(problem: FieldProblem, lam: np.ndarray) -> np.ndarray:
    """(n_local, n) basis-function values from barycentric coordinates (3, n).

    P1: the barycentric coordinates themselves.  P2: ``l_i (2 l_i - 1)`` at the vertices
    and ``4 l_a l_b`` at the midpoint of edge (a, b) (e.g. Zienkiewicz & Taylor, The Finite
    Element Method, vol. 1, ch. 8, from memory); which edge each local dof sits on is read
    from the dof locations of the first element, the order skfem uses for all of them.
    """
    if problem.order == 1:
        return lam
    first = problem.data.dofs[:, 0]
    corner = problem.mesh.p[:, problem.mesh.t[:, 0]]
    rows = [lam[i] * (2.0 * lam[i] - 1.0) for i in range(3)]
    for dof in first[3:]:
        loc = problem.sector.doflocs[:, dof]
        pair = [(a, b) for a, b in ((0, 1), (1, 2), (0, 2))
                if np.allclose(0.5 * (corner[:, a] + corner[:, b]), loc, rtol=0, atol=1e-12)]
        if len(pair) != 1:
            raise MeshError("rotated start: P2 edge dofs do not sit on the element's edges")
        a, b = pair[0]
        rows.append(4.0 * lam[a] * lam[b])
    return np.stack(rows)


def rotation_map(problem: FieldProblem, delta_steps: int) -> sparse.csr_matrix:
    """Interpolation matrix ``M`` with ``a_new = M @ a_old`` for the stator field turned
    by ``delta_steps`` rotor steps; rotor rows are the identity.

    Cached on the problem per step difference (a few per problem).

    Raises
    ------
    MeshError
        When the problem is not a machine sector.
    """
    cache = problem._extra
    key = ("rotation", int(delta_steps))
    if key in cache:
        return cache[key]
    parts = _parts(problem)
    sd = problem.sector
    xy = sd.doflocs[:, parts.stator_dofs]
    theta = np.arctan2(xy[1], xy[0]) - delta_steps * sd.step_angle
    wraps = np.floor(theta / sd.sector_angle)
    source_angle = theta - wraps * sd.sector_angle
    radius = np.hypot(xy[0], xy[1])
    src = np.stack([radius * np.cos(source_angle), radius * np.sin(source_angle)])
    sign = np.where(np.mod(wraps, 2) == 1, float(sd.edge_sign), 1.0)
    k = min(_CANDIDATES, parts.stator_elements.size)
    _, near = parts.tree.query(src.T, k=k)
    near = near.reshape(src.shape[1], k)
    elements = parts.stator_elements[near]  # (n, k)
    t = problem.mesh.t[:, elements]  # (3, n, k)
    lam = _barycentric(problem.mesh.p, t, src)
    # the candidate that contains the point, else the least outside one (polygonal
    # boundaries: a turned point may fall a hair outside the discrete circle)
    best = np.argmax(lam.min(axis=0), axis=1)
    rows = np.arange(src.shape[1])
    lam_best = lam[:, rows, best]
    outside = lam_best.min(axis=0) < _INSIDE
    if np.any(outside):
        logger.debug("rotated start: %d of %d points outside the stator mesh (clipped)",
                     int(outside.sum()), outside.size)
        lam_best = np.clip(lam_best, 0.0, None)
        lam_best /= lam_best.sum(axis=0)
    element = elements[rows, best]
    weights = _local_weights(problem, lam_best) * sign  # (n_local, n)
    cols = problem.data.dofs[:, element]
    n_local = cols.shape[0]
    stator_rows = np.broadcast_to(parts.stator_dofs, (n_local, parts.stator_dofs.size))
    M = sparse.csr_matrix(
        (
            np.concatenate([np.ones(parts.rotor_dofs.size), weights.ravel()]),
            (
                np.concatenate([parts.rotor_dofs, stator_rows.ravel()]),
                np.concatenate([parts.rotor_dofs, cols.ravel()]),
            ),
        ),
        shape=(problem.n_dofs, problem.n_dofs),
    )
    cache[key] = M
    stale = [k for k in cache if isinstance(k, tuple) and k[0] == "rotation"]
    for old in stale[:-_CACHED]:
        del cache[old]
    return M


def rotated_initial(
    problem: FieldProblem, solution_a: np.ndarray, from_step: int, to_step: int
) -> np.ndarray:
    """Start vector for step ``to_step`` from a solution at ``from_step``.

    Parameters
    ----------
    problem
        A machine-sector problem (see :func:`fluxlab.solver.make_problem`).
    solution_a
        (n_dofs,) potential solved at ``from_step``, Wb/m (rotor dofs in the rotor frame).
    from_step, to_step
        Rotor steps (any sign).

    Returns
    -------
    numpy.ndarray
        (n_dofs,) potential, Wb/m: rotor dofs unchanged, stator dofs read from the old
        field turned by ``(to_step - from_step) * step_angle`` counterclockwise.  The tie
        map of ``to_step`` makes it consistent (its masters are read).

    Raises
    ------
    SpecError
        On a vector of the wrong shape or with non-finite values.
    MeshError
        When the problem is not a machine sector.
    """
    a = np.asarray(solution_a, dtype=float)
    if a.shape != (problem.n_dofs,) or not np.all(np.isfinite(a)):
        raise SpecError(
            f"solution_a: shape {a.shape} (finite values) expected ({problem.n_dofs},)"
        )
    for name, value in (("from_step", from_step), ("to_step", to_step)):
        if isinstance(value, bool) or value != int(value):
            raise SpecError(f"{name}: {value!r} must be an integer number of rotor steps")
    delta = int(to_step) - int(from_step)
    if delta == 0:
        return a.copy()
    return rotation_map(problem, delta) @ a


def scaled_initial(solution_a: np.ndarray, current_old: float, current_new: float) -> np.ndarray:
    """Start vector for a current amplitude change at a fixed rotor step: ``A I_new/I_old``.

    Exact in a linear material (A is proportional to the current); in saturated iron it
    overshoots for a rising current, which the damped Newton iteration absorbs.

    Raises
    ------
    SpecError
        When ``current_old`` is zero or a current is not finite.
    """
    if not (np.isfinite(current_old) and np.isfinite(current_new)) or current_old == 0.0:
        raise SpecError(
            f"current_old, current_new: {current_old!r}, {current_new!r} must be finite, "
            "current_old non-zero"
        )
    return np.asarray(solution_a, dtype=float) * (current_new / current_old)
