"""Barrier-end fillets: the rounded corners against an independent construction, bad radii."""

import math

import pytest
from paths import GEOMETRIES

from fluxlab.errors import SpecError
from fluxlab.geometry.csg import cut, to_shapely
from fluxlab.geometry.fillets import barrier_air
from fluxlab.geometry.rotor import barrier_shape, post_shape
from fluxlab.spec.machine_file import load_machine, replace_path

MACHINES = ["demo_fan_drive.toml", "demo_fan_drive_u.toml", "demo_pump_6p54s.toml"]


def _sharp(spec, i, b):
    shape = barrier_shape(spec.rotor, spec.rotor_radius, b, f"rotor.barriers[{i}]")
    post = post_shape(spec.rotor_radius, b)
    return to_shapely(cut(shape, post) if post else shape)


@pytest.mark.parametrize("name", MACHINES)
def test_filleted_barrier_is_the_opening_of_the_sharp_one(name):
    # Morphological opening (erosion then dilation by a disk of radius r) rounds every convex
    # corner of a shape with radius r and leaves the rest (elementary mathematical
    # morphology); shapely's buffer(-r).buffer(r) builds it without the fillet code.
    # Tolerance: 2e-3 of the area, the polygonal arcs of both shapely constructions (measured
    # 1e-5 of the area; the fillets themselves remove 3e-3 to 5e-3 of it).
    spec = load_machine(GEOMETRIES / name)
    r_f = spec.rotor.rib_fillet
    for i, b in enumerate(spec.rotor.barriers):
        sharp = _sharp(spec, i, b)
        opened = sharp.buffer(-r_f, quad_segs=256).buffer(r_f, quad_segs=256)
        got = to_shapely(barrier_air(spec.rotor, spec.rotor_radius, b, f"rotor.barriers[{i}]"))
        assert got.area < sharp.area
        assert got.symmetric_difference(opened).area < 2e-3 * sharp.area, (name, i)


def test_zero_fillet_keeps_the_sharp_barrier():
    spec = replace_path(load_machine(GEOMETRIES / MACHINES[0]), "rotor.rib_fillet_mm", 0.0)
    for i, b in enumerate(spec.rotor.barriers):
        got = to_shapely(barrier_air(spec.rotor, spec.rotor_radius, b, f"rotor.barriers[{i}]"))
        assert math.isclose(got.area, _sharp(spec, i, b).area, rel_tol=1e-9)


@pytest.mark.parametrize("value", [1.6, 5.0])
def test_a_fillet_too_large_for_the_barrier_is_one_line_naming_the_key(value):
    # the demo's narrowest barrier is 3 mm wide: two 1.6 mm fillets cannot fit one end
    with pytest.raises(SpecError) as err:
        replace_path(load_machine(GEOMETRIES / MACHINES[0]), "rotor.rib_fillet_mm", value)
    text = str(err.value)
    assert f"rotor.rib_fillet_mm = {value:g}" in text
    assert "\n" not in text.strip().removeprefix("- ")


def test_a_negative_fillet_is_refused():
    with pytest.raises(SpecError, match=r"rotor.rib_fillet_mm = -0.5: must be at least 0"):
        replace_path(load_machine(GEOMETRIES / MACHINES[0]), "rotor.rib_fillet_mm", -0.5)


def test_a_fillet_below_a_tenth_of_a_millimetre_is_refused():
    with pytest.raises(SpecError, match=r"rotor.rib_fillet_mm = 0.05: must be 0 \(sharp "
                                        r"corners\) or at least 0.1 mm"):
        replace_path(load_machine(GEOMETRIES / MACHINES[0]), "rotor.rib_fillet_mm", 0.05)
