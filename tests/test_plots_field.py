"""Field and outline figures: what is drawn lies where the machine is.

The outline drawn from the mesh is checked against the CSG geometry (shapely) it was
meshed from; the rotor drawing against the sliding-circle tie of the solve; the d-axis
mark against the field of a d-axis current; the outline without a mesh against the
closed-form area of the cross-section and the barrier count of the machine file.
"""

import math
from pathlib import Path

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import shapely  # noqa: E402
from matplotlib.tri import TriContourSet  # noqa: E402
from shapely.geometry import LineString  # noqa: E402

from fluxlab.errors import SpecError  # noqa: E402
from fluxlab.fem.solver import solve_field  # noqa: E402
from fluxlab.geometry.stator import slot_outline  # noqa: E402
from fluxlab.machine.model import build_model, current_density, phase_currents, rotor_step  # noqa: E402
from fluxlab.machine.winding import machine_symmetry  # noqa: E402
from fluxlab.report.plots.field import (  # noqa: E402
    _kind,
    flux_levels,
    outline_facets,
    outline_polygons,
    plot_field,
    plot_outline,
    rotor_copies,
)
from fluxlab.spec.machine_file import load_machine, replace_path  # noqa: E402

GEOMETRIES = Path(__file__).resolve().parents[1] / "geometries"
MACHINES = sorted(p for p in GEOMETRIES.glob("*.toml")
                  if not p.name.startswith(("sweep", "optimize")))  # not machine files
# shapely draws a circle as a 720-gon: its vertices lie on the circle and its edges sag
# inside by r (1 - cos(pi/720)) = 9.5e-6 r, 1.0 um at the 105 mm outer radius; the
# outline polygons are cut 0.1 um apart (plots_field._SEAM). Twice that is the band.
CSG_SAG = 2e-6  # m


def _solve(model, angle_deg: float, current: float):
    spec = model.spec
    step = rotor_step(model, 0.0)
    theta_e = spec.pole_pairs * (step - model.axis_step) * model.step_angle
    i_abc = phase_currents(current, math.radians(angle_deg), theta_e)
    return solve_field(model.problem, current_density(model, i_abc), step)


@pytest.fixture(scope="module")
def demo():
    spec = load_machine(GEOMETRIES / "demo_fan_drive.toml")
    model = build_model(spec)
    return model, _solve(model, 0.0, spec.operating.current_peak_A)


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    plt.close("all")


def _image(ax) -> np.ndarray:
    """RGB pixels of the axes' figure, without the title (it names the rotor angle)."""
    ax.set_title("")
    fig = ax.figure
    fig.set_dpi(60)  # enough pixels to see a moved barrier, cheap to render
    fig.canvas.draw()
    return np.asarray(fig.canvas.buffer_rgba())[..., :3].astype(int)


# ---------------------------------------------------------------- field figure
def test_field_figure_has_a_colour_bar_in_tesla_and_flux_lines(demo):
    model, sol = demo
    n_lines = 25
    ax = plot_field(model, sol, n_lines=n_lines)
    assert ax.get_xlabel() == "x (mm)" and ax.get_ylabel() == "y (mm)"
    assert ax.get_aspect() == 1.0
    bars = [a for a in ax.figure.axes if a is not ax]
    assert len(bars) == 1 and bars[0].get_ylabel() == "|B| (T)"
    # the colour scale runs from 0 to the largest element |B|
    mappable = ax.collections[0]
    assert mappable.norm.vmin == 0.0
    assert mappable.norm.vmax == pytest.approx(sol.b_norm.max())
    # one contour set for the stator and one per rotor copy (the rotor at 55 deg needs two)
    sets = [c for c in ax.collections if isinstance(c, TriContourSet)]
    assert len(sets) == 1 + len(rotor_copies(model.mesh, sol.step * model.step_angle)) == 3
    for cs in sets:
        assert len(cs.levels) == n_lines
    # the stator carries flux at most levels: a line is drawn for at least 80 % of them
    # (the extreme levels may close inside the rotor only)
    drawn = [len(p.vertices) > 1 for p in sets[0].get_paths()]
    assert sum(drawn) >= 0.8 * n_lines


def test_field_colour_scale_can_be_capped(demo):
    model, sol = demo
    ax = plot_field(model, sol, b_max=1.5)  # the ribs saturate past 2 T at rated current
    assert ax.collections[0].norm.vmax == 1.5
    assert ax.figure.axes[1].get_ylabel() == "|B| (T)"
    assert ax.collections[0].colorbar.extend == "max"  # the arrow says values go beyond
    with pytest.raises(SpecError, match="b_max"):
        plot_field(model, sol, b_max=0.0)


