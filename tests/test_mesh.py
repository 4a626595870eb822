"""Geometry and mesh: region areas against independent references, sliding circle, sector.

Area references are closed-form (annulus sectors, a parallel slot) or built independently
with shapely (barriers) from the spec's numbers; the mesh comes from gmsh.
"""

import math

import numpy as np
import pytest
from paths import GEOMETRIES

from fluxlab.mesh.machine_mesh import build_mesh
from fluxlab.spec.machine_file import load_machine, replace_path

AREA_TOL = 5e-3  # issue requirement: region areas within 0.5 %


@pytest.fixture(scope="module")
def demo(demo_spec):
    spec = demo_spec
    return spec, build_mesh(spec)


@pytest.fixture(scope="module")
def pump():
    spec = load_machine(GEOMETRIES / "demo_pump_6p54s.toml")
    return spec, build_mesh(spec)


def _element_areas(mesh) -> np.ndarray:
    """Unsigned triangle areas (scikit-fem sorts each element's nodes, so no orientation)."""
    p = mesh.p[:, mesh.t]
    return 0.5 * abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0])
                     - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))


def _area(machine, *names) -> float:
    a = _element_areas(machine.mesh)
    return sum(a[machine.regions[n]].sum() for n in names)


def _names(machine, prefix):
    return [n for n in machine.regions if n.startswith(prefix)]


def _annulus_sector(r_in, r_out, angle):
    return 0.5 * angle * (r_out**2 - r_in**2)


def test_sector_is_one_pole_pitch_antiperiodic(demo):
    spec, m = demo
    # integral-slot winding (q = 3): the field repeats with opposite sign every pole
    assert m.sector_angle == pytest.approx(2 * math.pi / spec.poles)
    assert m.sectors == spec.poles and m.edge_sign == -1


def test_annulus_regions_match_closed_form(demo):
    spec, m = demo
    phi, st = m.sector_angle, spec.stator
    r_shaft, r_rotor = spec.rotor.shaft_diameter / 2, spec.rotor_radius
    r_slide, r_bore, r_out = m.sliding_radius, st.bore_diameter / 2, st.outer_diameter / 2
    cases = [
        (_area(m, "shaft"), _annulus_sector(0, r_shaft, phi)),
        (_area(m, "rotor_iron", *_names(m, "barrier")), _annulus_sector(r_shaft, r_rotor, phi)),
        (_area(m, "airgap_rotor"), _annulus_sector(r_rotor, r_slide, phi)),
        (_area(m, "airgap_stator"), _annulus_sector(r_slide, r_bore, phi)),
        (_area(m, "stator_iron", "slot_opening", *_names(m, "slot_")),
         _annulus_sector(r_bore, r_out, phi)),
    ]
    for got, want in cases:
        assert got == pytest.approx(want, rel=AREA_TOL)


def _rib_crossing(c, rho, r_rib):
    """Angle of the point where the circle of radius rho about (c, 0) crosses the circle
    r_rib about the origin: subtracting the two circle equations gives its x."""
    x = (r_rib**2 - rho**2 + c**2) / (2 * c)
    assert x < c, "a crossing beyond the arc centre: this reference does not apply"
    return math.atan2(math.sqrt(r_rib**2 - x**2), x)


def _reference_arc_centre_line(spec, b):
    """Centre-line circle (centre x, radius) of an arc barrier from the spec alone.

    The circle passes through the q-axis point and an end point half a width inside the
    rib circle; end_angle is the middle of the opening under the rib (between the
    crossings of radius -/+ width/2 with the rib circle), so the end point's angle is
    found by bisection, a bracket of 5 deg below end_angle.
    """
    r_rib = spec.rotor_radius - spec.rotor.tangential_rib
    r_end, x0, half = r_rib - b.width / 2, spec.rotor_radius - b.depth, b.width / 2

    def circle(t):
        p1 = r_end * np.array([math.cos(t), math.sin(t)])
        # centre (c, 0) equidistant from (x0, 0) and p1: solve the linear equation in c
        c = (p1 @ p1 - x0**2) / (2 * (p1[0] - x0))
        return c, c - x0

    def middle(t):
        c, radius = circle(t)
        return 0.5 * (_rib_crossing(c, radius - half, r_rib)
                      + _rib_crossing(c, radius + half, r_rib))

    lo, hi = b.end_angle - math.radians(5), b.end_angle
    assert middle(lo) < b.end_angle < middle(hi)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if middle(mid) < b.end_angle else (lo, mid)
    return circle(0.5 * (lo + hi))


