"""Cyclic symmetry of a displacement field on a rotor sector, as one sparse map.

A rotor that repeats every ``sector_angle`` alpha under a load that repeats too (the
centrifugal force) has a displacement that repeats as a vector: at a point of the end edge,
u = R(alpha) u at its image on the start edge, R the rotation matrix (the rotated vector;
the scalar tie of the magnetic sector, a = +-a, would be wrong for a vector). With the
start-edge dofs as masters, every full dof is a combination of reduced ones:

    u_full = T u_red,   K_red = T^T K T,   f_red = T^T f.

Edge nodes are paired with :func:`fluxlab.fem.tiemap.match_points`, as the magnetic
sector edges are.
"""

from __future__ import annotations

import numpy as np
from scipy import sparse

from fluxlab.fem.tiemap import match_points, rotate

__all__ = ["component_dofs", "cyclic_map", "rigid_modes"]


def component_dofs(basis, facets: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(x dofs, y dofs) on the facets, in matching order (one pair per dof location)."""
    dofs = basis.get_dofs(np.asarray(facets))
    x = np.concatenate([d.flatten() for d in
                        (dofs.nodal.get("u^1", []), dofs.facet.get("u^1", []))])
    y = np.concatenate([d.flatten() for d in
                        (dofs.nodal.get("u^2", []), dofs.facet.get("u^2", []))])
    return x.astype(np.intp), y.astype(np.intp)


def cyclic_map(basis, sector_angle: float) -> sparse.csr_matrix:
    """The map T (n_full, n_reduced) of a vector P1/P2 basis on a sector mesh with
    boundaries ``edge_start`` and ``edge_end``; the identity without them."""
    n = basis.N
    bnd = basis.mesh.boundaries or {}
    if "edge_start" not in bnd:
        return sparse.identity(n, format="csr")
    sx, sy = component_dofs(basis, bnd["edge_start"])
    ex, ey = component_dofs(basis, bnd["edge_end"])
    loc = basis.doflocs
    # an end dof turned back by -alpha lands on its start twin
    pair = match_points(rotate(loc[:, ex], -sector_angle), loc[:, sx], "stress sector edges")
    mx, my = sx[pair], sy[pair]
    keep = np.setdiff1d(np.arange(n), np.concatenate([ex, ey]))
    column = np.full(n, -1)
    column[keep] = np.arange(keep.size)
    c, s = np.cos(sector_angle), np.sin(sector_angle)
    rows = np.concatenate([keep, ex, ex, ey, ey])
    cols = np.concatenate([column[keep], column[mx], column[my], column[mx], column[my]])
    vals = np.concatenate([np.ones(keep.size), np.full(ex.size, c), np.full(ex.size, -s),
                           np.full(ey.size, s), np.full(ey.size, c)])
    return sparse.csr_matrix((vals, (rows, cols)), shape=(n, keep.size))


def rigid_modes(basis, sector_angle: float) -> np.ndarray:
    """Rigid-body motions the sector's ties leave free, (k, n_full): the rotation about the
    axis always; the two translations only for the whole lamination (a translation is no
    cyclic field of a sector). Each is zero in the true solution by symmetry."""
    x, y = basis.doflocs
    ix, iy = basis.split_indices()
    rot = np.zeros(basis.N)
    rot[ix], rot[iy] = -y[ix], x[iy]
    modes = [rot]
    if sector_angle >= 2 * np.pi - 1e-9:
        for idx in (ix, iy):
            m = np.zeros(basis.N)
            m[idx] = 1.0
            modes.append(m)
    return np.array(modes)
