"""Flux densities per design region: the weighted percentile, the regions, the values."""

import dataclasses
import math

import numpy as np
import pytest
from paths import GEOMETRIES
from shapely.geometry import box

from fluxlab.fem.solver import element_areas
from fluxlab.geometry.csg import to_shapely, union
from fluxlab.geometry.rotor import barrier_placement, barrier_shape
from fluxlab.geometry.stator import slot_shapes
from fluxlab.machine.model import build_model
from fluxlab.materials.material import MU0
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.studies.flux_density import (
    region_elements,
    region_flux_densities,
    slot_bottom_radius,
    weighted_percentile,
)
from fluxlab.studies.operating_point import solve_point


def _coarse(name):
    """A demo machine on a coarser mesh, to keep the suite fast."""
    return replace_path(load_machine(GEOMETRIES / name), "mesh.size_mm", 4.5)


@pytest.fixture(scope="module")
def demo():
    return build_model(_coarse("demo_fan_drive.toml"))


@pytest.fixture(scope="module")
def round_rotor_linear():
    # mu_r 1e5: the iron's share of the MMF (about 12 % at mu_r 2000 on this machine)
    # drops below 0.5 %, so the air-gap estimate below needs no iron term
    steel = {"linear_mu_r": 1e5}
    spec = replace_path(_coarse("demo_round_rotor.toml"), "materials.stator", steel)
    return build_model(replace_path(spec, "materials.rotor", steel))


# ------------------------------------------------------------------ weighted percentile
@pytest.mark.parametrize("n", [1, 7, 100, 1001])
def test_weighted_percentile_with_equal_weights_is_the_inverted_cdf(n):
    rng = np.random.default_rng(n)
    values = rng.normal(size=n)
    for share in (0.0, 0.013, 0.25, 0.5, 0.9, 0.99, 1.0):
        expected = np.percentile(values, 100 * share, method="inverted_cdf")
        assert weighted_percentile(values, np.full(n, 2.5), share) == expected


def test_weighted_percentile_by_hand():
    # weights 4, 1, 1, 2 of 8: the sorted values hold 1/2, 5/8, 3/4 and all of the weight
    values, weights = np.array([3.0, 1.0, 4.0, 2.0]), np.array([1.0, 4.0, 2.0, 1.0])
    cases = {0.0: 1.0, 0.5: 1.0, 0.51: 2.0, 0.625: 2.0, 0.7: 3.0, 0.76: 4.0, 1.0: 4.0}
    for share, expected in cases.items():
        assert weighted_percentile(values, weights, share) == expected
    # a large element at 1 T outweighs a sliver at 3 T: 99.5 % of the area is at 1 T
    assert weighted_percentile([3.0, 1.0], [0.005, 0.995], 0.99) == 1.0
    assert weighted_percentile([3.0, 1.0], [0.02, 0.98], 0.99) == 3.0


def test_weighted_percentile_refuses_bad_input():
    with pytest.raises(ValueError):
        weighted_percentile([], [], 0.5)
    with pytest.raises(ValueError):
        weighted_percentile([1.0, 2.0], [1.0, -1.0], 0.5)
    with pytest.raises(ValueError):
        weighted_percentile([1.0], [1.0], 1.5)


# ------------------------------------------------------------------ regions
def test_slot_bottom_radius_round_and_flat():
    spec = _coarse("demo_fan_drive.toml")
    st = spec.stator
    x_bottom = st.bore_diameter / 2 + st.slot_depth
    # round bottom: the deepest point is on the slot axis, slot_depth below the bore
    assert slot_bottom_radius(spec) == pytest.approx(x_bottom, rel=1e-9)
    # flat bottom, parallel teeth: the bottom corners at half width
    # (x sin(pi/Q) - w_t/2) / cos(pi/Q), the side at w_t/2 from the tooth centre line
    flat = replace_path(spec, "stator.slot_bottom", "flat")
    a = math.pi / st.slots
    half = (x_bottom * math.sin(a) - st.tooth_width / 2) / math.cos(a)
    assert slot_bottom_radius(flat) == pytest.approx(math.hypot(x_bottom, half), rel=1e-9)


def test_regions_split_the_iron(demo):
    regions, found = demo.mesh.regions, region_elements(demo)
    for iron, parts in (("stator_iron", ("stator_teeth", "stator_yoke")),
                        ("rotor_iron", ("rotor_flux_guides", "rotor_ribs"))):
        joined = np.concatenate([found[p] for p in parts])
        assert len(joined) == len(np.unique(joined))
        assert np.array_equal(np.sort(joined), np.sort(regions[iron]))


