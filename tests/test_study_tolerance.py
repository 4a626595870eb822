"""The studies' Newton tolerance (fluxlab.machine.model.STUDY_RTOL) against a much tighter solve.

The studies stop Newton at a relative residual of 1e-5, not at the solver's 1e-8 default;
that must not show in the reported figures. Reference: the same warm-started chain of
rotor positions solved to 1e-10, an independent and far tighter computation.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fluxlab.fem.solver import solve_field
from fluxlab.machine.model import STUDY_RTOL, build_model, current_density, phase_currents
from fluxlab.machine.post import flux_linkage_abc, park, torque_maxwell
from fluxlab.spec.machine_file import replace_path
from fluxlab.studies.curves import ripple_steps
from fluxlab.studies.operating_point import solve_point


@pytest.fixture(scope="module")
def overload_model(demo_spec):
    spec = replace_path(demo_spec, "mesh.size_mm", 4.5)
    return build_model(spec)


def test_study_tolerance_leaves_torque_and_flux_unchanged(overload_model):
    model = overload_model
    assert model.newton_rtol == STUDY_RTOL
    current, angle = 50.0, math.radians(60.0)  # the demo's overload current: deep saturation
    p = model.spec.pole_pairs
    loose_start = tight_start = None
    for step in [int(s) for s in ripple_steps(model, 36)[:5]]:
        point = solve_point(model, current, angle, step, loose_start)
        loose_start = point.solution.a
        theta_e = p * (step - model.axis_step) * model.step_angle
        density = current_density(model, phase_currents(current, angle, theta_e))
        tight = solve_field(model.problem, density, step, initial=tight_start, rtol=1e-10)
        tight_start = tight.a
        assert point.solution.history[-1] <= STUDY_RTOL
        torque = torque_maxwell(model, tight)
        psi_d, psi_q = park(flux_linkage_abc(model, tight), theta_e)
        # 1e-5 of the torque and 1e-6 of the flux linkage: a hundred times what was seen
        assert point.torque_maxwell_Nm == pytest.approx(torque, rel=1e-5)
        assert np.allclose([point.psi_d, point.psi_q], [psi_d, psi_q], rtol=1e-6, atol=0)
