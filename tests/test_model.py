"""The machine model: rotor position zero, conductor weights, excitation errors."""

import math

import numpy as np
import pytest

from fluxlab.errors import SpecError
from fluxlab.fem.solver import element_areas
from fluxlab.machine.model import (
    build_model,
    coil_side_current_density,
    current_density,
    phase_currents,
)
from fluxlab.machine.winding import series_turns_per_phase
from fluxlab.spec.machine_file import replace_path
from fluxlab.studies.operating_point import solve_point


@pytest.fixture(scope="module")
def model(demo_spec):
    spec = replace_path(demo_spec, "mesh.size_mm", 6.0)
    return build_model(spec)


def test_position_zero_puts_the_d_axis_on_the_phase_a_axis(model):
    # At position zero a pure d-axis current must link (almost) no q-axis flux; a quarter
    # pole pitch away the rotor's q-axis is not aligned and the q flux is large. The rotor
    # is symmetric about its d-axis, so any mis-alignment shows as psi_q (common practice).
    aligned = solve_point(model, 10.0, 0.0, model.axis_step)
    assert abs(aligned.psi_q) < 0.01 * abs(aligned.psi_d)
    quarter = round(math.pi / (2 * model.spec.poles) / model.step_angle)
    # a rotor turned by a quarter pole pitch with the currents NOT following it
    from fluxlab.fem.solver import solve_field
    from fluxlab.machine.post import flux_linkage_abc, park

    j = current_density(model, phase_currents(10.0, 0.0, 0.0))
    turned = solve_field(model.problem, j, model.axis_step + quarter)
    psi_d, psi_q = park(flux_linkage_abc(model, turned), 0.0)
    assert abs(psi_q) > 0.1 * abs(psi_d)


def test_conductor_weights_carry_the_series_turns(model):
    # Sum over a phase's coil sides of |weight| * area = coil sides * turns / paths in the
    # sector; times sectors and halved (two sides per coil) it is the series turns per phase
    # counted by the winding module.
    spec = model.spec
    areas = element_areas(model.problem)
    turns = (np.abs(model.conductor_weight[:, 0]) * areas).sum() * model.mesh.sectors / 2
    expected = series_turns_per_phase(model.layout, spec.winding.turns_per_coil,
                                      spec.winding.parallel_paths)
    assert turns == pytest.approx(expected, rel=1e-12)


def test_phase_currents_are_balanced():
    i = phase_currents(10.0, math.radians(30), 0.7)
    assert i.sum() == pytest.approx(0.0, abs=1e-12)
    assert np.abs(i).max() <= 10.0 + 1e-12


def test_current_density_on_a_region_without_a_winding_is_an_error(model):
    j = coil_side_current_density(model, {"slot_0_layer_0": 1e6})
    assert j.max() == 1e6
    message = "'rotor_iron' = 1000000.0 A/m\\^2: the region carries"
    with pytest.raises(ValueError, match=message) as info:
        coil_side_current_density(model, {"rotor_iron": 1e6, "shaft": 2e6})
    assert not isinstance(info.value, SpecError)  # a wrong argument, not a machine file
    assert "'shaft' = 2000000.0" in str(info.value)  # every region named
