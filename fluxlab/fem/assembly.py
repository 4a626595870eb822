"""Vectorised assembly of the nonlinear magnetostatic residual, Jacobian and energy.

The field problem is -div(nu(|B|^2) grad A) = J with A = A_z and B = (dA/dy, -dA/dx), so
|B| = |grad A|.  Its energy functional is

    Pi(A) = int w(|grad A|^2) dS - int J A dS,      w(B^2) = int_0^B H dB  [J/m^3],

and because dw/d(B^2) = nu/2 the residual (the gradient of Pi) is
``r_i = int nu grad A . grad v_i dS - int J v_i dS`` and the Jacobian (its Hessian) is
``K_ij = int nu grad v_j . grad v_i + 2 nu' (grad A . grad v_j)(grad A . grad v_i) dS`` with
``nu' = dnu/d(B^2)``.

scikit-fem provides the basis, the mapping and the quadrature; the element integrals are
summed here with numpy into a sparsity pattern fixed once per problem, so a new Jacobian is
only a new ``data`` vector (explicit zeros kept, which keeps the pattern of every reduced
matrix, and so its symbolic factorisation, independent of the values).
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import sparse
from skfem import Basis, ElementTriP1, ElementTriP2, MeshTri

from fluxlab.materials import material as _materials

__all__ = [
    "SparsityPattern",
    "ElementData",
    "FieldState",
    "make_basis",
    "element_data",
    "evaluate",
    "internal_force",
    "jacobian_values",
    "jacobian",
    "source_at_quadrature",
    "load_vector",
    "energy",
    "coenergy",
]

logger = logging.getLogger(__name__)

#: P1: grad A is constant on a triangle, so the centroid rule is exact for the stiffness
#: and for the load of a piecewise-constant J; any more points would only repeat it.
_P1_RULE = (np.array([[1.0 / 3.0], [1.0 / 3.0]]), np.array([0.5]))
#: P2: scikit-fem's degree-4 rule (6 points).  For P_k elements a rule exact for degree
#: 2k-1 keeps the optimal L2 rate with smooth coefficients (Ciarlet, The Finite Element
#: Method for Elliptic Problems, 1978, sec. 4.1, from memory); k = 2 needs degree 3, and
#: degree 4 leaves one order for the variation of nu(B^2) inside an element.
_P2_INTORDER = 4


@dataclass(frozen=True, eq=False)
class SparsityPattern:
    """A fixed CSR pattern and the scatter map from element matrices into it.

    Attributes
    ----------
    indptr, indices
        CSR structure of the (n_dofs, n_dofs) matrix, column indices sorted per row.
    scatter
        For every entry of the element matrices, flattened in (i, j, element) C order,
        the position in the CSR ``data`` vector it adds to.
    shape
        (n_dofs, n_dofs).
    """

    indptr: np.ndarray
    indices: np.ndarray
    scatter: np.ndarray
    shape: tuple[int, int]

    @property
    def nnz(self) -> int:
        """Number of stored entries."""
        return int(self.indices.size)


@dataclass(frozen=True, eq=False)
class ElementData:
    """Everything assembly needs, precomputed once per mesh, order and material layout.

    Attributes
    ----------
    dofs
        (n_local, n_elements) global dof of each local basis function.
    grad
        (n_local, 2, n_elements, n_qp) basis-function gradients at the quadrature
        points, 1/m.
    phi
        (n_local, n_elements, n_qp) basis-function values at the quadrature points.
    weights
        (n_elements, n_qp) quadrature weight times the Jacobian determinant, m^2.
    points
        (2, n_elements, n_qp) quadrature points, m.
    stiffness
        (n_local, n_local, n_elements) ``weights * grad v_i . grad v_j`` for one-point
        rules (P1), else None (P2 forms it per call to save memory).
    groups
        Element indices of each material, in the order of the materials list.
    n_dofs
        Number of global dofs.
    pattern
        The fixed sparsity pattern of the full Jacobian.
    """

    dofs: np.ndarray
    grad: np.ndarray
    phi: np.ndarray
    weights: np.ndarray
    points: np.ndarray
    stiffness: np.ndarray | None
    groups: tuple[np.ndarray, ...]
    n_dofs: int
    pattern: SparsityPattern

    @property
    def n_elements(self) -> int:
        """Number of elements."""
        return int(self.dofs.shape[1])

    @property
    def n_qp(self) -> int:
        """Quadrature points per element."""
        return int(self.weights.shape[1])


@dataclass(frozen=True, eq=False)
class FieldState:
    """The field at the quadrature points for one full-dof potential.

    Attributes
    ----------
    a
        (n_dofs,) potential, Wb/m.
    grad_a
        (2, n_elements, n_qp) grad A, T (B = (grad_a[1], -grad_a[0])).
    b_sq
        (n_elements, n_qp) |B|^2, T^2.
    nu, dnu
        (n_elements, n_qp) reluctivity nu, m/H, and dnu/d(B^2), m/(H T^2).
    """

    a: np.ndarray
    grad_a: np.ndarray
    b_sq: np.ndarray
    nu: np.ndarray
    dnu: np.ndarray


def make_basis(mesh: MeshTri, order: int) -> Basis:
    """The scikit-fem basis for ``order`` 1 (P1, centroid rule) or 2 (P2, degree-4 rule)."""
    if order == 1:
        return Basis(mesh, ElementTriP1(), quadrature=_P1_RULE)
    if order == 2:
        return Basis(mesh, ElementTriP2(), intorder=_P2_INTORDER)
    raise ValueError(f"order: {order!r} is not supported; use 1 (P1) or 2 (P2)")


def _pattern(dofs: np.ndarray, n_dofs: int) -> SparsityPattern:
    """CSR pattern of all element couplings, with the scatter map (COO -> CSR)."""
    n_local = dofs.shape[0]
    rows = np.broadcast_to(dofs[:, None, :], (n_local, n_local, dofs.shape[1])).ravel()
    cols = np.broadcast_to(dofs[None, :, :], (n_local, n_local, dofs.shape[1])).ravel()
    keys = rows.astype(np.int64) * n_dofs + cols
    unique, scatter = np.unique(keys, return_inverse=True)
    indices = (unique % n_dofs).astype(np.int32)
    counts = np.bincount(unique // n_dofs, minlength=n_dofs)
    indptr = np.concatenate(([0], np.cumsum(counts))).astype(np.int32)
    return SparsityPattern(indptr, indices, scatter.astype(np.intp), (n_dofs, n_dofs))


def element_data(basis: Basis, element_material: np.ndarray, n_materials: int) -> ElementData:
    """Precompute gradients, weights, groups and the Jacobian pattern of ``basis``.

    Parameters
    ----------
    basis
        From :func:`make_basis`.
    element_material
        (n_elements,) index of each element's material in a list of ``n_materials``.
    n_materials
        Length of that list.

    Raises
    ------
    ValueError
        When ``element_material`` has the wrong length or is out of range.
    TypeError
        When ``element_material`` is not of an integer dtype.
    """
    n_el = basis.nelems
    em = np.asarray(element_material)
    if em.shape != (n_el,):
        raise ValueError(
            f"element_material: shape {em.shape} does not match the mesh's {n_el} elements"
        )
    if em.size and not np.issubdtype(em.dtype, np.integer):
        raise TypeError(f"element_material: dtype {em.dtype} is not an integer type")
    if em.size and (em.min() < 0 or em.max() >= n_materials):
        bad = em[(em < 0) | (em >= n_materials)][0]
        raise ValueError(
            f"element_material: index {int(bad)} is out of range 0..{n_materials - 1} "
            f"({n_materials} materials given)"
        )
    grad = np.stack([basis.basis[i][0].grad for i in range(basis.Nbfun)])
    phi = np.stack([np.asarray(basis.basis[i][0]) for i in range(basis.Nbfun)])
    weights = np.asarray(basis.dx)
    stiffness = None
    if weights.shape[1] == 1:
        stiffness = np.einsum("ike,jke->ije", grad[..., 0], grad[..., 0]) * weights[:, 0]
    dofs = np.asarray(basis.element_dofs)
    groups = tuple(np.flatnonzero(em == k) for k in range(n_materials))
    points = np.asarray(basis.global_coordinates())  # a DiscreteField is an ndarray
    return ElementData(
        dofs, grad, phi, weights, points, stiffness, groups, basis.N, _pattern(dofs, basis.N)
    )


def _gradient(data: ElementData, a: np.ndarray) -> np.ndarray:
    """grad A at the quadrature points, (2, n_elements, n_qp)."""
    a_local = a[data.dofs]  # (n_local, n_el)
    return np.einsum("ie,ikeq->keq", a_local, data.grad)


def _per_group(data: ElementData, materials: Sequence, b_sq: np.ndarray, law) -> list:
    """Evaluate ``law(material, b_sq)`` on each material's elements."""
    out = []
    for material, elements in zip(materials, data.groups, strict=True):
        if elements.size:
            out.append((elements, law(material, b_sq[elements].ravel())))
    return out


