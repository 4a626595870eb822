"""The 2-D nonlinear magnetostatic field solve: problem set-up, solve, basic integrals.

``make_problem`` assembles everything that depends only on the mesh and the material
layout (once per candidate); ``solve_field`` solves for a current density and a rotor
step.  Conventions: A = A_z in Wb/m, J along +z (out of the page) in A/m^2,
B = (dA/dy, -dA/dx) in T, energies per metre of axial length in J/m.
"""

from __future__ import annotations

import logging
from collections import OrderedDict
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from skfem import Basis, MeshTri

from fluxlab.fem import assembly, linsolve
from fluxlab.fem.newton import LinearSolver, newton_solve
from fluxlab.fem.sector_ties import SectorDofs, sector_dofs, sector_tie_map
from fluxlab.fem.tiemap import ReducedPattern, TieMap, reduced_pattern
from fluxlab.mesh.machine_mesh import MachineMesh

__all__ = [
    "FieldProblem",
    "FieldSolution",
    "make_problem",
    "step_tie_map",
    "solve_field",
    "solve_tied",
    "linear_backend",
    "element_areas",
    "region_integral_of_a",
]

logger = logging.getLogger(__name__)

#: Rotor steps whose tie map and reduced pattern are kept (a few MB each at 20k nodes).
_CACHED_STEPS = 8


@dataclass(frozen=True, eq=False)
class FieldProblem:
    """Everything a field solve needs that does not change with current or rotor step.

    Attributes
    ----------
    mesh
        The triangle mesh, m.
    machine
        The machine sector it came from, or None for a bare mesh.
    basis
        scikit-fem basis (P1 with the centroid rule, or P2 with a degree-4 rule).
    order
        1 or 2.
    materials
        Material of each index of ``element_material``.
    element_material
        (n_elements,) material index per element.
    data
        Precomputed element gradients, weights, material groups and Jacobian pattern.
    sector
        Dof sets of the named boundaries, for the tie map of any rotor step.
    """

    mesh: MeshTri
    machine: MachineMesh | None
    basis: Basis
    order: int
    materials: tuple
    element_material: np.ndarray
    data: assembly.ElementData
    sector: SectorDofs
    _steps: OrderedDict = field(default_factory=OrderedDict, repr=False)
    #: Other per-problem caches (warm-start maps, linear-solver backends), by key.
    _extra: dict = field(default_factory=dict, repr=False)

    @property
    def n_dofs(self) -> int:
        """Number of full dofs."""
        return self.data.n_dofs

    @property
    def n_elements(self) -> int:
        """Number of elements."""
        return self.data.n_elements

    @property
    def quadrature_points(self) -> np.ndarray:
        """(2, n_elements, n_qp) quadrature points, m: where a per-point source is read."""
        return self.data.points


@dataclass(frozen=True, eq=False)
class FieldSolution:
    """A converged field.

    Attributes
    ----------
    a
        (n_dofs,) potential A_z, Wb/m; rotor dofs in the rotor frame.
    step
        Rotor step it was solved for.
    b
        (n_elements, 2) element mean of (Bx, By), T, each element in its own frame
        (rotor elements in the rotor frame).
    b_norm
        (n_elements,) root mean square of |B| over each element, sqrt(mean B^2), T
        (equal to |B| for P1).
    history
        Relative residual before the first and after every Newton step
        (see :mod:`fluxlab.fem.newton` for the definition).
    iterations
        Newton steps taken.
    energy_per_m
        Magnetic energy ``int w(B^2) dS`` of the modelled domain, J/m.
    coenergy_per_m
        Magnetic coenergy ``int w'(B^2) dS`` of the modelled domain, J/m.
    """

    a: np.ndarray
    step: int
    b: np.ndarray
    b_norm: np.ndarray
    history: tuple[float, ...]
    iterations: int
    energy_per_m: float
    coenergy_per_m: float


