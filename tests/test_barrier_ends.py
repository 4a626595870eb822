"""Barrier ends: ``end_angle_deg`` is the middle of the barrier's opening under its rib.

The opening is measured with shapely on the region that is meshed: the barrier's shape
intersected with a thin ring just inside the rib circle (radius r_rotor - tangential_rib);
the angles of that intersection, on one side of the q-axis, span the opening. Range limits
are checked against closed-form trigonometry written here.
"""

import math
import re

import numpy as np
import pytest
from paths import DEMO, GEOMETRIES, demo_table

from fluxlab.errors import GeometryError, SpecError
from fluxlab.geometry.csg import to_shapely
from fluxlab.geometry.rotor import barrier_placement, barrier_shape, opening_angles
from fluxlab.spec.machine_file import load_machine, machine_from_dict
from fluxlab.spec.types import BarrierSpec, RotorSpec

R_ROTOR = 0.0675  # m, the demo rotor (bore 136 mm, air gap 0.5 mm)
#: The brief's tolerance on the opening middle, deg.
ANGLE_TOL = 0.02
#: Ring depth inside the rib circle, m: above the chord sag of to_shapely's rib circle
#: (r (1 - cos(pi/720)) = 0.6 um at r = 67 mm, elementary geometry), small enough that
#: the edges' slant moves the measured middle by about 0.002 deg (measured)
RING = 3e-6


def _rotor(shape: str, rib: float) -> RotorSpec:
    return RotorSpec(shaft_diameter=0.044, barrier_shape=shape, tangential_rib=rib,
                     min_rib=0.3e-3, min_steel=1e-3, barriers=())


def _shapely_opening(rotor: RotorSpec, r_rotor: float, barrier: BarrierSpec
                     ) -> tuple[float, float]:
    """(inner, outer) edge of the opening, deg from the q-axis, measured with shapely."""
    from shapely.geometry import Point

    r_rib = r_rotor - rotor.tangential_rib
    region = to_shapely(barrier_shape(rotor, r_rotor, barrier, "rotor.barriers[0]"))
    ring = Point(0, 0).buffer(r_rib + 1e-6, quad_segs=4096).difference(
        Point(0, 0).buffer(r_rib - RING, quad_segs=4096))
    cut = region.intersection(ring)
    parts = getattr(cut, "geoms", [cut])
    xy = np.vstack([np.asarray(p.exterior.coords) for p in parts if not p.is_empty])
    angles = np.degrees(np.arctan2(xy[:, 1], xy[:, 0]))
    upper = angles[angles > 0]  # one side of the q-axis
    return float(upper.min()), float(upper.max())


# (shape, depth m, width m, tangential rib m, post m, end angle deg, rotor radius m)
CASES = [
    ("arc", 0.008, 0.003, 0.0008, 0.0, 14.18, R_ROTOR),  # the demo's barriers
    ("arc", 0.017, 0.0045, 0.0008, 0.001, 25.03, R_ROTOR),
    ("arc", 0.028, 0.006, 0.0008, 0.0015, 35.68, R_ROTOR),
    ("arc", 0.012, 0.005, 0.0015, 0.0, 20.0, R_ROTOR),  # thicker rib
    ("arc", 0.028, 0.004, 0.0008, 0.0, 20.8, R_ROTOR),  # near the least end angle
    ("arc", 0.009, 0.0035, 0.0008, 0.001, 12.07, 0.0944),  # the pump's rotor
    ("arc", 0.020, 0.0055, 0.0008, 0.0, 30.0, 0.0944),
    ("u", 0.008, 0.003, 0.0008, 0.0, 11.73, R_ROTOR),
    ("u", 0.017, 0.0045, 0.0008, 0.001, 20.27, R_ROTOR),
    ("u", 0.027, 0.006, 0.0008, 0.0015, 27.62, R_ROTOR),
    ("u", 0.012, 0.005, 0.0015, 0.0, 20.0, R_ROTOR),
    ("u", 0.020, 0.0055, 0.0008, 0.0, 16.0, 0.0944),
]


@pytest.mark.parametrize("shape,depth,width,rib,post,end_deg,r_rotor", CASES)
def test_opening_is_centred_on_end_angle(shape, depth, width, rib, post, end_deg, r_rotor):
    rotor = _rotor(shape, rib)
    barrier = BarrierSpec(depth, math.radians(end_deg), width, post)
    inner, outer = _shapely_opening(rotor, r_rotor, barrier)
    assert 0.5 * (inner + outer) == pytest.approx(end_deg, abs=ANGLE_TOL)
    # the reported edges are the measured ones
    got = [math.degrees(a) for a in opening_angles(rotor, r_rotor, barrier, "k")]
    assert got == pytest.approx([inner, end_deg, outer], abs=ANGLE_TOL)


def test_centre_line_ends_inside_the_opening():
    # the centre line ends half a width inside the rib circle (rotor.py): its end angle
    # differs from the opening middle, and lies between the opening's edges
    for shape, depth, width, rib, post, end_deg, r_rotor in CASES:
        rotor = _rotor(shape, rib)
        barrier = BarrierSpec(depth, math.radians(end_deg), width, post)
        place = barrier_placement(rotor, r_rotor, barrier, "k")
        assert math.hypot(place.end_x, place.end_y) == pytest.approx(
            r_rotor - rib - width / 2, rel=1e-12)
        end = math.degrees(math.atan2(place.end_y, place.end_x))
        inner, outer = _shapely_opening(rotor, r_rotor, barrier)
        assert inner < end < outer and abs(end - end_deg) > 0.1, (shape, depth, end)