def evaluate(data: ElementData, materials: Sequence, a: np.ndarray) -> FieldState:
    """Field and material response at the quadrature points for potential ``a`` (Wb/m)."""
    grad_a = _gradient(data, a)
    b_sq = grad_a[0] ** 2 + grad_a[1] ** 2
    nu = np.empty_like(b_sq)
    dnu = np.empty_like(b_sq)
    shape = (-1, data.n_qp)
    for elements, (nu_g, dnu_g) in _per_group(data, materials, b_sq, _materials.reluctivity):
        nu[elements] = np.broadcast_to(nu_g, b_sq[elements].size).reshape(shape)
        dnu[elements] = np.broadcast_to(dnu_g, b_sq[elements].size).reshape(shape)
    return FieldState(a, grad_a, b_sq, nu, dnu)


def internal_force(data: ElementData, state: FieldState) -> np.ndarray:
    """``int nu grad A . grad v_i dS`` for every dof i, A (nu B is H in A/m)."""
    flux = state.nu * data.weights  # (n_el, n_qp)
    proj = np.einsum("ikeq,keq->ieq", data.grad, state.grad_a)
    local = np.einsum("ieq,eq->ie", proj, flux)
    return np.bincount(data.dofs.ravel(), local.ravel(), minlength=data.n_dofs)