def test_flux_levels_are_equal_flux_steps_symmetric_for_anti_periodic_sectors():
    a = np.array([-0.2, 0.05, 1.0])
    levels = flux_levels(a, 10, -1)
    assert np.allclose(levels, -levels[::-1])  # the sector's image (-A) has the same lines
    assert np.allclose(np.diff(levels), 0.2)  # 2 * max|A| / 10
    assert np.allclose(flux_levels(a, 4, 1), [-0.05, 0.25, 0.55, 0.85])  # (1.2 / 4) bins
    with pytest.raises(SpecError, match="n_lines"):
        flux_levels(a, 0, 1)


def test_outline_facets_separate_regions_and_lie_on_the_geometry(demo):
    model, _ = demo
    machine = model.mesh
    mesh = machine.mesh
    facets = outline_facets(machine)
    region = np.empty(mesh.t.shape[1], dtype=object)
    for name, elements in machine.regions.items():
        region[elements] = name
    left, right = mesh.f2t[:, facets]
    inner = right >= 0
    # an inner outline facet separates two regions of different kind ...
    pairs = zip(region[left[inner]], region[right[inner]], strict=True)
    assert all(_kind(a) != _kind(b) for a, b in pairs)
    # ... and a boundary one is on the outer surface (no sector edge, no sliding circle)
    assert set(facets[~inner]) == set(mesh.boundaries["outer"])
    # every node of the outline lies on a region boundary of the CSG geometry: gmsh puts
    # boundary nodes on the exact curves, shapely's edges sag by at most CSG_SAG
    machine_spec = model.spec
    polys = outline_polygons(machine_spec)
    solid = shapely.union_all([g.boundary for n, g in polys if _kind(n) != "air"])
    nodes = np.unique(mesh.facets[:, facets])
    assert shapely.distance(shapely.points(mesh.p[:, nodes].T), solid).max() < CSG_SAG
    # and every CSG region boundary is drawn: each vertex of it is within the chord sag of
    # the mesh, h^2 / (8 R), of an outline facet (h = element size, R = the tightest arc,
    # the round slot bottom; elementary geometry of a chord)
    s = machine.sector_angle
    cuts = shapely.union_all([LineString([(0, 0), (1.0, 0.0)]).buffer(1e-6),
                              LineString([(0, 0), (math.cos(s), math.sin(s))]).buffer(1e-6)])
    csg_vertices = shapely.points(shapely.get_coordinates(solid.difference(cuts)))
    segments = shapely.linestrings(np.stack([mesh.p[:, mesh.facets[0, facets]].T,
                                             mesh.p[:, mesh.facets[1, facets]].T], axis=1))
    sag = machine_spec.mesh.size**2 / (8 * slot_outline(machine_spec.stator).round_radius)
    _, distance = shapely.STRtree(segments).query_nearest(csg_vertices, return_distance=True)
    assert distance.max() < sag + CSG_SAG


def _sliding_mismatch(model, sol, rotor_angle: float) -> tuple[float, float]:
    """Largest node distance (m) and potential difference (relative to max |A|) between the
    drawn rotor copies and the stator on the sliding circle."""
    machine = model.mesh
    mesh = machine.mesh
    rot = np.unique(mesh.facets[:, mesh.boundaries["sliding_rotor"]])
    sta = np.unique(mesh.facets[:, mesh.boundaries["sliding_stator"]])
    xy_sta = mesh.p[:, sta].T
    gap, jump = 0.0, 0.0
    for turn, sign in rotor_copies(machine, rotor_angle):
        c, s = math.cos(turn), math.sin(turn)
        xy = mesh.p[:, rot].T @ np.array([[c, s], [-s, c]])
        theta = np.arctan2(xy[:, 1], xy[:, 0])
        inside = (theta > -1e-9) & (theta < machine.sector_angle + 1e-9)
        d = np.linalg.norm(xy[inside, None, :] - xy_sta[None], axis=2)
        nearest = d.argmin(axis=1)
        gap = max(gap, d.min(axis=1).max())
        jump = max(jump, np.abs(sign * sol.a[rot[inside]] - sol.a[sta[nearest]]).max())
    return gap, jump / np.abs(sol.a).max()


def test_rotor_drawn_at_the_solved_angle_meets_the_stator_on_the_sliding_circle(demo):
    # A_z is continuous across the sliding circle (normal B continuous; common practice,
    # any electromagnetics text), so at the solved angle the drawn rotor copies must put
    # each rotor circle node on a stator node with the same potential (the solver ties
    # them exactly: tolerances are rounding, 1e-12 m and 1e-12 of max |A|)
    model, sol = demo
    angle = sol.step * model.step_angle
    gap, jump = _sliding_mismatch(model, sol, angle)
    assert gap < 1e-12 and jump < 1e-12
    # one step off, the nodes still meet but the potentials do not: the check can fail
    gap, jump = _sliding_mismatch(model, sol, angle + model.step_angle)
    assert gap < 1e-12 and jump > 1e-3


