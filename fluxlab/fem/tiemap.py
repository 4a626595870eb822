"""Dirichlet dofs, (anti-)periodic sector edges and the sliding air-gap tie as one map.

Every constraint is written ``a_slave = sign * a_master + jump`` (sign +-1) or
``a_fixed = value``.  Resolving chains of them gives, for each full dof, either one reduced
unknown with a sign or nothing (a fixed value), i.e. a sparse map P with at most one entry
+-1 per row and an offset vector c:

    a_full = P a_red + c,     K_red = P^T K P,     r_red = P^T r(a_full).

The constraints of a machine sector are built in :mod:`fluxlab.fem.sector_ties`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

from fluxlab.errors import MeshError

__all__ = [
    "Tie",
    "TieMap",
    "ReducedPattern",
    "build_tie_map",
    "match_points",
    "rotate",
    "reduced_pattern",
]

#: Matching tolerance as a fraction of the smallest spacing between candidate dofs:
#: gmsh places periodic and transfinite nodes to round-off, far inside this.
_MATCH_FRACTION = 1e-3


@dataclass(frozen=True, eq=False)
class Tie:
    """Constraints ``a[slave] = sign * a[master] + jump``, element by element.

    Attributes
    ----------
    slave, master
        Full dof indices of equal length.
    sign
        +1 or -1, scalar or one per pair.
    jump
        Wb/m, scalar or one per pair (0 for periodic ties; a flux per metre to drive a
        periodic cell with a net flux).
    name
        Used in error messages.
    """

    slave: np.ndarray
    master: np.ndarray
    sign: np.ndarray | float = 1.0
    jump: np.ndarray | float = 0.0
    name: str = "tie"


@dataclass(frozen=True, eq=False)
class TieMap:
    """The resolved full -> reduced map ``a_full = P a_red + offset``.

    Attributes
    ----------
    P
        (n_full, n_reduced) CSR, at most one entry (+-1) per row; rows of fixed dofs empty.
    offset
        (n_full,) fixed values and jumps, Wb/m.
    target
        (n_full,) reduced index of each full dof, -1 for a fixed dof.
    sign
        (n_full,) +-1, 0 for a fixed dof.
    master
        (n_reduced,) the full dof each reduced unknown is (with sign +1).
    """

    P: sparse.csr_matrix
    offset: np.ndarray
    target: np.ndarray
    sign: np.ndarray
    master: np.ndarray

    @property
    def n_reduced(self) -> int:
        """Number of reduced unknowns."""
        return int(self.master.size)

    def expand(self, a_reduced: np.ndarray) -> np.ndarray:
        """Full potential ``P a_red + offset``, Wb/m."""
        return self.P @ a_reduced + self.offset

    def reduce(self, vector: np.ndarray) -> np.ndarray:
        """``P^T v`` of a full residual or load vector."""
        return self.P.T @ vector

    def restrict(self, a_full: np.ndarray) -> np.ndarray:
        """Reduced unknowns of a full potential (each read at its master dof)."""
        return np.asarray(a_full)[self.master]


@dataclass(frozen=True, eq=False)
class ReducedPattern:
    """Fixed CSR pattern of ``P^T K P`` and the map from K's ``data`` into it."""

    indptr: np.ndarray
    indices: np.ndarray
    keep: np.ndarray
    scale: np.ndarray
    scatter: np.ndarray
    shape: tuple[int, int]

    def matrix(self, full_data: np.ndarray) -> sparse.csr_matrix:
        """``P^T K P`` from the ``data`` vector of K in its fixed pattern."""
        values = np.bincount(
            self.scatter, self.scale * full_data[self.keep], minlength=self.indices.size
        )
        return sparse.csr_matrix((values, self.indices, self.indptr), shape=self.shape)


