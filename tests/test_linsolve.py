"""Linear-solver backends (orderings and analyses kept per pattern), fast against slow.

References are a dense solve (numpy LAPACK) for the linear systems and Newton with scipy's
general sparse solve (``spsolve``: its own ordering, partial pivoting, nothing kept) for
the nonlinear solves; no reference comes from the backend under test.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from meshes_closed_form import centroids, sector_machine_mesh
from scipy import sparse
from scipy.sparse.linalg import spsolve

from fluxlab.errors import ConvergenceError, SpecError
from fluxlab.fem import assembly, linsolve
from fluxlab.fem.solver import make_problem, solve_field, step_tie_map
from fluxlab.fem.tiemap import reduced_pattern
from fluxlab.materials.material import AIR, builtin_material

#: Linear solves: a direct solve of an SPD system with condition ~1e6 loses about 6
#: digits of 16; 1e-9 relative leaves a margin (common practice, no source).
LINEAR_RTOL = 1e-9
#: Nonlinear solves run to rtol 1e-11; two converged answers then differ by about the
#: residual times the condition number of the Jacobian, so 1e-8 relative in max norm.
FIELD_RTOL = 1e-8

needs_pardiso = pytest.mark.skipif(
    not linsolve.pardiso_available(), reason="pypardiso (extra 'fast') not installed"
)
BACKENDS = ["scipy", pytest.param("pardiso", marks=needs_pardiso)]


def plain_sparse_solve(matrix):
    """Reference backend: no state, nothing shared with :mod:`fluxlab.fem.linsolve`."""
    csc = matrix.tocsc()
    return lambda rhs: spsolve(csc, rhs)


@pytest.fixture(scope="module")
def sector():
    divisions = 48
    spacing = 0.030 * (math.pi / 2) / divisions
    return sector_machine_mesh(
        [0.0, 0.0295, 0.030], ["rotor_iron", "rotor_gap"],
        [0.030, 0.0305, 0.032, 0.036], ["stator_gap", "winding", "stator_iron"],
        math.pi / 2, -1, divisions,
        f"Min(0.004, {0.8 * spacing} + 0.15*Abs(Sqrt(x^2+y^2) - 0.030))",
    )


@pytest.fixture(scope="module")
def saturated(sector):
    iron = builtin_material("M400-50A")
    em = np.zeros(sector.mesh.t.shape[1], dtype=int)
    for name in ("rotor_iron", "stator_iron"):
        em[sector.mesh.subdomains[name]] = 1
    problem = make_problem(sector, [AIR, iron], em)
    cx, cy = centroids(sector.mesh)
    J = np.zeros(sector.mesh.t.shape[1])
    w = sector.mesh.subdomains["winding"]
    J[w] = 5e7 * np.cos(2 * np.arctan2(cy[w], cx[w]))  # p = 2 fits the anti-periodic quarter
    return problem, J


def _jacobians(problem, J, steps):
    """Reduced patterns of several rotor steps (they differ) and Jacobian values at two
    saturation states (a field and 0.6 times it), in the fixed full pattern."""
    a = solve_field(problem, J, steps[0], linear_solver=plain_sparse_solve).a
    data = problem.data
    values = [
        assembly.jacobian_values(data, assembly.evaluate(data, problem.materials, f * a))
        for f in (1.0, 0.6)
    ]
    full = problem.data.pattern
    patterns = [reduced_pattern(step_tie_map(problem, s), full.indptr, full.indices) for s in steps]
    return patterns, values


@pytest.mark.parametrize("name", BACKENDS)
def test_backend_against_dense_solve(saturated, name):
    """Same pattern twice (ordering/analysis reused), then another pattern and back."""
    problem, J = saturated
    backend = linsolve.choose(name)
    rng = np.random.default_rng(3)
    patterns, values = _jacobians(problem, J, [0, 5, 0])
    for k, pattern in enumerate(patterns):
        for v in values:  # new values in the same pattern
            matrix = pattern.matrix(v)
            rhs = rng.standard_normal(matrix.shape[0])
            expected = np.linalg.solve(matrix.toarray(), rhs)
            got = backend(matrix)(rhs)
            err = np.linalg.norm(got - expected) / np.linalg.norm(expected)
            assert err < LINEAR_RTOL, (name, k, err)


@needs_pardiso
@pytest.mark.parametrize("ordering", [0, 2])
def test_pardiso_orderings_against_dense_solve(saturated, ordering):
    """Minimum degree (small systems) and METIS (large) give the same solutions."""
    problem, J = saturated
    backend = linsolve.PardisoSolver(ordering=ordering)
    (pattern,), values = _jacobians(problem, J, [4])
    matrix = pattern.matrix(values[0])
    rhs = np.random.default_rng(5).standard_normal(matrix.shape[0])
    expected = np.linalg.solve(matrix.toarray(), rhs)
    err = np.linalg.norm(backend(matrix)(rhs) - expected) / np.linalg.norm(expected)
    assert err < LINEAR_RTOL


@needs_pardiso
def test_pardiso_ordering_by_size():
    backend = linsolve.PardisoSolver()
    small = sparse.identity(linsolve.METIS_FROM_UNKNOWNS - 1, format="csr")
    large = sparse.identity(linsolve.METIS_FROM_UNKNOWNS, format="csr")
    assert (backend.ordering_for(small), backend.ordering_for(large)) == (0, 2)
    assert linsolve.PardisoSolver(ordering=2).ordering_for(small) == 2


def test_scipy_solve_stays_valid_after_refactorisation(saturated):
    problem, J = saturated
    (pattern,), values = _jacobians(problem, J, [2])
    backend = linsolve.SuperLUSolver()
    first, second = pattern.matrix(values[0]), pattern.matrix(values[1])
    solve_first = backend(first)
    backend(second)
    rhs = np.ones(first.shape[0])
    np.testing.assert_allclose(first @ solve_first(rhs), rhs, rtol=0, atol=1e-9 * rhs.size)


@needs_pardiso
def test_pardiso_stale_solve_raises(saturated):
    problem, J = saturated
    (pattern,), values = _jacobians(problem, J, [1])
    backend = linsolve.choose("pardiso")
    old = backend(pattern.matrix(values[0]))
    backend(pattern.matrix(values[1]))
    with pytest.raises(RuntimeError, match="replaced"):
        old(np.ones(pattern.shape[0]))


@pytest.mark.parametrize("name", BACKENDS)
def test_field_agrees_with_the_reference_solve(saturated, name):
    """Every backend gives the field of Newton with the reference linear solve."""
    problem, J = saturated
    reference = solve_field(problem, J, 3, rtol=1e-11, linear_solver=plain_sparse_solve)
    assert reference.b_norm.max() > 1.5  # saturated: the nonlinear path is exercised
    got = solve_field(problem, J, 3, rtol=1e-11, linear_solver=name)
    scale = np.abs(reference.a).max()
    np.testing.assert_allclose(got.a, reference.a, rtol=0, atol=FIELD_RTOL * scale)
    assert got.energy_per_m == pytest.approx(reference.energy_per_m, rel=FIELD_RTOL)
    assert got.history[-1] <= 1e-11


def test_too_few_steps_fail_loudly_with_history(saturated):
    problem, J = saturated
    with pytest.raises(ConvergenceError) as info:
        solve_field(problem, J, 0, max_iter=2, linear_solver="scipy")
    assert len(info.value.history) == 3  # before the first step and after two


def test_backend_is_kept_per_problem(saturated):
    problem, J = saturated
    from fluxlab.fem.solver import linear_backend

    assert linear_backend(problem, "scipy") is linear_backend(problem, "scipy")
    assert callable(linear_backend(problem, "auto"))


def test_bad_names_and_parameters(saturated):
    problem, J = saturated
    with pytest.raises(SpecError, match="linear_solver"):
        linsolve.choose("umfpack")
    with pytest.raises(SpecError, match="rtol"):
        solve_field(problem, J, 0, rtol=1.5)
    if not linsolve.pardiso_available():
        with pytest.raises(SpecError, match="pypardiso"):
            linsolve.choose("pardiso")
