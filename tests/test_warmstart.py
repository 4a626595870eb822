"""Start vectors from a neighbouring solution (fluxlab.warmstart).

The model is a round two-part sector (every layer a full annulus, tests/meshes_closed_form.py)
with the stator current turning with the rotor, J = J0 cos(p (theta - turn)), as the dq
current of the studies does.  In the continuum the field then turns with the rotor
exactly: the solution at turn + delta is the one at turn rotated by delta (rotational
symmetry of the geometry and the source; common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from meshes_closed_form import centroids, sector_machine_mesh

from fluxlab.errors import MeshError, SpecError
from fluxlab.materials import AIR, builtin_material, linear_material
from fluxlab.solver import make_problem, solve_field
from fluxlab.warmstart import rotated_initial, scaled_initial

DIVISIONS = 48
POLE_PAIRS = 2  # fits the anti-periodic quarter sector
#: Converged answers (rtol 1e-11) from different starts differ by the residual times the
#: condition number of the Jacobian: 1e-9 relative in max norm leaves two digits of margin.
SAME_ANSWER = 1e-9


def _mesh(order_divisions: int = DIVISIONS):
    spacing = 0.030 * (math.pi / 2) / order_divisions
    return sector_machine_mesh(
        [0.0, 0.0295, 0.030], ["rotor_iron", "rotor_gap"],
        [0.030, 0.0305, 0.032, 0.036], ["stator_gap", "winding", "stator_iron"],
        math.pi / 2, -1, order_divisions,
        f"Min(0.004, {0.8 * spacing} + 0.15*Abs(Sqrt(x^2+y^2) - 0.030))",
    )


@pytest.fixture(scope="module")
def mesh():
    return _mesh()


def _problem(mesh, iron, order=1):
    em = np.zeros(mesh.mesh.t.shape[1], dtype=int)
    for name in ("rotor_iron", "stator_iron"):
        em[mesh.mesh.subdomains[name]] = 1
    return make_problem(mesh, [AIR, iron], em, order)


def _current(mesh, step, peak=5e7):
    """Stator current turning with the rotor, A/m^2 per element."""
    cx, cy = centroids(mesh.mesh)
    J = np.zeros(mesh.mesh.t.shape[1])
    w = mesh.mesh.subdomains["winding"]
    turn = step * mesh.step_angle
    J[w] = peak * np.cos(POLE_PAIRS * (np.arctan2(cy[w], cx[w]) - turn))
    return J


@pytest.mark.parametrize("order", [1, 2])
def test_whole_sector_turn_is_exact(mesh, order):
    """Turning by one whole (anti-periodic) sector maps every stator dof onto itself with
    the sign -1 and leaves the rotor frame unchanged: the rotated start is the discrete
    solution itself (no interpolation error), so Newton takes no step."""
    problem = _problem(mesh, builtin_material("M400-50A"), order)
    step = 3
    old = solve_field(problem, _current(mesh, step), step, rtol=1e-11)
    new_step = step + mesh.sliding_divisions
    start = rotated_initial(problem, old.a, step, new_step)
    new = solve_field(problem, _current(mesh, new_step), new_step, initial=start, rtol=1e-9)
    assert new.iterations == 0
    assert new.history[0] < 1e-9


def test_rotated_start_beats_the_plain_previous_vector(mesh):
    """A fractional turn in saturated iron: the rotated start's first residual is much
    below the plain previous vector's (which leaves the stator field behind and shears
    the air gap), and both converge to the cold answer."""
    problem = _problem(mesh, builtin_material("M400-50A"))
    old_step, new_step = 2, 7
    old = solve_field(problem, _current(mesh, old_step), old_step, rtol=1e-11)
    assert old.b_norm.max() > 1.5  # saturated somewhere: the nonlinear path is exercised
    J = _current(mesh, new_step)
    cold = solve_field(problem, J, new_step, rtol=1e-11)
    plain = solve_field(problem, J, new_step, initial=old.a, rtol=1e-11)
    start = rotated_initial(problem, old.a, old_step, new_step)
    turned = solve_field(problem, J, new_step, initial=start, rtol=1e-11)
    # factor 10: the rotated start removes the shear of the gap, leaving only the
    # interpolation error of the field (observed: 0.18 against 136, 9 steps against 15)
    assert turned.history[0] < 0.1 * plain.history[0]
    assert turned.iterations < plain.iterations
    scale = np.abs(cold.a).max()
    np.testing.assert_allclose(turned.a, cold.a, rtol=0, atol=SAME_ANSWER * scale)
    np.testing.assert_allclose(plain.a, cold.a, rtol=0, atol=SAME_ANSWER * scale)


def test_backwards_and_zero_turns(mesh):
    problem = _problem(mesh, linear_material(1000.0))
    old = solve_field(problem, _current(mesh, 10), 10)
    np.testing.assert_array_equal(rotated_initial(problem, old.a, 10, 10), old.a)
    back = rotated_initial(problem, old.a, 10, 4)  # a negative turn wraps the other way
    plain = solve_field(problem, _current(mesh, 4), 4, initial=old.a)
    turned = solve_field(problem, _current(mesh, 4), 4, initial=back)
    assert turned.history[0] < 0.1 * plain.history[0]


def test_scaled_start_is_exact_in_a_linear_material(mesh):
    """A is proportional to J in a linear material (superposition), so the scaled start
    is the new solution: relative residual at round-off level."""
    problem = _problem(mesh, linear_material(1000.0))
    old = solve_field(problem, _current(mesh, 0, 1e6), 0, rtol=1e-11)
    start = scaled_initial(old.a, 1e6, 3e6)
    new = solve_field(problem, _current(mesh, 0, 3e6), 0, initial=start, rtol=1e-9)
    assert new.iterations == 0


def test_bad_input(mesh):
    problem = _problem(mesh, linear_material(1000.0))
    with pytest.raises(SpecError, match="solution_a"):
        rotated_initial(problem, np.zeros(3), 0, 1)
    with pytest.raises(SpecError, match="to_step"):
        rotated_initial(problem, np.zeros(problem.n_dofs), 0, 1.5)
    with pytest.raises(SpecError, match="current_old"):
        scaled_initial(np.zeros(3), 0.0, 1.0)
    bare = make_problem(mesh.mesh, [AIR], np.zeros(mesh.mesh.t.shape[1], dtype=int))
    with pytest.raises(MeshError, match="machine sector"):
        rotated_initial(bare, np.zeros(bare.n_dofs), 0, 1)