def jacobian_values(data: ElementData, state: FieldState) -> np.ndarray:
    """CSR ``data`` of the Jacobian at ``state``, in the fixed pattern ``data.pattern``."""
    nonlinear = bool(np.any(state.dnu))
    c = 2.0 * state.dnu * data.weights  # weight of the 2 nu' (gradA.gv_j)(gradA.gv_i) term
    if data.stiffness is not None:  # one-point rule: reuse the precomputed grad.grad
        local = data.stiffness * state.nu[:, 0]
        if nonlinear:
            proj = np.einsum("ike,ke->ie", data.grad[..., 0], state.grad_a[..., 0])
            local += proj[:, None, :] * (proj * c[:, 0])[None, :, :]
    else:  # per element a (n_local x 2 n_qp) @ (2 n_qp x n_local) product: batched matmul
        g = data.grad.transpose(2, 0, 1, 3).reshape(data.n_elements, data.grad.shape[0], -1)
        wn = np.tile(state.nu * data.weights, 2)[:, None, :]  # (n_el, 1, 2 n_qp)
        local = np.matmul(g * wn, g.transpose(0, 2, 1))
        if nonlinear:
            proj = np.einsum("ikeq,keq->eiq", data.grad, state.grad_a)
            local += np.matmul(proj * c[:, None, :], proj.transpose(0, 2, 1))
        local = local.transpose(1, 2, 0)  # to the (i, j, element) order of the scatter map
    return np.bincount(data.pattern.scatter, local.ravel(), minlength=data.pattern.nnz)


def jacobian(data: ElementData, state: FieldState) -> sparse.csr_matrix:
    """The full Jacobian at ``state`` as a CSR matrix, m/H (the units of nu)."""
    p = data.pattern
    return sparse.csr_matrix((jacobian_values(data, state), p.indices, p.indptr), shape=p.shape)


def source_at_quadrature(data: ElementData, current_density: np.ndarray) -> np.ndarray:
    """Current density at the quadrature points, (n_elements, n_qp), A/m^2.

    Parameters
    ----------
    current_density
        (n_elements,) one value per element, or (n_elements, n_qp) values at
        ``data.points``.

    Raises
    ------
    ValueError
        On a wrong shape or a value that is not finite.
    """
    j = np.asarray(current_density, dtype=float)
    n_el, n_qp = data.weights.shape
    if j.shape == (n_el,):
        j = np.broadcast_to(j[:, None], (n_el, n_qp))
    elif j.shape != (n_el, n_qp):
        raise ValueError(
            f"current_density: shape {j.shape} does not match ({n_el},) elements or "
            f"({n_el}, {n_qp}) quadrature points"
        )
    if not np.all(np.isfinite(j)):
        bad = int(np.flatnonzero(~np.isfinite(j).all(axis=1))[0])
        raise ValueError(f"current_density: element {bad} is not finite ({j[bad].tolist()})")
    return j


def load_vector(data: ElementData, j_qp: np.ndarray) -> np.ndarray:
    """``int J v_i dS`` for every dof i, A, from J at the quadrature points (A/m^2)."""
    local = np.einsum("ieq,eq->ie", data.phi, j_qp * data.weights)
    return np.bincount(data.dofs.ravel(), local.ravel(), minlength=data.n_dofs)


def _integrate(data: ElementData, materials: Sequence, b_sq: np.ndarray, law) -> float:
    total = 0.0
    for elements, density in _per_group(data, materials, b_sq, law):
        total += float(np.sum(density.reshape(-1, data.n_qp) * data.weights[elements]))
    return total


def energy(data: ElementData, materials: Sequence, state: FieldState) -> float:
    """Stored magnetic energy ``int w(B^2) dS``, J/m."""
    return _integrate(data, materials, state.b_sq, _materials.energy_density)


def coenergy(data: ElementData, materials: Sequence, state: FieldState) -> float:
    """Magnetic coenergy ``int w'(B^2) dS`` (w' = int_0^H B dH), J/m."""
    return _integrate(data, materials, state.b_sq, _materials.coenergy_density)