def test_teeth_and_yoke_areas_match_closed_form(demo):
    # Yoke: the annular sector between the slot bottom radius and the outer radius (the
    # round slot bottoms only touch that circle). Teeth: the annular sector from the bore
    # to the slot bottom radius minus the slots (openings and winding layers). Tolerance
    # 1 %: elements are assigned by centroid, and the split circle is no mesh line; the
    # errors of the elements cut by it largely cancel (measured 0.1 % and 0.2 %), while one
    # slot wrongly counted (11 % of the teeth) fails.
    spec, areas = demo.spec, element_areas(demo.problem)
    st, angle = spec.stator, demo.mesh.sector_angle
    r_bore, r_out = st.bore_diameter / 2, st.outer_diameter / 2
    r_bottom = r_bore + st.slot_depth
    slot = to_shapely(union(*slot_shapes(st, spec.winding.layers).values())).area
    n_slots = round(st.slots * angle / (2 * math.pi))
    yoke = angle / 2 * (r_out**2 - r_bottom**2)
    teeth = angle / 2 * (r_bottom**2 - r_bore**2) - n_slots * slot
    found = region_elements(demo)
    assert areas[found["stator_yoke"]].sum() == pytest.approx(yoke, rel=0.01)
    assert areas[found["stator_teeth"]].sum() == pytest.approx(teeth, rel=0.01)


def _arc_opening(rotor, r_rotor, barrier):
    """Angles (rad from the q-axis) where an arc barrier's edges cross its rib circle."""
    place = barrier_placement(rotor, r_rotor, barrier, "barrier")  # the centre line
    c, radius, r_rib = place.arc_centre, place.arc_radius, r_rotor - rotor.tangential_rib
    # law of cosines in the triangle origin - arc centre - crossing point
    return sorted(math.acos((r_rib**2 + c**2 - rho**2) / (2 * c * r_rib))
                  for rho in (radius - barrier.width / 2, radius + barrier.width / 2))


def _fillet_steel_in_rib_band(spec) -> float:
    """Steel the barrier-end fillets add within half a rib below the rib circle (the rib
    region's margin), per pole, m^2: the sharp barrier minus its morphological opening by
    the fillet radius (the rounded corners; shapely, independent of the fillet code)."""
    from shapely.geometry import Point

    rotor, r_rotor = spec.rotor, spec.rotor_radius
    r_rib = r_rotor - rotor.tangential_rib
    band = Point(0, 0).buffer(r_rib, 2048).difference(
        Point(0, 0).buffer(r_rib - rotor.tangential_rib / 2, 2048))
    total = 0.0
    for i, b in enumerate(rotor.barriers):
        sharp = to_shapely(barrier_shape(rotor, r_rotor, b, f"rotor.barriers[{i}]"))
        if b.post_width:
            sharp = sharp.difference(box(0, -b.post_width / 2, 1, b.post_width / 2))
        opened = sharp.buffer(-rotor.rib_fillet, 256).buffer(rotor.rib_fillet, 256)
        total += sharp.difference(opened).intersection(band).area
    return total


def test_rib_and_post_area_matches_estimate(demo):
    # Tangential ribs: per barrier end, the ring sector between the rib circle and the rotor
    # surface over the end's opening and half a rib beyond it each side; posts: post width x
    # barrier width where the post crosses the barrier on the q-axis (arcs replaced by straight
    # lines, relative error below 1e-3), plus the fillets' steel in the rib region's margin.
    # Both ends of each barrier, every pole of the sector.
    # Tolerance 5 %: elements (size a third of the rib) are assigned by centroid across the 2 x 3
    # rib ends and 2 post ends of a pole that are no mesh lines (measured 1 %); the smallest rib
    # end alone is 8 % of the total, so a missed end fails.
    spec, areas = demo.spec, element_areas(demo.problem)
    rotor, r_rotor = spec.rotor, spec.rotor_radius
    ring = 0.5 * (r_rotor**2 - (r_rotor - rotor.tangential_rib) ** 2)
    per_pole = 0.0
    for b in rotor.barriers:
        lo, hi = _arc_opening(rotor, r_rotor, b)
        corners = rotor.tangential_rib / (r_rotor - rotor.tangential_rib)  # half a rib each side
        per_pole += 2 * ring * (hi - lo + corners) + b.post_width * b.width
    per_pole += _fillet_steel_in_rib_band(spec)
    poles = round(spec.poles * demo.mesh.sector_angle / (2 * math.pi))
    found = region_elements(demo)
    assert areas[found["rotor_ribs"]].sum() == pytest.approx(poles * per_pole, rel=0.05)