# ------------------------------------------------------------------ infeasible angles
def _rejected(rotor, barrier, key="rotor.barriers[2]") -> str:
    with pytest.raises(GeometryError) as info:
        barrier_placement(rotor, R_ROTOR, barrier, key)
    return "\n".join(info.value.problems)


def _limits(message: str) -> tuple[float, float]:
    found = re.search(r"feasible for this depth and width: ([\d.]+) to ([\d.]+) deg", message)
    assert found, message
    return float(found.group(1)), float(found.group(2))


def test_arc_end_angle_beyond_a_straight_barrier_is_rejected():
    rotor, depth, width, rib = _rotor("arc", 0.0008), 0.028, 0.006, 0.0008
    # limit: the arc centre far out, the barrier a strip |x - r_axis| <= width/2 whose
    # edges cross the rib circle at acos(x / r_rib) (elementary trigonometry)
    r_axis, r_rib = R_ROTOR - depth, R_ROTOR - rib
    limit = math.degrees(0.5 * (math.acos((r_axis + width / 2) / r_rib)
                                + math.acos((r_axis - width / 2) / r_rib)))
    message = _rejected(rotor, BarrierSpec(depth, math.radians(limit + 0.01), width, 0.0))
    assert f"rotor.barriers[2].end_angle_deg = {limit + 0.01:.4g}" in message
    assert f"below {limit:.4g} deg" in message
    assert _limits(message)[1] == pytest.approx(limit, abs=0.01)
    barrier_placement(rotor, R_ROTOR, BarrierSpec(depth, math.radians(limit - 0.05), width, 0.0),
                      "k")  # just inside: accepted


def test_arc_end_angle_before_the_barrier_reaches_its_rib_is_rejected():
    rotor, depth, width = _rotor("arc", 0.0008), 0.028, 0.004
    message = _rejected(rotor, BarrierSpec(depth, math.radians(12.0), width, 0.0))
    assert "rotor.barriers[2].end_angle_deg = 12: too small" in message and "above" in message
    low, high = _limits(message)
    assert 12.0 < low < high
    # the stated least angle is drawable, a little less is not
    barrier_placement(rotor, R_ROTOR, BarrierSpec(depth, math.radians(low + 0.01), width, 0.0),
                      "k")
    _rejected(rotor, BarrierSpec(depth, math.radians(low - 0.01), width, 0.0))


def test_u_legs_that_would_meet_are_rejected():
    rib, depth, width, post = 0.0008, 0.017, 0.0045, 0.001
    rotor, r_rib = _rotor("u", rib), R_ROTOR - rib
    # legs meet when their inner edges reach the post: leg centre lines at y = width/2 +
    # post/2, edges at y = post/2 and width + post/2, crossing the rib circle at asin(y/r)
    limit = math.degrees(0.5 * (math.asin(post / 2 / r_rib)
                                + math.asin((width + post / 2) / r_rib)))
    message = _rejected(rotor, BarrierSpec(depth, math.radians(limit - 0.01), width, post))
    assert f"rotor.barriers[2].end_angle_deg = {limit - 0.01:.4g}" in message
    assert "legs would meet" in message and f"above {limit:.4g} deg" in message
    barrier_placement(rotor, R_ROTOR, BarrierSpec(depth, math.radians(limit + 0.01), width, post),
                      "k")


def _demo_with(index: int, **values) -> dict:
    raw = demo_table()
    raw["rotor"]["barriers"][index].update(values)
    return raw


@pytest.mark.parametrize("value", [2.0, 60.0])
def test_machine_file_names_the_infeasible_key(value):
    with pytest.raises(SpecError) as info:
        machine_from_dict(_demo_with(1, end_angle_deg=value), GEOMETRIES)
    hits = [p for p in info.value.problems
            if p.startswith(f"rotor.barriers[1].end_angle_deg = {value:.4g}: ")]
    assert hits and "feasible for this depth and width" in hits[0], info.value.problems


# ------------------------------------------------------------------ fluxlab check
_LINE = re.compile(r"(rotor\.barriers\[(\d+)\])\s+opening under the rib ([\d.]+) / ([\d.]+) / "
                   r"([\d.]+) deg from the q-axis .*?, ([\d.]+) mm along the rib")


def test_check_prints_the_openings(capsys):
    from fluxlab.cli import main

    assert main(["check", str(DEMO)]) == 0
    found = _LINE.findall(capsys.readouterr().out)
    barriers = demo_table()["rotor"]["barriers"]
    assert [int(m[1]) for m in found] == list(range(len(barriers))) == [0, 1, 2]
    spec = load_machine(DEMO)
    r_rib = spec.rotor_radius - spec.rotor.tangential_rib
    for (key, i, inner, middle, outer, length), b in zip(found, barriers):
        assert key == f"rotor.barriers[{i}]"
        assert float(middle) == pytest.approx(b["end_angle_deg"], abs=0.01)
        want_in, want_out = _shapely_opening(spec.rotor, spec.rotor_radius,
                                             spec.rotor.barriers[int(i)])
        assert [float(inner), float(outer)] == pytest.approx([want_in, want_out], abs=ANGLE_TOL)
        # arc length along the rib circle: radius times angle
        want_mm = r_rib * math.radians(want_out - want_in) * 1e3
        assert float(length) == pytest.approx(want_mm, abs=0.02)