def _as_pairs(tie: Tie) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    slave = np.asarray(tie.slave, dtype=np.intp).ravel()
    master = np.asarray(tie.master, dtype=np.intp).ravel()
    if slave.shape != master.shape:
        raise ValueError(
            f"{tie.name}: {slave.size} slave dofs but {master.size} master dofs; "
            "they must pair one to one"
        )
    sign = np.broadcast_to(np.asarray(tie.sign, dtype=float), slave.shape).copy()
    if not np.all(np.abs(sign) == 1.0):
        raise ValueError(f"{tie.name}: tie signs must be +1 or -1, got {np.unique(sign)}")
    jump = np.broadcast_to(np.asarray(tie.jump, dtype=float), slave.shape).copy()
    if np.unique(slave).size != slave.size:
        raise ValueError(f"{tie.name}: a slave dof appears twice")
    return slave, master, sign, jump


def _resolve(tgt: np.ndarray, sgn: np.ndarray, off: np.ndarray, slave: np.ndarray) -> None:
    """Follow chains ``a_i = sgn_i a_tgt_i + off_i`` to their roots, in place.

    Pointer jumping: each pass substitutes the target's own relation, doubling the chain
    length followed, so any chain resolves in log2(n) passes.  A root is either free
    (sgn 1, off 0) or fixed (sgn 0, off = value), so substituting a root's relation again
    changes nothing: the loop ends one pass after every target is a root.  A slave that
    ends as its own root was on a cycle of ties and is reported.
    """
    for _ in range(int(np.ceil(np.log2(max(tgt.size, 2)))) + 2):
        done = np.array_equal(tgt[tgt], tgt)
        off += sgn * off[tgt]
        sgn *= sgn[tgt]
        tgt[:] = tgt[tgt]
        if done:
            break
    cyclic = slave & (tgt == np.arange(tgt.size))
    if np.any(cyclic) or not np.array_equal(tgt[tgt], tgt):
        bad = int(np.flatnonzero(cyclic | (tgt[tgt] != tgt))[0])
        raise MeshError(f"tie map: dof {bad} is on a cycle of ties that has no master dof")


def build_tie_map(
    n_dofs: int,
    fixed: np.ndarray | Sequence[int] = (),
    fixed_values: np.ndarray | float = 0.0,
    ties: Sequence[Tie] = (),
) -> TieMap:
    """Resolve fixed values and ties into a :class:`TieMap`.

    Parameters
    ----------
    n_dofs
        Number of full dofs.
    fixed
        Dofs with a prescribed value (Dirichlet); they win over any tie.
    fixed_values
        Their values, Wb/m (scalar or one per fixed dof).
    ties
        Applied in order; a dof already fixed or tied is not tied again, but the skipped
        tie must agree with the resolved map (else :class:`MeshError`).  A dof tied to
        itself with sign -1 is fixed (a = -a + jump gives a = jump/2).

    Raises
    ------
    ValueError
        On a tie with mismatched slave and master lengths, signs other than +-1 or a slave
        dof listed twice (a wrong argument).
    MeshError
        On cycles, or skipped ties that contradict the others (boundaries that do not fit
        together).
    """
    fixed = np.asarray(fixed, dtype=np.intp).ravel()
    tgt = np.arange(n_dofs)
    sgn = np.ones(n_dofs)
    off = np.zeros(n_dofs)
    # A fixed dof is its own root with sign 0: composing through it keeps only its value.
    sgn[fixed] = 0.0
    off[fixed] = np.broadcast_to(np.asarray(fixed_values, dtype=float), fixed.shape)
    assigned = np.zeros(n_dofs, dtype=bool)
    assigned[fixed] = True
    is_slave = np.zeros(n_dofs, dtype=bool)
    skipped = []
    for tie in ties:
        slave, master, sign, jump = _as_pairs(tie)
        loop = slave == master
        trivial = loop & (sign == 1.0) & (jump == 0.0)
        if np.any(loop & ~trivial & (sign == 1.0)):
            raise MeshError(f"{tie.name}: a dof is tied to itself with a nonzero jump")
        flip = loop & (sign == -1.0) & ~assigned[slave]
        sgn[slave[flip]] = 0.0
        off[slave[flip]] = 0.5 * jump[flip]
        assigned[slave[flip]] = True
        new = ~assigned[slave] & ~loop
        old = assigned[slave] & ~trivial & ~flip
        tgt[slave[new]] = master[new]
        sgn[slave[new]] = sign[new]
        off[slave[new]] = jump[new]
        assigned[slave[new]] = True
        is_slave[slave[new]] = True
        skipped.append((tie.name, slave[old], master[old], sign[old], jump[old]))
    _resolve(tgt, sgn, off, is_slave)
    return _finish(tgt, sgn, off, skipped)