def _reference_arc_barrier(spec, b):
    """Arc barrier area built with shapely from the spec alone, its corners rounded."""
    from shapely.geometry import Point, box

    r_rotor, rib = spec.rotor_radius, spec.rotor.tangential_rib
    c, radius = _reference_arc_centre_line(spec, b)
    band = Point(c, 0).buffer(radius + b.width / 2, 2048).difference(
        Point(c, 0).buffer(radius - b.width / 2, 2048))
    shape = band.intersection(Point(0, 0).buffer(r_rotor - rib, 2048)).intersection(
        box(-1, -1, c, 1))
    if b.post_width:
        shape = shape.difference(box(0, -b.post_width / 2, 1, b.post_width / 2))
    # rounded barrier ends: every convex corner filleted is the morphological opening
    fillet = spec.rotor.rib_fillet
    return shape.buffer(-fillet, 256).buffer(fillet, 256).area


def test_barrier_areas_match_shapely_reference(demo):
    spec, m = demo
    poles = round(m.sector_angle * spec.poles / (2 * math.pi))
    for i, b in enumerate(spec.rotor.barriers):
        want = poles * _reference_arc_barrier(spec, b)
        assert _area(m, f"barrier_{i}") == pytest.approx(want, rel=AREA_TOL), i


def test_parallel_slot_areas_match_closed_form(pump):
    spec, m = pump
    st = spec.stator
    r_bore, s, h = st.bore_diameter / 2, st.slot_width, st.slot_opening / 2
    x_top, x_bottom = r_bore + st.tip_height, r_bore + st.slot_depth
    # opening between the bore circle and the body: 2 h x_top - int_{-h}^{h} sqrt(r^2 - y^2) dy
    opening = 2 * h * x_top - (h * math.sqrt(r_bore**2 - h**2) + r_bore**2 * math.asin(h / r_bore))
    f = st.bottom_fillet
    body = s * (x_bottom - x_top) - 2 * (1 - math.pi / 4) * f**2  # flat bottom, two fillets
    slots = round(st.slots * m.sector_angle / (2 * math.pi))
    assert _area(m, "slot_opening") == pytest.approx(slots * opening, rel=AREA_TOL)
    assert _area(m, "slot_0_layer_0", "slot_0_layer_1") == pytest.approx(body, rel=AREA_TOL)
    top = s * (0.5 * (x_top + x_bottom) - x_top)  # top layer: to the middle of the body
    assert _area(m, "slot_0_layer_0") == pytest.approx(top, rel=AREA_TOL)


def test_round_bottom_parallel_slot_area(pump):
    spec, _ = pump
    spec = replace_path(spec, "stator.slot_bottom", "round")
    m = build_mesh(spec)
    st = spec.stator
    x_top = st.bore_diameter / 2 + st.tip_height
    x_centre = st.bore_diameter / 2 + st.slot_depth - st.slot_width / 2
    body = st.slot_width * (x_centre - x_top) + math.pi * st.slot_width**2 / 8
    assert _area(m, "slot_3_layer_0", "slot_3_layer_1") == pytest.approx(body, rel=AREA_TOL)


@pytest.mark.parametrize("fixture", ["demo", "pump"])
def test_sliding_circle_nodes_equal_and_equally_spaced(fixture, request):
    spec, m = request.getfixturevalue(fixture)
    copies = []
    for part in ("rotor", "stator"):
        nodes = np.unique(m.mesh.facets[:, m.mesh.boundaries[f"sliding_{part}"]])
        x, y = m.mesh.p[:, nodes]
        assert np.allclose(np.hypot(x, y), m.sliding_radius, rtol=1e-9)
        angles = np.sort(np.arctan2(y, x))
        copies.append(angles)
        assert len(angles) == m.sliding_divisions + 1
        assert np.allclose(np.diff(angles), m.step_angle, rtol=1e-6, atol=0)
    assert np.allclose(copies[0], copies[1], atol=1e-12)
    # a study step of 1/steps_per_slot slot pitch is a whole number of segments
    per_slot = m.sliding_divisions * 2 * math.pi / (m.sector_angle * spec.stator.slots)
    assert per_slot == pytest.approx(round(per_slot), abs=1e-9)
    assert round(per_slot) % spec.mesh.steps_per_slot == 0