def test_picture_repeats_after_one_sector_and_changes_after_half(demo):
    # turning the rotor by a whole sector shows the same sector (the image of the rotor
    # part one sector on, potential times edge_sign); half a sector (here half a pole
    # pitch) puts barriers where steel was. Tolerances: identical renders differ in no
    # pixel; 0.1 % allows anti-aliasing round-off; 5 % is far below the ~14 % measured.
    model, sol = demo
    angle = sol.step * model.step_angle
    s = model.mesh.sector_angle
    base = _image(plot_field(model, sol, rotor_angle=angle))
    same = _image(plot_field(model, sol, rotor_angle=angle + s))
    half = _image(plot_field(model, sol, rotor_angle=angle + s / 2))
    assert base.shape == same.shape == half.shape
    assert (np.abs(base - same).max(axis=2) > 16).mean() < 1e-3
    assert (np.abs(base - half).max(axis=2) > 16).mean() > 0.05


def test_d_axis_mark_is_where_the_d_current_field_changes_sign_in_the_gap(demo):
    # With a d-axis current the field is symmetric about the rotor d-axis, so A_z is odd
    # about it and crosses zero there on the air-gap circle (the MMF wave of i_d is
    # centred on the d-axis; common practice, no source). Tolerance 1 deg mech.: a tenth
    # of the 10 deg slot pitch, 7 rotor steps; a wrong rotation sense would miss by 20 deg.
    model, sol = demo
    ax = plot_field(model, sol)
    marks = {t.get_text(): math.atan2(*t.get_position()[::-1]) for t in ax.texts}
    assert set(marks) == {"d", "q"}
    assert (marks["q"] - marks["d"]) % model.mesh.sector_angle == pytest.approx(
        math.pi / model.spec.poles)
    mesh = model.mesh.mesh
    sta = np.unique(mesh.facets[:, mesh.boundaries["sliding_stator"]])
    theta = np.arctan2(mesh.p[1, sta], mesh.p[0, sta])
    order = np.argsort(theta)
    theta, a = theta[order], sol.a[sta][order]
    k = np.flatnonzero(np.sign(a[:-1]) != np.sign(a[1:]))
    zeros = theta[k] - a[k] * (theta[k + 1] - theta[k]) / (a[k + 1] - a[k])
    assert len(zeros) >= 1
    assert np.min(np.abs(zeros - marks["d"])) < math.radians(1.0)


@pytest.mark.slow
def test_field_figure_of_a_p2_model_uses_vertex_values():
    spec = load_machine(GEOMETRIES / "demo_fan_drive.toml")
    spec = replace_path(replace_path(spec, "mesh.element_order", 2), "mesh.size_mm", 6.0)
    model = build_model(spec)
    sol = _solve(model, 0.0, spec.operating.current_peak_A)
    ax = plot_field(model, sol)
    sets = [c for c in ax.collections if isinstance(c, TriContourSet)]
    assert sets and sum(len(p.vertices) for cs in sets for p in cs.get_paths()) > 0
    # the sliding-circle match holds for the vertex values as well
    gap, jump = _sliding_mismatch(model, sol, sol.step * model.step_angle)
    assert gap < 1e-12 and jump < 1e-12


# ---------------------------------------------------------------- outline without a mesh
@pytest.mark.parametrize("path", MACHINES, ids=[p.stem for p in MACHINES])
@pytest.mark.parametrize("full", [False, True], ids=["sector", "full"])
def test_outline_tiles_the_cross_section_and_draws_every_barrier(path, full):
    spec = load_machine(path)
    sectors, sector_angle, _ = machine_symmetry(spec.stator.slots, spec.poles)
    polys = outline_polygons(spec, full=full)
    # the visible regions tile the disk (or sector) of the outer radius, pi R^2 or
    # s R^2 / 2: an inscribed 720-gon has 2 pi^2 / (3 720^2) = 1.3e-5 less area and the
    # 0.1 um seams between regions about 1.5e-5; 1e-4 bounds both
    r = spec.stator.outer_diameter / 2
    reference = math.pi * r**2 if full else sector_angle * r**2 / 2
    assert sum(g.area for _, g in polys) == pytest.approx(reference, rel=1e-4)
    # each pole has one piece per barrier, two where a post splits it
    per_pole = sum(2 if b.post_width > 0 else 1 for b in spec.rotor.barriers)
    poles = spec.poles if full else spec.poles // sectors
    pieces = sum(len(shapely.get_parts(g)) for n, g in polys if n.startswith("barrier"))
    assert pieces == poles * per_pole
    ax = plot_outline(spec, full=full)
    assert ax.get_xlabel() == "x (mm)" and ax.get_ylabel() == "y (mm)"
    x0, x1 = ax.get_xlim()
    assert x1 == pytest.approx(1.03 * r * 1e3)  # the machine plus a 3 % margin, in mm
    if full:
        assert x0 == pytest.approx(-1.03 * r * 1e3)
