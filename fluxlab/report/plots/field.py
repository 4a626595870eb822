"""Report figures of a machine: the solved field (|B| and flux lines) and the outline.

``plot_field`` draws one modelled sector with the rotor turned to the position it was
solved at; ``plot_outline`` draws the machine from its region trees without meshing, for
review sheets and for comparing many candidates side by side.
"""

from __future__ import annotations

import math

import numpy as np

from fluxlab.errors import SpecError
from fluxlab.fem.sector_ties import sector_wraps
from fluxlab.fem.solver import FieldSolution
from fluxlab.geometry import model_sector, rotor_regions, stator_regions
from fluxlab.geometry.csg import to_shapely
from fluxlab.machine.model import MachineModel
from fluxlab.mesh.machine_mesh import MachineMesh
from fluxlab.report.plots.mesh import region_colour
from fluxlab.spec.types import MachineSpec

__all__ = [
    "outline_facets",
    "rotor_copies",
    "flux_levels",
    "plot_field",
    "outline_polygons",
    "plot_outline",
]

_AIR_PREFIXES = ("airgap", "slot_opening")  # air regions drawn as one: no line between them
_FIELD_CMAP = "viridis"  # perceptually uniform, readable in grey print
_AXIS_COLOUR = "#d62728"  # d/q axis marks: apart from the black flux lines on viridis
_OUTLINE_COLOUR = "0.92"  # light lines: seen on dark air and on bright iron
_EDGE_TOL = 1e-8  # m: a point this close to a sector edge line lies on it
_SEAM = 1e-7  # m: gap left between neighbouring regions of the outline
_MIN_WIDTH = 5e-6  # m: narrower pieces are chord slivers (arc sag <= 2 um at r = 0.2 m)


def _kind(name: str) -> str:
    """Region kind for outlines: the air regions are one kind, every other region its own."""
    return "air" if name.startswith(_AIR_PREFIXES) else name


def outline_facets(machine: MachineMesh) -> np.ndarray:
    """Facets of the geometry outline: region interfaces and the outer surface.

    A facet belongs to the outline when its two elements are of different regions (the
    air gap halves and slot openings count as one air region, so the sliding circle and
    the bore line across a slot opening are left out), or when it is on the ``outer``
    boundary. The sector edges and the sliding circle are cuts of the model, not of the
    machine, and are not drawn.

    Returns
    -------
    (n,) facet indices into ``machine.mesh.facets``.
    """
    mesh = machine.mesh
    kinds = sorted({_kind(n) for n in machine.regions})
    code = np.full(mesh.t.shape[1], -1, dtype=np.int64)
    for name, elements in machine.regions.items():
        code[elements] = kinds.index(_kind(name))
    left, right = mesh.f2t
    inner = right >= 0
    differs = np.zeros(mesh.facets.shape[1], dtype=bool)
    differs[inner] = code[left[inner]] != code[right[inner]]
    differs[mesh.boundaries["outer"]] = True
    return np.flatnonzero(differs)


def rotor_copies(machine: MachineMesh, rotor_angle: float) -> list[tuple[float, float]]:
    """How to draw the rotor part inside the stator sector at a rotor angle.

    The rotor part turned by ``rotor_angle`` reaches past the sector end; that piece is
    drawn as its image one sector back (the sector repeats with ``edge_sign``: the machine
    is periodic or anti-periodic over one sector). Both copies are clipped to the sector.

    Returns
    -------
    list of (turn, sign)
        Turn of the rotor-frame mesh, rad counter-clockwise, and the factor (+-1) on the
        rotor-frame potential of that copy; one or two entries.
    """
    s = machine.sector_angle
    wraps, sign = (float(x) for x in sector_wraps(rotor_angle, s, machine.edge_sign))
    turn = rotor_angle - wraps * s  # in [0, s)
    copies = [(turn, sign)]
    if turn > 1e-12 * s:
        copies.append((turn - s, sign * machine.edge_sign))
    return copies


def flux_levels(a_values: np.ndarray, n_lines: int, edge_sign: int) -> np.ndarray:
    """Potential levels, Wb/m, of ``n_lines`` flux lines with equal flux between them.

    The levels are the mid-points of ``n_lines`` equal bins over the range of A. With
    anti-periodic edges the range is taken symmetric about zero, so that the image of the
    sector (potential times -1) shows the same lines.
    """
    if n_lines < 1:
        raise SpecError(f"n_lines: {n_lines} must be at least 1")
    lo, hi = float(np.min(a_values)), float(np.max(a_values))
    if edge_sign < 0:
        hi = max(abs(lo), abs(hi))
        lo = -hi
    if hi - lo <= 0:
        return np.array([lo])
    return lo + (hi - lo) * (np.arange(n_lines) + 0.5) / n_lines


