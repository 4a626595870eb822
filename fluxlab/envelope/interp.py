"""Smooth interpolation of flux maps, and the inverse tables a current controller loads."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.envelope.fluxmap import FluxMap
from fluxlab.machine.dq import dq_torque

__all__ = ["FluxInterpolator", "InverseTable", "inverse_tables"]


class FluxInterpolator:
    """psi_d, psi_q and torque at any (id, iq) inside a :class:`FluxMap`'s grid.

    Bicubic interpolating splines where the grid has 4 or more points per axis, bilinear
    otherwise (scipy ``RectBivariateSpline`` with s = 0); both reproduce a linear map
    exactly. Currents are peak phase A; a current outside the grid is an error.
    ``end_leakage_H``: a leakage inductance the 2-D map leaves out (the end winding), added as
    L i to both flux linkages (terminal flux linkages); the torque does not change.
    """

    def __init__(self, fmap: FluxMap, end_leakage_H: float = 0.0):
        from scipy.interpolate import RectBivariateSpline

        if not (math.isfinite(end_leakage_H) and end_leakage_H >= 0):
            raise ValueError(f"end_leakage_H = {end_leakage_H!r}: must be >= 0")
        self.end_leakage_H = float(end_leakage_H)

        kx, ky = min(3, fmap.i_d_A.size - 1), min(3, fmap.i_q_A.size - 1)
        self.fmap = fmap
        self._d = RectBivariateSpline(fmap.i_d_A, fmap.i_q_A, fmap.psi_d_Wb, kx=kx, ky=ky, s=0)
        self._q = RectBivariateSpline(fmap.i_d_A, fmap.i_q_A, fmap.psi_q_Wb, kx=kx, ky=ky, s=0)

    def psi(self, i_d, i_q) -> tuple[np.ndarray, np.ndarray]:
        """(psi_d, psi_q), Wb, at currents of any equal shapes (peak A)."""
        i_d, i_q = np.broadcast_arrays(np.asarray(i_d, float), np.asarray(i_q, float))
        tol = 1e-9 * max(self.fmap.i_d_A[-1], self.fmap.i_q_A[-1])
        if (i_d.min(initial=0) < -tol or i_q.min(initial=0) < -tol
                or i_d.max(initial=0) > self.fmap.i_d_A[-1] + tol
                or i_q.max(initial=0) > self.fmap.i_q_A[-1] + tol):
            raise ValueError(
                f"current (id up to {i_d.max():.4g} A, iq up to {i_q.max():.4g} A) outside the "
                f"flux map grid [0, {self.fmap.i_d_A[-1]:.4g}] x [0, {self.fmap.i_q_A[-1]:.4g}] A"
            )
        x, y = np.clip(i_d, 0, self.fmap.i_d_A[-1]), np.clip(i_q, 0, self.fmap.i_q_A[-1])
        return self.psi_inside(x, y)

    def psi_inside(self, i_d: np.ndarray, i_q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`psi` without the range check, for inner loops whose currents lie inside."""
        leak = self.end_leakage_H
        return self._d.ev(i_d, i_q) + leak * i_d, self._q.ev(i_d, i_q) + leak * i_q

    def torque(self, i_d, i_q) -> np.ndarray:
        """Torque T = 3/2 p (psi_d iq - psi_q id), N m, at the given currents."""
        psi_d, psi_q = self.psi(i_d, i_q)
        return dq_torque(self.fmap.pole_pairs, psi_d, psi_q, np.asarray(i_d), np.asarray(i_q))


@dataclass(frozen=True, eq=False)
class InverseTable:
    """Currents as functions of flux linkage on a regular (psi_d, psi_q) grid.

    ``i_d_A[j, k]``, ``i_q_A[j, k]`` (peak A) at ``psi_d_Wb[j]``, ``psi_q_Wb[k]``; NaN where
    no current inside the forward map's grid gives that flux linkage.
    """

    psi_d_Wb: np.ndarray
    psi_q_Wb: np.ndarray
    i_d_A: np.ndarray
    i_q_A: np.ndarray


def inverse_tables(fmap: FluxMap, points: int | None = None, oversample: int = 4) -> InverseTable:
    """Invert a flux map: id(psi_d, psi_q) and iq(psi_d, psi_q) on a regular grid.

    The forward map is sampled ``oversample`` times finer than its grid by the spline
    interpolation, the scattered (psi, i) pairs are interpolated linearly on their Delaunay
    triangulation (scipy ``LinearNDInterpolator``), then each result is checked by mapping
    it forward again: a flux linkage whose current misses it by more than 0.5 % of the
    range (it lies outside the region the grid reaches) is set to NaN.
    """
    from scipy.interpolate import LinearNDInterpolator
    from scipy.spatial import Delaunay

    points = points or max(fmap.i_d_A.size, fmap.i_q_A.size)
    interp = FluxInterpolator(fmap)
    fine_d = np.linspace(0, fmap.i_d_A[-1], oversample * (fmap.i_d_A.size - 1) + 1)
    fine_q = np.linspace(0, fmap.i_q_A[-1], oversample * (fmap.i_q_A.size - 1) + 1)
    cd, cq = np.meshgrid(fine_d, fine_q, indexing="ij")
    pd, pq = interp.psi(cd, cq)
    grid_d = np.linspace(pd.min(), pd.max(), points)
    grid_q = np.linspace(pq.min(), pq.max(), points)
    gd, gq = np.meshgrid(grid_d, grid_q, indexing="ij")
    # one triangulation for both tables (scipy's griddata re-triangulates with other Qhull
    # options and was measured 1000 times slower on grid-like point sets)
    tri = Delaunay(np.column_stack([pd.ravel(), pq.ravel()]))
    i_d = LinearNDInterpolator(tri, cd.ravel())(gd, gq)
    i_q = LinearNDInterpolator(tri, cq.ravel())(gd, gq)
    ok = np.isfinite(i_d) & np.isfinite(i_q)
    back_d, back_q = np.full(gd.shape, np.nan), np.full(gd.shape, np.nan)
    back_d[ok], back_q[ok] = interp.psi(np.clip(i_d[ok], 0, fine_d[-1]),
                                        np.clip(i_q[ok], 0, fine_q[-1]))
    miss = np.hypot((back_d - gd) / np.ptp(pd), (back_q - gq) / np.ptp(pq))
    bad = ~ok | ~(miss <= 5e-3)
    i_d[bad], i_q[bad] = np.nan, np.nan
    return InverseTable(grid_d, grid_q, i_d, i_q)