@pytest.mark.parametrize("fixture", ["demo", "pump"])
def test_periodic_edges_are_node_matched(fixture, request):
    _, m = request.getfixturevalue(fixture)
    c, s = math.cos(m.sector_angle), math.sin(m.sector_angle)
    for part in ("rotor", "stator"):
        start = m.mesh.p[:, np.unique(m.mesh.facets[:, m.mesh.boundaries[f"edge_start_{part}"]])]
        end = m.mesh.p[:, np.unique(m.mesh.facets[:, m.mesh.boundaries[f"edge_end_{part}"]])]
        rotated = np.array([c * start[0] - s * start[1], s * start[0] + c * start[1]])
        a = rotated[:, np.argsort(np.hypot(*rotated))]
        b = end[:, np.argsort(np.hypot(*end))]
        assert a.shape == b.shape
        assert np.allclose(a, b, atol=1e-9)


@pytest.mark.parametrize("fixture", ["demo", "pump"])
def test_no_inverted_or_degenerate_elements(fixture, request):
    _, m = request.getfixturevalue(fixture)
    areas = _element_areas(m.mesh)
    assert np.all(areas > 1e-6 * np.median(areas))
    p = m.mesh.p[:, m.mesh.t]
    edges = [np.hypot(*(p[:, (k + 1) % 3] - p[:, k])) for k in range(3)]
    # smallest angle by the law of cosines: above 10 degrees is a sound mesh (common practice)
    a, b, c = edges
    cos_max = np.max([(b**2 + c**2 - a**2) / (2 * b * c), (a**2 + c**2 - b**2) / (2 * a * c),
                      (a**2 + b**2 - c**2) / (2 * a * b)], axis=0)
    assert np.degrees(np.arccos(cos_max)).min() > 10


def test_at_least_two_element_layers_each_side_of_the_sliding_circle(demo):
    spec, m = demo
    half_gap = spec.stator.airgap / 2
    for region in ("airgap_rotor", "airgap_stator"):
        r = np.hypot(*m.mesh.p[:, m.mesh.t[:, m.regions[region]]])
        extent = r.max(axis=0) - r.min(axis=0)
        # no element spans more than ~half the half-gap, so any radial line crosses >= 2
        assert extent.max() < 0.75 * half_gap


def test_rotor_and_stator_parts_share_no_node(demo):
    _, m = demo
    rotor_nodes = set(np.unique(m.mesh.t[:, m.rotor_element]))
    stator_nodes = set(np.unique(m.mesh.t[:, ~m.rotor_element]))
    assert not rotor_nodes & stator_nodes


def test_u_barrier_and_round_rotor_mesh():
    spec = load_machine(GEOMETRIES / "demo_fan_drive_u.toml")
    m = build_mesh(spec)
    assert {f"barrier_{i}" for i in (0, 1, 2)} <= set(m.regions)
    phi = m.sector_angle
    total = _area(m, "rotor_iron", "barrier_0", "barrier_1", "barrier_2")
    assert total == pytest.approx(
        _annulus_sector(spec.rotor.shaft_diameter / 2, spec.rotor_radius, phi), rel=AREA_TOL)
    round_rotor = build_mesh(load_machine(GEOMETRIES / "demo_round_rotor.toml"))
    assert not [n for n in round_rotor.regions if n.startswith("barrier")]


def test_inverted_or_degenerate_triangles_are_rejected():
    from fluxlab.errors import MeshError
    from fluxlab.mesh.machine_mesh import _check_elements

    points = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [2.0, 0.0]])
    _check_elements(points, np.array([[0, 1, 2]]))  # counter-clockwise: fine
    with pytest.raises(MeshError, match="inverted"):
        _check_elements(points, np.array([[0, 2, 1]]))
    with pytest.raises(MeshError, match="degenerate"):
        _check_elements(points, np.array([[0, 1, 3]]))


def test_meshing_leaves_sigpipe_ignored():
    # gmsh resets SIGPIPE to "terminate" in C; a process that meshed and then writes to a
    # pipe of a crashed worker must get BrokenPipeError, not die (run in a subprocess, so a
    # regression cannot kill the test runner).
    import subprocess
    import sys

    code = (
        "import os\n"
        "from fluxlab.mesh.machine_mesh import build_mesh\n"
        "from fluxlab.spec.machine_file import load_machine, replace_path\n"
        f"spec = load_machine({str(GEOMETRIES / 'demo_round_rotor.toml')!r})\n"
        "build_mesh(replace_path(spec, 'mesh.size_mm', 8.0))\n"
        "r, w = os.pipe()\nos.close(r)\n"
        "try:\n    os.write(w, b'x')\nexcept BrokenPipeError:\n    print('ok')\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 0 and done.stdout.strip() == "ok", (done.returncode, done.stderr)