def _turned(points: np.ndarray, angle: float) -> np.ndarray:
    """(..., 2) points turned counter-clockwise by ``angle`` rad."""
    c, s = math.cos(angle), math.sin(angle)
    return points @ np.array([[c, s], [-s, c]])


def _sector_frame(ax, r_out: float, sector_angle: float, margin: float = 1.12):
    """Clip patch of the sector (data units) and axes limits with room for axis labels."""
    from matplotlib.patches import Wedge

    clip = Wedge((0.0, 0.0), r_out * (1 + 1e-6), 0.0, math.degrees(sector_angle),
                 transform=ax.transData)
    t = np.linspace(0.0, sector_angle, 181)
    xs = np.concatenate([[0.0], margin * r_out * np.cos(t)])
    ys = np.concatenate([[0.0], margin * r_out * np.sin(t)])
    pad = 0.03 * r_out
    ax.set_xlim(xs.min() - pad, xs.max() + pad)
    ax.set_ylim(ys.min() - pad, ys.max() + pad)
    return clip


def _draw_axes_marks(ax, machine: MachineMesh, poles: int, rotor_angle: float, r_out: float):
    """Dashed d- and q-axis of the first rotor pole, labelled outside the machine."""
    for text, frame_angle in (("d", 0.0), ("q", math.pi / poles)):
        angle = (rotor_angle + frame_angle) % machine.sector_angle
        c, s = math.cos(angle), math.sin(angle)
        ax.plot([0.0, 1.04 * r_out * c], [0.0, 1.04 * r_out * s], color=_AXIS_COLOUR,
                linestyle=(0, (5, 3)), linewidth=0.8, zorder=4)
        ax.text(1.08 * r_out * c, 1.08 * r_out * s, text, color=_AXIS_COLOUR, fontsize=10,
                fontstyle="italic", ha="center", va="center", zorder=4)


def _draw_part(ax, machine: MachineMesh, elements, turn, facets, b, a_node, levels, norm,
               clip):
    """|B| cells, flux lines and outline of one part of the mesh, turned by ``turn`` rad."""
    from matplotlib.collections import PolyCollection
    from matplotlib.patches import PathPatch
    from matplotlib.path import Path
    from matplotlib.tri import Triangulation

    p_mm = machine.mesh.p.T * 1e3
    t_part = machine.mesh.t.T[elements]
    nodes, local = np.unique(t_part, return_inverse=True)
    local = local.reshape(t_part.shape)
    xy = _turned(p_mm[nodes], turn)
    cells = PolyCollection(xy[local], array=b[elements], cmap=_FIELD_CMAP, norm=norm,
                           edgecolors="none", antialiased=False, zorder=1,
                           rasterized=True)  # thousands of cells: keep SVG/PDF small
    ax.add_collection(cells, autolim=False)  # the limits come from the sector frame
    lines = ax.tricontour(Triangulation(xy[:, 0], xy[:, 1], local), a_node[nodes],
                          levels=levels, colors="k", linewidths=0.55,
                          negative_linestyles="solid", zorder=2)
    segments = _turned(p_mm[machine.mesh.facets[:, facets].T], turn)  # (n, 2, 2)
    # one path of move-draw pairs: a vector file gets one object, not thousands of lines
    codes = np.tile([Path.MOVETO, Path.LINETO], len(segments))
    edges = PathPatch(Path(segments.reshape(-1, 2), codes), fill=False,
                      edgecolor=_OUTLINE_COLOUR, linewidth=0.6, zorder=3)
    ax.add_patch(edges)
    for artist in (cells, lines, edges):
        artist.set_clip_path(clip)
    return cells


