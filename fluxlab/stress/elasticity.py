"""Plane-stress linear elasticity of a rotating lamination (scikit-fem, P2 triangles).

Equilibrium div sigma + b = 0 with the centrifugal body force b = rho omega^2 r (per unit
volume, the rotor frame), Hooke's law in plane stress, traction-free everywhere (bore and
barrier edges free; no shrink fit on a shaft). The problem is linear in b, so it is solved
once at omega = 1 rad/s and scaled by omega^2 (stresses and displacements alike).

The free rigid-body motions the cyclic ties leave (see :func:`~fluxlab.stress.cyclic.rigid_modes`)
are held at zero by Lagrange multipliers: the saddle system [[K, C^T], [C, 0]] with C the
modes, so the solution is the one without rigid motion (which the symmetric load does not
excite: it changes no stress).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import spsolve
from skfem import Basis, ElementTriP2, ElementVector, LinearForm, asm
from skfem.models.elasticity import linear_elasticity, plane_stress

from fluxlab.stress.cyclic import cyclic_map, rigid_modes
from fluxlab.stress.mesh import StressMesh

__all__ = ["UnitSpeedField", "solve_unit_speed", "von_mises"]

#: Reference points of the P2 triangle's vertices: the stress of P2 is linear in a
#: triangle, so its extremes lie at the vertices.
_VERTICES = (np.array([[0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]), np.full(3, 1 / 6))


@dataclass(frozen=True, eq=False)
class UnitSpeedField:
    """Displacement and stress at omega = 1 rad/s; multiply by omega^2 for any speed.

    ``u``: (n_dofs,) m per (rad/s)^2 on ``basis``; ``stress``: (3, n_elements, 3) sigma_xx,
    sigma_yy, tau_xy, Pa per (rad/s)^2, at each element's three vertices.
    """

    basis: Basis
    u: np.ndarray
    stress: np.ndarray
    sector_angle: float


@LinearForm
def _centrifugal(v, w):
    """int rho r . v dV at omega = 1, rho from w.rho (kg/m^3)."""
    x, y = w.x
    return w.rho * (x * v[0] + y * v[1])


def _stress_at_vertices(basis: Basis, u: np.ndarray, lam: float, mu: float) -> np.ndarray:
    vb = Basis(basis.mesh, basis.elem, quadrature=_VERTICES)
    grad = vb.interpolate(u).grad  # (2, 2, n_elements, 3)
    exx, eyy = grad[0, 0], grad[1, 1]
    exy = 0.5 * (grad[0, 1] + grad[1, 0])
    trace = exx + eyy
    return np.array([lam * trace + 2 * mu * exx, lam * trace + 2 * mu * eyy, 2 * mu * exy])


def von_mises(stress: np.ndarray) -> np.ndarray:
    """Von Mises stress of plane stress, sqrt(sx^2 - sx sy + sy^2 + 3 txy^2), Pa (e.g.
    Ugural & Fenster, Advanced Strength and Applied Elasticity, the energy-of-distortion
    criterion)."""
    sx, sy, txy = stress
    return np.sqrt(sx**2 - sx * sy + sy**2 + 3 * txy**2)


def solve_unit_speed(sm: StressMesh, density: float, youngs_modulus: float,
                     poisson_ratio: float) -> UnitSpeedField:
    """The lamination's field at omega = 1 rad/s (SI: kg/m^3, Pa)."""
    basis = Basis(sm.mesh, ElementVector(ElementTriP2()), intorder=4)
    lam, mu = plane_stress(youngs_modulus, poisson_ratio)
    K = asm(linear_elasticity(lam, mu), basis)
    f = asm(_centrifugal, basis, rho=density)
    T = cyclic_map(basis, sm.sector_angle)
    C = rigid_modes(basis, sm.sector_angle) @ T
    k = C.shape[0]
    A = sparse.bmat([[T.T @ K @ T, sparse.csr_matrix(C.T)],
                     [sparse.csr_matrix(C), None]], format="csc")
    solution = spsolve(A, np.concatenate([T.T @ f, np.zeros(k)]))
    u = T @ solution[:-k]
    return UnitSpeedField(basis, u, _stress_at_vertices(basis, u, lam, mu), sm.sector_angle)
