"""Meshing: the machine geometry through gmsh into a scikit-fem mesh with region tags.

The rotor part and the stator part are meshed apart and meet on the sliding circle in the
middle of the air gap, where each part has its own copy of the same equally spaced nodes.
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass

import numpy as np
from skfem import MeshTri

from fluxlab.errors import MeshError
from fluxlab.geometry import (
    model_sector,
    poles_in_sector,
    rotor_regions,
    sliding_radius,
    slots_in_sector,
    stator_regions,
)
from fluxlab.geometry.rotor import barrier_placement
from fluxlab.machine.winding import machine_symmetry
from fluxlab.mesh.gmsh_part import PartSizes, mesh_part
from fluxlab.spec.schema import MAX_ELEMENTS_DEFAULT
from fluxlab.studies.averaging import division_unit, position_counts

__all__ = [
    "facet_indices",
    "MachineMesh",
    "BOUNDARY_NAMES",
    "build_mesh",
    "sliding_divisions",
    "airgap_element_size",
    "rib_element_size",
    "estimated_elements",
    "element_limit",
    "mesh_size_problems",
    "MAX_ELEMENTS",
]

log = logging.getLogger(__name__)

#: Named facet sets every :class:`MachineMesh` of a machine carries.
#: ``outer``: stator outer surface, A = 0.  ``sliding_rotor`` / ``sliding_stator``: the two
#: coincident copies of the sliding circle.  ``edge_start_*`` / ``edge_end_*``: the sector
#: edges at angle 0 and at ``sector_angle`` of each part; the end edge is the start edge
#: rotated by ``sector_angle`` and carries ``edge_sign`` times its potential.
BOUNDARY_NAMES = (
    "outer",
    "sliding_rotor",
    "sliding_stator",
    "edge_start_rotor",
    "edge_end_rotor",
    "edge_start_stator",
    "edge_end_stator",
)


@dataclass(frozen=True)
class MachineMesh:
    """A meshed machine sector, ready for assembly.

    Attributes
    ----------
    mesh
        Triangles in metres. Rotor elements are in the rotor frame at position 0 (rotor
        d-axis on the sector's start edge); stator elements in the stator frame.
        ``mesh.subdomains`` maps region names to element indices and ``mesh.boundaries``
        maps the names in :data:`BOUNDARY_NAMES` to facet indices.
    rotor_element
        True for each element of the moving part.
    sector_angle
        Mechanical angle of the modelled sector, rad.
    sectors
        How many such sectors make the whole machine.
    edge_sign
        +1 for periodic, -1 for anti-periodic sector edges.
    sliding_radius
        Radius of the sliding circle, m.
    sliding_divisions
        Number of equal segments of the sliding circle in the sector; one rotor step is
        ``sector_angle / sliding_divisions``.
    """

    mesh: MeshTri
    rotor_element: np.ndarray
    sector_angle: float
    sectors: int
    edge_sign: int
    sliding_radius: float
    sliding_divisions: int

    @property
    def regions(self) -> dict[str, np.ndarray]:
        """Region name -> element indices."""
        return self.mesh.subdomains

    @property
    def step_angle(self) -> float:
        """Rotor step, rad: the angle of one sliding-circle segment."""
        return self.sector_angle / self.sliding_divisions


def sliding_divisions(spec, sector_angle: float) -> int:
    """Segments of the sliding circle in a sector of ``sector_angle`` rad.

    On the smallest sector the symmetry allows, the segment is about 1.5 times the air-gap
    element size (so that the gap triangles are well shaped) and the count is a multiple of
    ``steps_per_slot`` times the slots in the sector, so that a study step of
    ``1/steps_per_slot`` slot pitch is a whole number of segments, and of what every position
    count of the studies needs to be equally spaced
    (:func:`fluxlab.studies.averaging.position_counts`). A larger sector (``mesh.sector_poles``)
    holds that count once per smallest sector, so every model size has the same rotor step.
    """

    sectors, smallest, _ = machine_symmetry(spec.stator.slots, spec.poles)
    unit = math.lcm(spec.mesh.steps_per_slot * slots_in_sector(spec, smallest),
                    division_unit(spec, sectors, position_counts(spec)))
    target = sliding_radius(spec) * smallest / (1.5 * airgap_element_size(spec))
    return round(sector_angle / smallest) * unit * max(1, int(np.ceil(target / unit)))


def airgap_element_size(spec) -> float:
    """Element size in the air gap, m: ``airgap_layers`` elements across each half gap."""
    return spec.stator.airgap / (2 * spec.mesh.airgap_layers)


def rib_element_size(spec) -> float:
    """Element size in the ribs and posts, m (default: a third of the thinnest rib)."""
    if spec.mesh.rib_size is not None:
        return spec.mesh.rib_size
    posts = [b.post_width for b in spec.rotor.barriers if b.post_width > 0]
    return min([spec.rotor.tangential_rib, *posts]) / 3


#: Estimated triangles a sector may get unless its file sets ``mesh.max_elements``; the
#: measured meshing rates behind it are stated at its definition in fluxlab.spec.schema.
MAX_ELEMENTS = MAX_ELEMENTS_DEFAULT


def element_limit(spec) -> int:
    """The machine's ``mesh.max_elements`` (default :data:`MAX_ELEMENTS`)."""
    return int(spec.mesh.max_elements)


def estimated_elements(spec, sector_angle: float) -> dict[str, float]:
    """Order-of-magnitude triangle count of a sector's mesh, by where the triangles go.

    An equilateral triangle of side h covers sqrt(3)/4 h^2, so an area A meshed at size h
    takes about 4/sqrt(3) A / h^2 triangles. ``bulk``: the sector at ``mesh.size``. ``gap``:
    the size grows from the air-gap size g with slope 1/2 away from the gap circles, on
    six sides (rotor surface and bore: both; the sliding circle's two copies: one each), so
    int per / (g + d/2)^2 dd = 2 per / g triangles per unit of circle length and side.
    ``ribs``: the rib size field (:func:`_size_field`) is the rib size h_r within 2 h_r of
    sample points strung along each rib and post, over a length L = 2 barrier widths, then
    grows with slope about 1/8: near the string like a line, per L (2 * 8 + 4) / h_r;
    farther out like a point, int per 2 pi rho / (rho/8)^2 drho from L to 8 ``mesh.size``.
    """

    per = 4 / math.sqrt(3)
    size = spec.mesh.size
    r_out = spec.stator.outer_diameter / 2
    bulk = per * 0.5 * sector_angle * r_out**2 / size**2
    gap = 6 * 2 * per / airgap_element_size(spec) * spec.stator.bore_diameter / 2 * sector_angle
    h_rib = rib_element_size(spec)
    ribs = 0.0
    for b in spec.rotor.barriers:
        length = 2 * b.width
        strings = 2 + (b.post_width > 0)  # both ends, and the post
        one = per * (20 * length / h_rib + 128 * math.pi * math.log(max(8 * size / length, 1)))
        ribs += strings * one
    ribs *= poles_in_sector(spec, sector_angle)
    return {"bulk": bulk, "gap": gap, "ribs": ribs}


def mesh_size_problems(spec, limit: int | None = None) -> list[str]:
    """The element estimate against ``limit`` (default: :func:`element_limit`): one message
    naming every key that enters the estimate, with its value, or none."""

    limit = element_limit(spec) if limit is None else limit
    sectors, sector_angle, _ = model_sector(spec)
    terms = estimated_elements(spec, sector_angle)
    total = sum(terms.values())
    if total <= limit:
        return []

    def mm(x: float | None) -> str:
        return "unset" if x is None else f"{x * 1e3:.4g}"

    st, rotor, mesh = spec.stator, spec.rotor, spec.mesh
    posts = ", ".join(f"[{i}] {mm(b.post_width)}" for i, b in enumerate(rotor.barriers))
    widths = ", ".join(f"[{i}] {mm(b.width)}" for i, b in enumerate(rotor.barriers))
    why = {
        "bulk": f"bulk {terms['bulk']:.3g} from mesh.size_mm = {mm(mesh.size)} over "
                f"stator.outer_diameter_mm = {mm(st.outer_diameter)}",
        "gap": f"air gap {terms['gap']:.3g} from stator.airgap_mm = {mm(st.airgap)} with "
               f"mesh.airgap_layers = {mesh.airgap_layers} along stator.bore_diameter_mm = "
               f"{mm(st.bore_diameter)}",
        "ribs": f"ribs {terms['ribs']:.3g} from element size {mm(rib_element_size(spec))} mm "
                f"(mesh.rib_size_mm = {mm(mesh.rib_size)}, else a third of the thinnest of "
                f"rotor.tangential_rib_mm = {mm(rotor.tangential_rib)} and "
                f"rotor.barriers[].post_mm = {posts or 'none'}) along "
                f"rotor.barriers[].width_mm = {widths or 'none'}",
    }
    parts = "; ".join(why[k] for k in sorted(terms, key=terms.get, reverse=True))
    return [
        f"mesh.max_elements = {limit}: the sector's mesh would get about {total:.3g} "
        f"triangles, more than the limit; {parts}; the sector is 1/{sectors} of the machine "
        f"(machine.poles = {spec.poles}, stator.slots = {st.slots}). Coarsen the sizes or "
        "raise mesh.max_elements"
    ]


def _check_size(spec) -> None:
    problems = mesh_size_problems(spec)
    if problems:
        raise MeshError(problems[0])


def _rib_points(spec, sector_angle: float) -> np.ndarray:
    """Sample points along every tangential rib and post of the sector, (n, 2) m."""

    rotor, r_rotor = spec.rotor, spec.rotor_radius
    pts = []
    for i, b in enumerate(rotor.barriers):
        place = barrier_placement(rotor, r_rotor, b, f"rotor.barriers[{i}]")
        r_rib = r_rotor - rotor.tangential_rib / 2
        end = np.arctan2(place.end_y, place.end_x)
        half_span = b.width / r_rib  # the barrier end is about a width wide
        local = []
        for a in np.linspace(end - half_span, end + half_span, 7):
            x_end, y_end = r_rib * np.cos(a), r_rib * np.sin(a)
            local += [(x_end, y_end), (x_end, -y_end)]
        if b.post_width > 0:
            for x in np.linspace(place.r_axis - b.width, place.r_axis + b.width, 5):
                local.append((x, 0.0))
        local = np.asarray(local)
        for j in range(poles_in_sector(spec, sector_angle)):
            q = (j + 0.5) * 2 * np.pi / spec.poles
            c, s = np.cos(q), np.sin(q)
            pts.append(local @ np.array([[c, s], [-s, c]]))
    return np.vstack(pts) if pts else np.zeros((0, 2))


def facet_indices(mesh: MeshTri, pairs: np.ndarray) -> np.ndarray:
    """Indices of mesh facets given as node pairs; MeshError when one is not a facet."""
    n = mesh.p.shape[1]
    facets = np.sort(mesh.facets, axis=0)
    keys = facets[0].astype(np.int64) * n + facets[1]
    order = np.argsort(keys)
    pairs = np.sort(pairs, axis=1)
    wanted = pairs[:, 0].astype(np.int64) * n + pairs[:, 1]
    pos = np.searchsorted(keys[order], wanted)
    pos = np.minimum(pos, len(keys) - 1)
    if not np.all(keys[order][pos] == wanted):
        raise MeshError("a boundary segment of gmsh is not a facet of the triangle mesh")
    return order[pos]


def _check_elements(points: np.ndarray, triangles: np.ndarray) -> None:
    p = points[triangles]
    e1, e2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    area = 0.5 * (e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0])
    longest = np.max(
        [np.hypot(*(p[:, 1] - p[:, 0]).T), np.hypot(*(p[:, 2] - p[:, 1]).T),
         np.hypot(*(p[:, 0] - p[:, 2]).T)], axis=0)
    quality = 4 * np.sqrt(3) * area / (3 * longest**2)  # 1 equilateral, 0 degenerate
    if np.any(area <= 0) or np.min(quality) < 1e-3:
        raise MeshError(
            f"degenerate or inverted triangles: min area {area.min():.3g} m^2, "
            f"min quality {quality.min():.3g}"
        )