def plot_field(
    model: MachineModel,
    solution: FieldSolution,
    ax=None,
    *,
    rotor_angle: float | None = None,
    n_lines: int = 25,
    b_max: float | None = None,
):
    """|B| per element with flux lines and the outline of the modelled sector, in mm.

    Parameters
    ----------
    model, solution
        The machine and a field solved on it.
    ax
        Matplotlib axes to draw on; None makes a figure.
    rotor_angle
        Rotor angle, rad counter-clockwise from the mesh's rotor frame; default the angle
        the solution was solved at, ``solution.step * model.step_angle``.
    n_lines
        Number of flux lines (equipotentials of A = A_z) over the range of A; the flux
        between two neighbouring lines is the same everywhere.
    b_max
        Top of the colour scale, T; default the largest element |B|.

    Returns
    -------
    The matplotlib axes. The d-axis (least reluctance, along the flux guides) and the
    q-axis (across the barriers) of the first rotor pole are marked "d" and "q".
    """
    import matplotlib.pyplot as plt
    from matplotlib.colors import Normalize

    if b_max is not None and not b_max > 0:
        raise SpecError(f"b_max: {b_max!r} T must be positive (or None for the largest |B|)")
    machine = model.mesh
    if rotor_angle is None:
        rotor_angle = solution.step * model.step_angle
    if ax is None:
        _, ax = plt.subplots(figsize=(7.5, 6.5), layout="constrained")
    # vertex values of A: exact for P1, the P2 field sampled at the vertices
    a_node = solution.a[model.problem.basis.nodal_dofs[0]]
    levels = flux_levels(a_node, n_lines, machine.edge_sign)
    b = solution.b_norm
    top = float(b.max()) if b_max is None else float(b_max)
    norm = Normalize(0.0, top if top > 0 else 1.0)
    r_out = model.spec.stator.outer_diameter / 2 * 1e3
    clip = _sector_frame(ax, r_out, machine.sector_angle)
    # the stator as it is; the rotor turned, in one or two copies clipped to the sector.
    # Each part gets its own triangulation (the sliding circle has a node copy per part)
    # and the same levels, so the lines meet on the circle.
    rotor = machine.rotor_element
    facets = outline_facets(machine)
    facet_rotor = rotor[machine.mesh.f2t[0, facets]]
    parts = [(~rotor, 0.0, 1.0, facets[~facet_rotor])]
    parts += [(rotor, turn, sign, facets[facet_rotor])
              for turn, sign in rotor_copies(machine, rotor_angle)]
    cells = [_draw_part(ax, machine, elements, turn, outline, b, sign * a_node, levels, norm,
                        clip) for elements, turn, sign, outline in parts]
    _draw_axes_marks(ax, machine, model.spec.poles, rotor_angle, r_out)
    extend = "max" if b_max is not None and b.max() > b_max else "neither"
    ax.figure.colorbar(cells[0], ax=ax, label="|B| (T)", shrink=0.85, pad=0.02,
                       extend=extend)
    position = math.degrees(rotor_angle - model.axis_step * model.step_angle)
    ax.set_title(f"|B| and flux lines, rotor at {position:.2f}° mech. from position zero",
                 fontsize=9)
    ax.set_aspect("equal")
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    return ax


# ---------------------------------------------------------------- outline without a mesh
def _visible(regions) -> list[tuple[str, object]]:
    """Each region minus the later ones (later regions win where they overlap).

    The later regions are cut out grown by ``_SEAM`` (0.1 um) and pieces narrower than
    ``_MIN_WIDTH`` are dropped: two polygonal arcs of one circle drawn from different
    vertices would otherwise leave slivers whose edges show as lines (a bore line
    across a slot opening).
    """
    import shapely

    out = []
    cover = None
    for name, shape in reversed(regions):
        geom = to_shapely(shape)
        visible = geom if cover is None else geom.difference(cover)
        grown = geom.buffer(_SEAM, join_style="mitre")
        cover = grown if cover is None else cover.union(grown)
        # slivers between chords of one arc drawn from different vertices: thinner than
        # any steel or air a machine has; 2 area / perimeter is the width of a thin strip
        polys = [g for g in shapely.get_parts(visible)
                 if g.geom_type == "Polygon" and 2 * g.area > _MIN_WIDTH * g.length]
        if polys:
            out.append((name, shapely.MultiPolygon(polys) if len(polys) > 1 else polys[0]))
    return out[::-1]


def outline_polygons(spec: MachineSpec, full: bool = False) -> list[tuple[str, object]]:
    """The regions of a machine as they are seen, m: name and shapely (Multi)Polygon.

    The rotor at position 0 of the mesh frame (d-axis on angle 0) and the stator of the
    modelled sector; ``full`` adds the sector's copies turned around the axis (the same
    geometry each time). Overlaps are resolved as in meshing: later regions win.
    """
    from shapely import affinity

    sectors, sector_angle, _ = model_sector(spec)
    sector = _visible(rotor_regions(spec, sector_angle)) + _visible(
        stator_regions(spec, sector_angle))
    if not full:
        return sector
    return [(name, affinity.rotate(g, k * sector_angle, origin=(0, 0), use_radians=True))
            for k in range(sectors) for name, g in sector]


def _polygon_path(poly, scale: float):
    """Matplotlib path of a polygon with holes (exterior and holes oppositely wound),
    coordinates times ``scale``."""
    from matplotlib.path import Path
    from shapely.geometry.polygon import orient

    poly = orient(poly, 1.0)
    verts, codes = [], []
    for ring in (poly.exterior, *poly.interiors):
        xy = np.asarray(ring.coords)
        c = np.full(len(xy), Path.LINETO, dtype=np.uint8)
        c[0], c[-1] = Path.MOVETO, Path.CLOSEPOLY
        verts.append(xy * scale)
        codes.append(c)
    return Path(np.concatenate(verts), np.concatenate(codes))


