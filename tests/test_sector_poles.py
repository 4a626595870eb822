"""Model size on request (``mesh.sector_poles``): the results must not depend on it.

The demo (36 slots, 4 poles) is anti-periodic over one pole; two poles make a periodic
half machine, four the whole machine with no sector edges. Each size is meshed anew by
gmsh (the larger meshes are not copies of the smaller), so the agreement also bounds the
mesh noise. The independent reference for each size is the others: the physics of a
machine does not know how much of it was modelled.
"""

import math

import numpy as np
import pytest
from paths import GEOMETRIES, demo_table

from fluxlab.errors import SpecError
from fluxlab.geometry import model_sector
from fluxlab.geometry.sector import sector_pole_choices
from fluxlab.machine.model import build_model
from fluxlab.spec.machine_file import machine_from_dict
from fluxlab.studies.curves import torque_vs_position
from fluxlab.studies.operating_point import averaged_point


def _demo(sector_poles=None, **mesh):
    t = demo_table()
    t.pop("drive", None)
    t["mesh"].update(mesh)
    if sector_poles is not None:
        t["mesh"]["sector_poles"] = sector_poles
    return machine_from_dict(t, GEOMETRIES)


@pytest.mark.parametrize("slots, poles, choices", [
    (36, 4, [1, 2, 4]),    # anti-periodic pole pitch: t = gcd(36, 2) = 2, 36/2 even -> 4 sectors
    (24, 2, [1, 2]),       # 2 sectors of one pole
    (30, 4, [2, 4]),       # t = 2, 30/2 = 15 odd: periodic over pi, two poles at least
    (54, 6, [1, 2, 3, 6]),  # t = 3, 54/3 = 18 even: 6 anti-periodic sectors
])
def test_sector_pole_choices_are_the_divisors_of_the_symmetry(slots, poles, choices):
    assert sector_pole_choices(slots, poles) == choices


def test_edge_sign_of_a_larger_sector():
    # two anti-periodic pole pitches make a periodic half machine; the whole machine has
    # no edges and sign +1
    assert model_sector(_demo()) == (4, pytest.approx(math.pi / 2), -1)
    assert model_sector(_demo(2)) == (2, pytest.approx(math.pi), 1)
    assert model_sector(_demo(4)) == (1, pytest.approx(2 * math.pi), 1)


def test_a_size_the_symmetry_does_not_allow_is_refused():
    with pytest.raises(SpecError, match=r"mesh.sector_poles = 3: .* 1, 2, 4 poles"):
        _demo(3)


@pytest.mark.slow
def test_demo_figures_do_not_depend_on_the_model_size():
    coarse = {"size_mm": 5.0, "steps_per_slot": 6}
    results = {}
    for poles in (1, 2, 4):
        model = build_model(_demo(poles, **coarse))
        if poles == 4:
            assert "edge_start_rotor" not in model.mesh.mesh.boundaries
        point = averaged_point(model, 25.0, math.radians(60.0))
        ripple, _ = torque_vs_position(model, 25.0, math.radians(60.0))
        results[poles] = {
            "Ld": point.psi_d / point.i_d,
            "Lq": point.psi_q / point.i_q,
            "torque": point.torque_Nm,
            "ripple": ripple.ripple_pct,
            "curve": ripple.torque_Nm,
        }
    one = results[1]
    for poles in (2, 4):
        got = results[poles]
        for name in ("Ld", "Lq", "torque", "ripple"):
            assert got[name] == pytest.approx(one[name], rel=5e-3), (poles, name)
        # the same rotor steps: the curves agree position by position
        assert np.max(np.abs(got["curve"] - one["curve"])) < 5e-3 * np.mean(one["curve"])
