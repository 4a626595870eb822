"""Mesh-convergence order of the P1 and P2 field solve on a manufactured solution.

Source: the a-priori L2 error estimate ||u - u_h|| = O(h^(k+1)) for Lagrange elements of
degree k on a smooth problem (S. C. Brenner, L. R. Scott, The Mathematical Theory of Finite
Element Methods, ch. 5, Aubin-Nitsche duality; from memory).  The slope is the least-squares
fit of log(error) over log(h) across four uniform refinements, in a band around k + 1
(common practice, no source; the bands 1.8-2.3 and 2.7-3.4 allow for pre-asymptotic
meshes).  The error is integrated by scikit-fem with a degree-8 rule, independently of the
solver's own quadrature.
"""

from __future__ import annotations

import numpy as np
import pytest
from skfem import Basis, ElementTriP1, ElementTriP2, MeshTri

from fluxlab.fem.solver import make_problem, solve_field
from fluxlab.materials.material import MU0, linear_material

U0 = 1e-3  # amplitude of the manufactured potential, Wb/m
MU_R = 1.0
NU = 1.0 / (MU0 * MU_R)


def _exact(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """u = U0 sin(pi x) sin(pi y): zero on the unit square's boundary (A = 0 on 'outer')."""
    return U0 * np.sin(np.pi * x) * np.sin(np.pi * y)


def _source(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """J = -div(nu grad u) = 2 pi^2 nu u for constant nu, A/m^2."""
    return 2 * np.pi**2 * NU * _exact(x, y)


def _l2_error(mesh: MeshTri, order: int, a: np.ndarray) -> float:
    element = ElementTriP1() if order == 1 else ElementTriP2()
    basis = Basis(mesh, element, intorder=8)  # same dof numbering as the solver's basis
    uh = basis.interpolate(a)
    x, y = np.asarray(basis.global_coordinates())
    return float(np.sqrt(np.sum((np.asarray(uh) - _exact(x, y)) ** 2 * basis.dx)))


@pytest.mark.parametrize(
    "order, levels, band",
    [(1, (2, 3, 4, 5), (1.8, 2.3)), (2, (1, 2, 3, 4), (2.7, 3.4))],
    ids=["P1", "P2"],
)
def test_l2_convergence_order(order, levels, band):
    h, err = [], []
    for level in levels:
        mesh = MeshTri.init_symmetric().refined(level)
        mesh = mesh.with_boundaries({"outer": mesh.boundary_facets()})
        problem = make_problem(
            mesh, [linear_material(MU_R)], np.zeros(mesh.t.shape[1], dtype=int), order
        )
        x, y = problem.quadrature_points
        sol = solve_field(problem, _source(x, y))  # J at the quadrature points
        assert sol.iterations == 1  # linear material: one Newton step
        h.append(2.0**-level)
        err.append(_l2_error(mesh, order, sol.a))
    slope = np.polyfit(np.log(h), np.log(err), 1)[0]
    assert band[0] <= slope <= band[1], (slope, err)
    assert err[-1] < 1e-2 * U0  # and the finest mesh is actually close