# ------------------------------------------------------------------ values
def test_ordering_facts_on_the_nonlinear_demo(demo):
    point = solve_point(demo, 25.0, math.radians(60), demo.axis_step)
    out = region_flux_densities(demo, point.solution)
    assert set(out) == {"stator_teeth", "stator_yoke", "rotor_flux_guides", "rotor_ribs",
                        "local_peak"}
    values = [v for entry in out.values() for v in entry.values()]
    assert all(isinstance(v, float) and math.isfinite(v) for v in values)
    peak = out["local_peak"]["max_T"]
    assert peak == pytest.approx(point.solution.b_norm.max(), rel=1e-12)
    for name, entry in out.items():
        if name != "local_peak":
            assert 0.0 <= entry.get("mean_T", 0.0) <= entry["p99_T"] <= peak
    # the ribs are made thin to saturate: their |B| tops the flux guides' (common
    # practice, no source)
    assert out["rotor_ribs"]["p99_T"] > out["rotor_flux_guides"]["p99_T"]
    # the peak's place lies in the modelled sector, inside the stator's outer circle
    x, y = out["local_peak"]["x_mm"], out["local_peak"]["y_mm"]
    assert math.hypot(x, y) < demo.spec.stator.outer_diameter / 2 * 1e3
    # b_norm given per quadrature point (constant over each element) gives the same
    n_qp = demo.problem.data.weights.shape[1]
    per_point = np.repeat(point.solution.b_norm[:, None], n_qp, axis=1)
    again = region_flux_densities(demo, dataclasses.replace(point.solution, b_norm=per_point))
    for name, entry in out.items():
        for key, value in entry.items():
            assert again[name][key] == pytest.approx(value, rel=1e-12, abs=1e-12)


def _yoke_mean_closed_form(a1, r_in, r_out, p, n=400):
    """Area mean of |B| in a uniform yoke ring, A = a1 g(r) cos(p theta) on r_in..r_out.

    g solves Laplace (r^p and r^-p) with g(r_in) = 1 and g(r_out) = 0 (A = 0 outside);
    B_r = (1/r) dA/dtheta, B_theta = -dA/dr. Midpoint rule over one pole pitch.
    """
    r = r_in + (np.arange(n) + 0.5) * (r_out - r_in) / n
    t = (np.arange(n) + 0.5) * math.pi / (p * n)
    r, t = np.meshgrid(r, t, indexing="ij")
    den = (r_in / r_out) ** p - (r_out / r_in) ** p
    g = ((r / r_out) ** p - (r_out / r) ** p) / den
    dg = p / r * ((r / r_out) ** p + (r_out / r) ** p) / den
    b = a1 * np.hypot(dg * np.cos(p * t), p / r * g * np.sin(p * t))
    return float((b * r).sum() / r.sum())


def test_yoke_mean_against_air_gap_flux_per_pole(round_rotor_linear):
    # d-axis current on a smooth rotor with (near) ideal iron. Chain, all from memory:
    # - winding factor k_w = k_d k_p, k_d = sin(q a/2) / (q sin(a/2)) with a the slot
    #   angle (electrical) and q slots per pole and phase, k_p = sin(pitch/pole pitch 90 deg);
    # - MMF fundamental per pole of three phases at peak current I:
    #   F1 = 3/2 * 4/pi * k_w N_ph / (2p) * I, N_ph series turns per phase;
    # - air gap field B1 = mu0 F1 / (k_C g), Carter factor k_C = t_s / (t_s - gam g),
    #   gam = (b0/g)^2 / (5 + b0/g);
    # - flux per pole per metre Phi = 2 B1 r_bore / p; the yoke carries half of it, so the
    #   potential at the slot bottom is A1 = Phi / 2 (A = 0 on the outer surface, slot
    #   leakage neglected) and the yoke field is the closed-form ring field above.
    # Tolerance 15 %: slot leakage, the flux entering the yoke through tooth roots rather
    # than evenly, yoke flux passing below the slot bottom radius between round slot
    # bottoms, and Carter's approximation (measured -7 %).
    model = round_rotor_linear
    spec, st, w = model.spec, model.spec.stator, model.spec.winding
    p, current = spec.pole_pairs, 5.0
    q = st.slots / (spec.poles * 3)
    a = p * 2 * math.pi / st.slots
    k_w = math.sin(q * a / 2) / (q * math.sin(a / 2)) * math.sin(
        w.coil_pitch_slots / (st.slots / spec.poles) * math.pi / 2)
    n_ph = st.slots * w.layers // 2 * w.turns_per_coil // (3 * w.parallel_paths)
    f1 = 1.5 * 4 / math.pi * k_w * n_ph / (2 * p) * current
    r_bore = st.bore_diameter / 2
    slot_pitch = 2 * math.pi * r_bore / st.slots
    ratio = st.slot_opening / st.airgap
    k_c = slot_pitch / (slot_pitch - ratio**2 / (5 + ratio) * st.airgap)
    b1 = MU0 * f1 / (k_c * st.airgap)
    a1 = b1 * r_bore / p
    expected = _yoke_mean_closed_form(a1, r_bore + st.slot_depth, st.outer_diameter / 2, p)
    point = solve_point(model, current, 0.0, model.axis_step)
    out = region_flux_densities(model, point.solution)
    assert "rotor_ribs" not in out  # a rotor without barriers has no ribs
    assert out["stator_yoke"]["mean_T"] == pytest.approx(expected, rel=0.15)
    assert out["stator_yoke"]["mean_T"] <= out["stator_yoke"]["p99_T"]