def build_mesh(spec) -> MachineMesh:
    """Mesh the modelled sector of a machine: rotor and stator parts apart.

    The sector is :func:`fluxlab.geometry.sector.model_sector`: by default the smallest the
    slot and pole numbers allow (one pole pitch with anti-periodic edges for an
    integral-slot winding), or ``mesh.sector_poles`` poles up to the whole machine.
    """

    sectors, sector_angle, edge_sign = model_sector(spec)
    _check_size(spec)  # before gmsh: a runaway mesh cannot be interrupted
    n_div = sliding_divisions(spec, sector_angle)
    r_slide = sliding_radius(spec)
    fine = airgap_element_size(spec)
    size = spec.mesh.size
    rotor = mesh_part(
        rotor_regions(spec, sector_angle), sector_angle, r_slide, n_div,
        PartSizes(size, fine, (spec.rotor_radius, r_slide), rib_element_size(spec),
                  _rib_points(spec, sector_angle)),
    )
    stator = mesh_part(
        stator_regions(spec, sector_angle), sector_angle, r_slide, n_div,
        PartSizes(size, fine, (r_slide, spec.stator.bore_diameter / 2), size, np.zeros((0, 2))),
        r_outer=spec.stator.outer_diameter / 2,
    )
    offset = len(rotor.points)
    points = np.vstack([rotor.points, stator.points])
    triangles = np.vstack([rotor.triangles, stator.triangles + offset])
    _check_elements(points, triangles)
    mesh = MeshTri(np.ascontiguousarray(points.T), np.ascontiguousarray(triangles.T))
    n_rotor = len(rotor.triangles)
    subdomains = {}
    for part, first in ((rotor, 0), (stator, n_rotor)):
        for k, name in enumerate(part.region_names):
            subdomains[name] = first + np.flatnonzero(part.element_region == k)
    boundaries = {"outer": facet_indices(mesh, stator.lines["outer"] + offset)}
    for part, suffix, shift in ((rotor, "rotor", 0), (stator, "stator", offset)):
        boundaries[f"sliding_{suffix}"] = facet_indices(mesh, part.lines["sliding"] + shift)
        if sectors > 1:  # the whole machine has no sector edges
            for edge in ("edge_start", "edge_end"):
                boundaries[f"{edge}_{suffix}"] = facet_indices(mesh, part.lines[edge] + shift)
    mesh = mesh.with_subdomains(subdomains).with_boundaries(boundaries)
    rotor_element = np.zeros(mesh.t.shape[1], dtype=bool)
    rotor_element[:n_rotor] = True
    log.info("meshed %d nodes, %d triangles, %d sliding segments", mesh.p.shape[1],
             mesh.t.shape[1], n_div)
    return MachineMesh(mesh, rotor_element, sector_angle, sectors, edge_sign, r_slide, n_div)