def make_problem(
    mesh: MachineMesh | MeshTri,
    materials: Sequence,
    element_material: np.ndarray,
    order: int = 1,
) -> FieldProblem:
    """Assemble the step- and current-independent part of a field problem.

    Parameters
    ----------
    mesh
        A machine sector (Dirichlet ``outer``, sector edges and sliding tie from its named
        boundaries) or a bare MeshTri (only ``outer`` if it has one, no ties).
    materials
        Materials (see :mod:`fluxlab.materials.material`), indexed by ``element_material``.
    element_material
        (n_elements,) integer index into ``materials`` per element.
    order
        1 (P1) or 2 (P2).

    Raises
    ------
    TypeError
        When ``mesh`` is neither kind of mesh, or ``element_material`` is not integer.
    ValueError
        On an empty material list or an ``element_material`` of the wrong length or range.
    MeshError
        On unmatched tie boundaries (via the tie map of step 0, built here as a check).
    """
    if not isinstance(mesh, MachineMesh | MeshTri):
        raise TypeError(f"mesh: {type(mesh).__name__} is neither a MachineMesh nor a MeshTri")
    materials = tuple(materials)
    if not materials:
        raise ValueError("materials: the list is empty; give at least one material")
    skmesh = mesh.mesh if isinstance(mesh, MachineMesh) else mesh
    basis = assembly.make_basis(skmesh, order)
    data = assembly.element_data(basis, element_material, len(materials))
    machine = mesh if isinstance(mesh, MachineMesh) else None
    problem = FieldProblem(
        skmesh,
        machine,
        basis,
        order,
        materials,
        np.asarray(element_material).copy(),
        data,
        sector_dofs(basis, mesh),
    )
    _prepared(problem, 0)  # fail on unmatched boundaries now, not at the first solve
    return problem


def step_tie_map(problem: FieldProblem, step: int = 0) -> TieMap:
    """The tie map (Dirichlet, sector edges, sliding tie) of ``problem`` at rotor ``step``."""
    return _prepared(problem, step)[0]


def _prepared(problem: FieldProblem, step: int) -> tuple[TieMap, ReducedPattern]:
    """Tie map and reduced pattern of a step, from a small cache on the problem."""
    if isinstance(step, bool) or not isinstance(step, int | np.integer):
        raise TypeError(f"step: {step!r} must be an integer number of rotor steps")
    cache = problem._steps
    key = int(step)
    if key not in cache:
        tie = sector_tie_map(problem.sector, key)
        pattern = problem.data.pattern
        cache[key] = (tie, reduced_pattern(tie, pattern.indptr, pattern.indices))
        while len(cache) > _CACHED_STEPS:
            cache.popitem(last=False)
    cache.move_to_end(key)
    return cache[key]


def solve_field(
    problem: FieldProblem,
    current_density: np.ndarray,
    step: int = 0,
    initial: np.ndarray | None = None,
    *,
    rtol: float = 1e-8,
    max_iter: int = 40,
    callback: Callable[[int, float], None] | None = None,
    linear_solver: str | LinearSolver = "auto",
) -> FieldSolution:
    """Solve the nonlinear field for a current density at a rotor step.

    Parameters
    ----------
    problem
        From :func:`make_problem`.
    current_density
        A/m^2 along +z: (n_elements,) one value per element, or (n_elements, n_qp) at
        ``problem.quadrature_points``.
    step
        Rotor step (any sign): the rotor is turned counterclockwise by
        ``step * machine.step_angle``.
    initial
        (n_dofs,) start potential, Wb/m, e.g. the solution of the neighbouring step or
        current; None starts from zero.
    rtol, max_iter, callback
        See :func:`fluxlab.fem.newton.newton_solve`.
    linear_solver
        A backend name of :func:`fluxlab.fem.linsolve.choose` (``"auto"``, ``"scipy"``,
        ``"pardiso"``; one instance per problem and name is kept, so its orderings and
        symbolic analyses are reused across solves), or a backend callable.

    Raises
    ------
    ValueError
        On a current density of the wrong shape or with non-finite values.
    TypeError
        When ``step`` is not an integer.
    ConvergenceError
        When Newton does not converge (its ``history`` holds the residuals).
    """
    tie, pattern = _prepared(problem, step)
    return _solve(
        problem,
        tie,
        pattern,
        current_density,
        int(step),
        initial,
        rtol,
        max_iter,
        callback,
        linear_backend(problem, linear_solver),
    )