def _ring_lines(ring: np.ndarray, cuts: list[float]) -> list[np.ndarray]:
    """A closed ring (n, 2) as polylines, without the pieces along the sector cuts.

    The cuts are radial lines at the angles ``cuts`` (rad): where a sector copy was cut,
    not an edge of the machine.
    """
    seg = np.stack([ring[:-1], ring[1:]], axis=1)  # (n-1, 2, 2)
    keep = np.ones(len(seg), dtype=bool)
    for a in cuts:
        normal = np.array([-math.sin(a), math.cos(a)])
        keep &= ~np.all(np.abs(seg @ normal) < _EDGE_TOL, axis=1)
    if keep.all():
        return [ring]
    # start at a dropped segment so that every run of kept segments is contiguous
    first = int(np.flatnonzero(~keep)[0])
    seg, keep = np.roll(seg, -first, axis=0), np.roll(keep, -first)
    runs = np.split(np.arange(len(seg)), np.flatnonzero(np.diff(keep.astype(np.int8))) + 1)
    return [np.vstack([seg[r, 0], seg[r[-1], 1]]) for r in runs if keep[r[0]]]


def _underlay(ax, spec: MachineSpec) -> None:
    """Whole iron rings under the sector copies, so that no seam shows where they meet."""
    from matplotlib.patches import Wedge

    st, r_rotor = spec.stator, spec.rotor_radius * 1e3
    ax.add_patch(Wedge((0, 0), st.outer_diameter / 2 * 1e3, 0, 360,
                       width=(st.outer_diameter - st.bore_diameter) / 2 * 1e3,
                       facecolor=region_colour("stator_iron"), edgecolor="none", zorder=0.5))
    ax.add_patch(Wedge((0, 0), r_rotor, 0, 360, width=r_rotor - spec.rotor.shaft_diameter / 2 * 1e3,
                       facecolor=region_colour("rotor_iron"), edgecolor="none", zorder=0.5))
    ax.add_patch(Wedge((0, 0), spec.rotor.shaft_diameter / 2 * 1e3, 0, 360,
                       facecolor=region_colour("shaft"), edgecolor="none", zorder=0.5))


def plot_outline(spec: MachineSpec, ax=None, *, full: bool = False):
    """The machine cross-section from its geometry, without meshing, in mm.

    Regions are filled by kind (iron, barrier, shaft, coil sides as in
    :func:`fluxlab.report.plots.mesh.region_colour`) with thin black edges; air is left white.
    ``full=False`` draws the modelled sector, ``full=True`` the whole cross-section. The
    cuts along the sector edges are not drawn as edges. Returns the matplotlib axes.
    """
    import matplotlib.pyplot as plt
    from matplotlib.collections import LineCollection, PathCollection

    if ax is None:
        _, ax = plt.subplots(figsize=(5, 5), layout="constrained")
    sectors, sector_angle, _ = model_sector(spec)
    paths, colours, rings = [], [], []
    for name, geom in outline_polygons(spec, full):
        if name.startswith("airgap"):
            continue  # white on white
        for poly in getattr(geom, "geoms", [geom]):
            paths.append(_polygon_path(poly, 1e3))
            colours.append(region_colour(name))
            if _kind(name) != "air":
                rings += [np.asarray(r.coords) for r in (poly.exterior, *poly.interiors)]
    cuts = [k * sector_angle for k in range(sectors)] if full else [0.0, sector_angle]
    lines = [line * 1e3 for ring in rings for line in _ring_lines(ring, cuts)]
    if full:
        _underlay(ax, spec)
    ax.add_collection(PathCollection(paths, facecolors=colours, edgecolors="face",
                                     linewidths=0.2, transform=ax.transData, zorder=1),
                      autolim=False)
    ax.add_collection(LineCollection(lines, colors="k", linewidths=0.4, zorder=2),
                      autolim=False)
    r = spec.stator.outer_diameter / 2 * 1e3
    t = np.linspace(0.0, 2 * math.pi if full else sector_angle, 361)
    xs, ys = np.append(r * np.cos(t), 0.0), np.append(r * np.sin(t), 0.0)
    pad = 0.03 * r
    ax.set_xlim(xs.min() - pad, xs.max() + pad)
    ax.set_ylim(ys.min() - pad, ys.max() + pad)
    ax.set_aspect("equal")
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    return ax
