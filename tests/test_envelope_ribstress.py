"""Rib and post stress against a hand calculation on a one-barrier rotor."""

import copy
import logging
import math

import pytest
from paths import DEMO, GEOMETRIES

from fluxlab.envelope.ribstress import RIB_CAUTION, rib_stress
from fluxlab.errors import SpecError
from fluxlab.spec.machine_file import load_machine, machine_from_dict


def _one_barrier(post_mm=0.0):
    raw = copy.deepcopy(load_machine(DEMO).raw)
    raw["rotor"]["barriers"] = [{"depth_mm": 8.0, "end_angle_deg": _hand_opening_middle_deg(),
                                 "width_mm": 3.0, "post_mm": post_mm}]
    return machine_from_dict(raw, GEOMETRIES)


def _hand_arc():
    """The hand geometry: rotor radius, rib circle, q-axis point, arc centre and centre-line
    radius (m) of an arc barrier 8 mm deep, 3 mm wide, its centre line ending at 13 deg
    from the q-axis half a width inside the 0.8 mm rib."""
    big_r = 0.068 - 0.0005  # bore radius - air gap
    a = big_r - 0.8e-3  # rib circle
    r_axis = big_r - 8e-3
    r_end = a - 3e-3 / 2
    ex, ey = r_end * math.cos(math.radians(13)), r_end * math.sin(math.radians(13))
    c = (ex**2 + ey**2 - r_axis**2) / (2 * (ex - r_axis))  # arc centre on the q-axis
    return big_r, a, r_axis, c, c - r_axis


def _hand_opening_middle_deg():
    """end_angle_deg of the hand geometry: the middle of the arc of the rib circle between
    the barrier's two edges (law of cosines, origin - arc centre - crossing)."""
    _, a, _, c, radius = _hand_arc()
    edges = [math.acos((a**2 + c**2 - rho**2) / (2 * c * a)) for rho in (radius - 1.5e-3,
                                                                           radius + 1.5e-3)]
    return math.degrees(sum(edges) / 2)


def _segment(radius, half_angle):
    """Area and first moment about the chord's normal through the centre of a circular
    segment: A = a^2 (t - sin t cos t), M = 2/3 a^3 sin^3 t (any handbook of areas)."""
    t = half_angle
    return radius**2 * (t - math.sin(t) * math.cos(t)), 2 / 3 * radius**3 * math.sin(t) ** 3


def _hand_island():
    """Steel outside the arc barrier: the lens inside the rib circle and inside the barrier's
    inner arc, plus the strip of the tangential rib layer above it. Returns (area m^2,
    first moment int x dA m^3) in pole coordinates (q-axis on x)."""
    big_r, a, r_axis, c, radius = _hand_arc()
    b = radius - 3e-3 / 2  # inner edge of the barrier
    x0 = (a**2 - b**2 + c**2) / (2 * c)  # chord through the two circles' crossings
    a1, m1 = _segment(a, math.acos(x0 / a))  # rib-circle segment beyond the chord
    a2, m2 = _segment(b, math.acos((c - x0) / b))  # inner-arc segment towards the origin
    phi = math.atan2(math.sqrt(a**2 - x0**2), x0)  # the lens meets the rib circle at +-phi
    strip_area = (big_r**2 - a**2) * phi
    strip_moment = 2 / 3 * (big_r**3 - a**3) * math.sin(phi)
    return a1 + a2 + strip_area, m1 + (c * a2 - m2) + strip_moment


@pytest.mark.parametrize("post_mm", [0.0, 1.0])
def test_island_mass_force_and_rib_area_by_hand(post_mm):
    spec = _one_barrier(post_mm)
    result = rib_stress(spec, speed_rpm=3000.0, safety_factor=1.5)
    (b,) = result.barriers
    area, moment = _hand_island()
    rho, length = 7700.0, 0.160  # M400-50A density (EN 10106, from memory), stack
    omega = 3000 * 2 * math.pi / 60
    # shapely's 720-gon arcs and the 5 um cut through the ribs: 0.2 % is ample
    assert b.island_mass_kg == pytest.approx(rho * area * length, rel=2e-3)
    assert b.centroid_radius_m == pytest.approx(moment / area, rel=2e-3)
    assert b.force_N == pytest.approx(rho * length * moment * omega**2, rel=2e-3)
    carrying = (2 * 0.8e-3 + post_mm * 1e-3) * length  # two ribs and the post
    assert b.rib_area_m2 + b.post_area_m2 == pytest.approx(carrying, rel=1e-12)
    assert b.stress_Pa == pytest.approx(b.force_N / carrying, rel=1e-12)
    assert b.allowed_Pa == pytest.approx(350e6 / 1.5)  # typical yield, from memory
    assert not result.exceeded and result.caution == RIB_CAUTION


def test_overspeed_warns_and_cautions(caplog, demo_spec):
    spec = demo_spec
    with caplog.at_level(logging.WARNING, logger="fluxlab.envelope.ribstress"):
        result = rib_stress(spec, speed_rpm=20000.0)
    assert result.exceeded
    assert any("exceeds the allowed" in m for m in caplog.messages)
    assert "does not replace a structural analysis" in result.caution
    # the inner barriers carry more: the stress rises inwards for the demo
    stresses = [b.stress_Pa for b in result.barriers]
    assert stresses == sorted(stresses)


@pytest.mark.parametrize("kwargs", [dict(speed_rpm=-1.0), dict(speed_rpm=math.nan),
                                    dict(safety_factor=0.5)])
def test_bad_rib_inputs(kwargs):
    with pytest.raises(ValueError, match="rib") as info:
        rib_stress(load_machine(GEOMETRIES / "demo_fan_drive.toml"), **kwargs)
    assert not isinstance(info.value, SpecError)  # an argument, not a file