def linear_backend(problem: FieldProblem, linear_solver: str | LinearSolver) -> LinearSolver:
    """The backend a solve of ``problem`` uses: a callable as it is, a name resolved once
    per problem (see :func:`fluxlab.fem.linsolve.choose`) and kept on it.

    Raises
    ------
    What :func:`fluxlab.fem.linsolve.choose` raises on an unknown name, or on ``"pardiso"``
    without pypardiso installed.
    """
    if callable(linear_solver):
        return linear_solver
    key = ("linear_solver", linear_solver)
    if key not in problem._extra:
        problem._extra[key] = linsolve.choose(linear_solver)
    return problem._extra[key]


def solve_tied(
    problem: FieldProblem,
    tie: TieMap,
    current_density: np.ndarray,
    initial: np.ndarray | None = None,
    *,
    rtol: float = 1e-8,
    max_iter: int = 40,
    callback: Callable[[int, float], None] | None = None,
    linear_solver: str | LinearSolver = "auto",
) -> FieldSolution:
    """Like :func:`solve_field`, with a tie map built by the caller.

    For constraints a machine sector does not have: fixed non-zero potentials, or a
    periodic cell driven by a flux jump (see :func:`fluxlab.fem.tiemap.build_tie_map`).
    The solution's ``step`` is 0.
    """
    if tie.P.shape[0] != problem.n_dofs:
        raise ValueError(f"tie: built for {tie.P.shape[0]} dofs, problem has {problem.n_dofs}")
    pattern = reduced_pattern(tie, problem.data.pattern.indptr, problem.data.pattern.indices)
    return _solve(
        problem, tie, pattern, current_density, 0, initial, rtol, max_iter, callback,
        linear_backend(problem, linear_solver),
    )


def _solve(
    problem, tie, pattern, current_density, step, initial, rtol, max_iter, callback,
    linear_solver,
) -> FieldSolution:
    data = problem.data
    load = assembly.load_vector(data, assembly.source_at_quadrature(data, current_density))
    result = newton_solve(
        data,
        problem.materials,
        tie,
        pattern,
        load,
        initial,
        rtol=rtol,
        max_iter=max_iter,
        callback=callback,
        linear_solver=linear_solver,
    )
    state = result.state
    w = data.weights
    area = w.sum(axis=1)
    b_qp = np.stack([state.grad_a[1], -state.grad_a[0]])  # B = (dA/dy, -dA/dx)
    b = (np.einsum("keq,eq->ek", b_qp, w)) / area[:, None]
    b_norm = np.sqrt(np.einsum("eq,eq->e", state.b_sq, w) / area)
    return FieldSolution(
        result.a,
        step,
        b,
        b_norm,
        result.history,
        result.iterations,
        assembly.energy(data, problem.materials, state),
        assembly.coenergy(data, problem.materials, state),
    )


def element_areas(problem: FieldProblem) -> np.ndarray:
    """(n_elements,) element areas, m^2."""
    return problem.data.weights.sum(axis=1)


def region_integral_of_a(
    problem: FieldProblem, solution: FieldSolution, elements: np.ndarray
) -> float:
    """``int A dS`` over the given elements, Wb*m (Wb/m times m^2).

    Exact for P1 and P2 (the quadrature integrates the basis functions exactly).
    Rotor elements integrate the rotor-frame potential, which is the physical one.
    """
    elements = np.asarray(elements)
    if elements.dtype == bool:
        elements = np.flatnonzero(elements)
    if elements.size and (elements.min() < 0 or elements.max() >= problem.n_elements):
        raise ValueError(
            f"elements: index out of range 0..{problem.n_elements - 1} "
            f"(got {int(elements.min())}..{int(elements.max())})"
        )
    data = problem.data
    a_local = solution.a[data.dofs[:, elements]]  # (n_local, n_sel)
    values = np.einsum("ie,ieq->eq", a_local, data.phi[:, elements])
    return float(np.sum(values * data.weights[elements]))