def _finish(tgt, sgn, off, skipped) -> TieMap:
    n_dofs = tgt.size
    free_root = (tgt == np.arange(n_dofs)) & (sgn != 0.0)
    master = np.flatnonzero(free_root)
    index = np.full(n_dofs, -1, dtype=np.intp)
    index[master] = np.arange(master.size)
    target = np.where(sgn != 0.0, index[tgt], -1)
    sign = np.where(target >= 0, sgn, 0.0)
    scale = max(float(np.max(np.abs(off), initial=0.0)), 1e-300)
    for name, slave, mast, s, c in skipped:
        ok = (target[slave] == target[mast]) & (sign[slave] == s * sign[mast])
        ok &= np.abs(off[slave] - (s * off[mast] + c)) <= 1e-9 * scale
        if not np.all(ok):
            bad = int(slave[~ok][0])
            raise MeshError(
                f"{name}: dof {bad} is already constrained differently from this tie "
                "(a fixed dof tied to a free one, or contradicting signs)"
            )
    rows = np.flatnonzero(target >= 0)
    P = sparse.csr_matrix((sign[rows], (rows, target[rows])), shape=(n_dofs, master.size))
    return TieMap(P, off.copy(), target, sign, master)


def rotate(xy: np.ndarray, angle: float | np.ndarray) -> np.ndarray:
    """Rotate (2, n) points counterclockwise by ``angle`` (rad, scalar or per point)."""
    c, s = np.cos(angle), np.sin(angle)
    return np.stack([c * xy[0] - s * xy[1], s * xy[0] + c * xy[1]])


def match_points(slave_xy: np.ndarray, master_xy: np.ndarray, what: str) -> np.ndarray:
    """For each slave point, the index of the master point at the same place.

    Parameters
    ----------
    slave_xy, master_xy
        (2, n) and (2, m) coordinates, m; the slaves already moved onto the masters.
    what
        Names the tie in error messages.

    Raises
    ------
    MeshError
        When a slave has no master within tolerance (a fraction of the smallest master
        spacing) or two slaves pick the same master.
    """
    if master_xy.shape[1] == 0:
        raise MeshError(f"{what}: no master dofs to match {slave_xy.shape[1]} dofs against")
    tree = cKDTree(master_xy.T)
    spacing = np.inf
    if master_xy.shape[1] > 1:
        spacing = float(np.min(tree.query(master_xy.T, k=2)[0][:, 1]))
    tol = _MATCH_FRACTION * spacing if np.isfinite(spacing) else 1e-9
    dist, index = tree.query(slave_xy.T)
    if np.any(dist > tol):
        worst = int(np.argmax(dist))
        raise MeshError(
            f"{what}: dof at {slave_xy[:, worst].tolist()} m has no partner; nearest is "
            f"{dist[worst]:.3g} m away, tolerance {tol:.3g} m"
        )
    if np.unique(index).size != index.size:
        raise MeshError(f"{what}: two dofs matched the same partner")
    return index


def reduced_pattern(tie: TieMap, indptr: np.ndarray, indices: np.ndarray) -> ReducedPattern:
    """Pattern of ``P^T K P`` for a K with the given CSR structure (one per rotor step)."""
    n_red = tie.n_reduced
    rows = np.repeat(np.arange(indptr.size - 1), np.diff(indptr))
    ri, rj = tie.target[rows], tie.target[indices]
    keep = np.flatnonzero((ri >= 0) & (rj >= 0))
    scale = tie.sign[rows[keep]] * tie.sign[indices[keep]]
    keys = ri[keep].astype(np.int64) * n_red + rj[keep]
    unique, scatter = np.unique(keys, return_inverse=True)
    red_indices = (unique % n_red).astype(np.int32)
    counts = np.bincount(unique // n_red, minlength=n_red)
    red_indptr = np.concatenate(([0], np.cumsum(counts))).astype(np.int32)
    return ReducedPattern(red_indptr, red_indices, keep, scale, scatter, (n_red, n_red))
