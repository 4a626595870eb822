"""gmsh test meshes for the closed-form solver checks, converted to MeshTri in memory.

Every mesh is built with gmsh's OpenCASCADE kernel, one thread, terminal output off, so a
given set of arguments gives the same mesh every time.  Node tags become contiguous
indices; each named physical surface becomes a subdomain, each named physical curve a
boundary (a set of facet indices).
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Iterator, Sequence

import gmsh
import numpy as np
from skfem import MeshTri

from fluxlab.mesh.machine_mesh import MachineMesh

#: OpenCASCADE pads every bounding box by this much, m (seen with gmsh 4.15).
_OCC_BOX_MARGIN = 1e-7
#: Slack of bounding-box searches, m: above the padding, far below any feature size here.
_BOX_SLACK = 1e-6

__all__ = [
    "gmsh_session",
    "to_meshtri",
    "concentric_mesh",
    "slot_pitch_cell",
    "sector_machine_mesh",
    "triangle_areas",
    "centroids",
]


@contextlib.contextmanager
def gmsh_session(name: str) -> Iterator[None]:
    """A fresh gmsh model with reproducible settings; finalises gmsh if it started it."""
    started = not gmsh.isInitialized()
    if started:
        gmsh.initialize(readConfigFiles=False)
    gmsh.option.setNumber("General.Terminal", 0)
    gmsh.option.setNumber("General.NumThreads", 1)
    gmsh.option.setNumber("Mesh.MaxNumThreads2D", 1)
    gmsh.model.add(name)
    try:
        yield
    finally:
        if started:
            gmsh.finalize()
        else:
            gmsh.model.remove()


def _size_field(expression: str) -> None:
    """Mesh size h(x, y) in m from a gmsh math expression, the only size source."""
    field = gmsh.model.mesh.field.add("MathEval")
    gmsh.model.mesh.field.setString(field, "F", expression)
    gmsh.model.mesh.field.setAsBackgroundMesh(field)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)


def to_meshtri() -> MeshTri:
    """The current gmsh model's triangles as a MeshTri with subdomains and boundaries."""
    node_tags, coords, _ = gmsh.model.mesh.getNodes()
    xy = coords.reshape(-1, 3)[:, :2]
    index = np.full(int(node_tags.max()) + 1, -1, dtype=np.int64)
    index[node_tags] = np.arange(node_tags.size)
    blocks, names = [], []
    for dim, tag in gmsh.model.getPhysicalGroups(2):
        tri = []
        for entity in gmsh.model.getEntitiesForPhysicalGroup(dim, tag):
            types, _, nodes = gmsh.model.mesh.getElements(2, entity)
            for etype, enodes in zip(types, nodes, strict=True):
                if etype != 2:  # 3-node triangles only
                    raise RuntimeError(f"unexpected gmsh element type {etype}")
                tri.append(index[enodes.astype(np.int64)].reshape(-1, 3))
        blocks.append(np.vstack(tri))
        names.append(gmsh.model.getPhysicalName(dim, tag))
    t = np.vstack(blocks)
    used = np.unique(t)  # drop nodes of construction points outside every triangle
    compact = np.full(node_tags.size, -1, dtype=np.int64)
    compact[used] = np.arange(used.size)
    t = compact[t]
    sizes = np.cumsum([0] + [b.shape[0] for b in blocks])
    subdomains = {n: np.arange(sizes[i], sizes[i + 1]) for i, n in enumerate(names)}
    mesh = MeshTri(np.ascontiguousarray(xy[used].T), np.ascontiguousarray(t.T))
    boundaries = _boundaries(mesh, index, compact)
    return MeshTri(mesh.p, mesh.t, _boundaries=boundaries, _subdomains=subdomains)


def _boundaries(mesh: MeshTri, index: np.ndarray, compact: np.ndarray) -> dict:
    n = mesh.p.shape[1]
    f = np.sort(mesh.facets, axis=0).astype(np.int64)
    keys = f[0] * n + f[1]
    order = np.argsort(keys)
    out = {}
    for dim, tag in gmsh.model.getPhysicalGroups(1):
        pairs = []
        for entity in gmsh.model.getEntitiesForPhysicalGroup(dim, tag):
            types, _, nodes = gmsh.model.mesh.getElements(1, entity)
            for etype, enodes in zip(types, nodes, strict=True):
                if etype == 1:
                    pairs.append(compact[index[enodes.astype(np.int64)]].reshape(-1, 2))
        e = np.sort(np.vstack(pairs), axis=1)
        want = e[:, 0] * n + e[:, 1]
        pos = np.searchsorted(keys, want, sorter=order)
        found = order[np.minimum(pos, order.size - 1)]
        if np.any(keys[found] != want):
            raise RuntimeError("a gmsh boundary segment is not a facet of the mesh")
        out[gmsh.model.getPhysicalName(dim, tag)] = np.sort(found)
    return out


def triangle_areas(mesh: MeshTri) -> np.ndarray:
    """Triangle areas, m^2, from the vertex coordinates (independent of the solver)."""
    p0, p1, p2 = (mesh.p[:, mesh.t[i]] for i in range(3))
    d1, d2 = p1 - p0, p2 - p0
    return 0.5 * np.abs(d1[0] * d2[1] - d1[1] * d2[0])


def centroids(mesh: MeshTri) -> np.ndarray:
    """(2, n_elements) triangle centroids, m."""
    return mesh.p[:, mesh.t].mean(axis=1)


def concentric_mesh(radii: Sequence[float], names: Sequence[str], size: str) -> MeshTri:
    """A disk split by circles: region k lies between radii[k-1] and radii[k] (0 for k=0).

    Parameters
    ----------
    radii
        Increasing radii, m; the last is the outer boundary, named ``outer``.
    names
        One subdomain name per region.
    size
        gmsh math expression of the mesh size in x, y (m).
    """
    with gmsh_session("concentric"):
        occ = gmsh.model.occ
        disks = [occ.addDisk(0, 0, 0, r, r) for r in radii]
        _, children = occ.fragment([(2, disks[-1])], [(2, d) for d in disks[:-1]])
        occ.synchronize()
        # each fragment is the annulus inside one radius: identify it by its extent
        pieces = {tag for group in children for _, tag in group}
        for radius, name in zip(radii, names, strict=True):
            tag = min(pieces, key=lambda t: abs(_extent(2, t) - radius))
            gmsh.model.addPhysicalGroup(2, [tag], name=name)
        outer = [
            c for _, c in gmsh.model.getEntities(1) if abs(_extent(1, c) - radii[-1]) < _BOX_SLACK
        ]
        gmsh.model.addPhysicalGroup(1, outer, name="outer")
        _size_field(size)
        gmsh.model.mesh.generate(2)
        return to_meshtri()


def _extent(dim: int, tag: int) -> float:
    """Half the bounding-box width: the outer radius of a centred disk, annulus or circle."""
    box = gmsh.model.getBoundingBox(dim, tag)
    return 0.5 * max(box[3] - box[0], box[4] - box[1]) - _OCC_BOX_MARGIN


def slot_pitch_cell(
    pitch: float,
    gap: float,
    opening: float,
    slot_depth: float,
    rotor_depth: float,
    yoke_depth: float,
    h_gap: float,
    h_far: float,
) -> MeshTri:
    """One slot pitch of a linear (unrolled) slotted stator over a smooth rotor.

    x in [0, pitch]; rotor iron y in [-rotor_depth, 0]; air gap y in [0, gap]; stator
    iron above with an open, parallel-sided slot of width ``opening`` centred at
    x = pitch / 2, depth ``slot_depth``.  Subdomains ``rotor``, ``gap``, ``teeth_yoke``,
    ``slot``; boundaries ``left`` and ``right`` (the right side meshed as the translated
    copy of the left one, node for node).  Mesh size ``h_gap`` in the gap and at the slot
    corners, growing to ``h_far``.
    """
    with gmsh_session("slot_pitch"):
        occ = gmsh.model.occ
        top = gap + slot_depth + yoke_depth
        x0 = 0.5 * (pitch - opening)
        rotor = occ.addRectangle(0, -rotor_depth, 0, pitch, rotor_depth)
        air = occ.addRectangle(0, 0, 0, pitch, gap)
        stator = occ.addRectangle(0, gap, 0, pitch, top - gap)
        slot = occ.addRectangle(x0, gap, 0, opening, slot_depth)
        occ.fragment([(2, rotor), (2, air), (2, stator)], [(2, slot)])
        occ.synchronize()
        eps = _BOX_SLACK
        regions = {
            "rotor": (0, -rotor_depth, pitch, 0),
            "gap": (0, 0, pitch, gap),
            "slot": (x0, gap, x0 + opening, gap + slot_depth),
        }
        taken = set()
        for name, (xa, ya, xb, yb) in regions.items():
            inside = gmsh.model.getEntitiesInBoundingBox(
                xa - eps, ya - eps, -1, xb + eps, yb + eps, 1, dim=2
            )
            tags = [t for _, t in inside]
            taken.update(tags)
            gmsh.model.addPhysicalGroup(2, tags, name=name)
        rest = [t for _, t in gmsh.model.getEntities(2) if t not in taken]
        gmsh.model.addPhysicalGroup(2, rest, name="teeth_yoke")
        sides = {}
        for name, x in (("left", 0.0), ("right", pitch)):
            curves = gmsh.model.getEntitiesInBoundingBox(
                x - eps, -rotor_depth - eps, -1, x + eps, top + eps, 1, dim=1
            )
            sides[name] = sorted(
                (t for _, t in curves), key=lambda t: gmsh.model.getBoundingBox(1, t)[1]
            )
            gmsh.model.addPhysicalGroup(1, sides[name], name=name)
        shift = [1, 0, 0, pitch, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
        gmsh.model.mesh.setPeriodic(1, sides["right"], sides["left"], shift)
        # fine near the gap and the slot corners, coarser far away
        dist = (
            f"Min(Max(Max(-y, y - {gap}), 0), "
            f"Sqrt((Abs(x - {pitch / 2}) - {opening / 2})^2 + (y - {gap})^2))"
        )
        _size_field(f"Min({h_far}, {h_gap} + 0.5 * {dist})")
        gmsh.model.mesh.generate(2)
        return to_meshtri()


def _annular_sector(radii, alpha, center):
    """Points, rays and arcs of annular sector layers between consecutive radii."""
    occ = gmsh.model.occ
    c, s = math.cos(alpha), math.sin(alpha)
    start = [center if r == 0 else occ.addPoint(r, 0, 0) for r in radii]
    end = [center if r == 0 else occ.addPoint(r * c, r * s, 0) for r in radii]
    arcs = [
        None if r == 0 else occ.addCircleArc(a, center, b)
        for r, a, b in zip(radii, start, end, strict=True)
    ]
    ray_start = [occ.addLine(start[k], start[k + 1]) for k in range(len(radii) - 1)]
    ray_end = [occ.addLine(end[k], end[k + 1]) for k in range(len(radii) - 1)]
    surfaces = []
    for k in range(len(radii) - 1):
        loop = [ray_start[k], arcs[k + 1], ray_end[k]] + ([arcs[k]] if arcs[k] else [])
        surfaces.append(occ.addPlaneSurface([occ.addCurveLoop(loop)]))
    return surfaces, arcs, ray_start, ray_end


def sector_machine_mesh(
    rotor_radii: Sequence[float],
    rotor_names: Sequence[str],
    stator_radii: Sequence[float],
    stator_names: Sequence[str],
    sector_angle: float,
    edge_sign: int,
    divisions: int,
    size: str,
) -> MachineMesh:
    """A two-part annular sector: rotor and stator meshed apart, meeting on a circle.

    Parameters
    ----------
    rotor_radii
        Layer radii of the rotor, m, from the inside (0 for a full disk sector) to the
        sliding radius.
    rotor_names, stator_names
        Subdomain name of each layer.
    stator_radii
        Layer radii of the stator, m, from the sliding radius to the outer radius.
    sector_angle
        rad, below pi.
    edge_sign
        +1 periodic, -1 anti-periodic sector edges.
    divisions
        Equal segments of each copy of the sliding circle.
    size
        gmsh math expression of the mesh size in x, y (m).
    """
    if abs(rotor_radii[-1] - stator_radii[0]) > 0:
        raise ValueError("the rotor's last radius must be the stator's first")
    with gmsh_session("two_part_sector"):
        occ = gmsh.model.occ
        center = occ.addPoint(0, 0, 0)
        rotor = _annular_sector(rotor_radii, sector_angle, center)
        stator = _annular_sector(stator_radii, sector_angle, center)
        occ.synchronize()
        for (surfaces, _, _, _), names in ((rotor, rotor_names), (stator, stator_names)):
            for tag, name in zip(surfaces, names, strict=True):
                gmsh.model.addPhysicalGroup(2, [tag], name=name)
        curves = {
            "outer": [stator[1][-1]],
            "sliding_rotor": [rotor[1][-1]],
            "sliding_stator": [stator[1][0]],
            "edge_start_rotor": rotor[2],
            "edge_end_rotor": rotor[3],
            "edge_start_stator": stator[2],
            "edge_end_stator": stator[3],
        }
        for name, tags in curves.items():
            gmsh.model.addPhysicalGroup(1, tags, name=name)
        for arc in (rotor[1][-1], stator[1][0]):
            gmsh.model.mesh.setTransfiniteCurve(arc, divisions + 1)
        c, s = math.cos(sector_angle), math.sin(sector_angle)
        turn = [c, -s, 0, 0, s, c, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
        for part in (rotor, stator):
            gmsh.model.mesh.setPeriodic(1, part[3], part[2], turn)
        _size_field(size)
        gmsh.model.mesh.generate(2)
        mesh = to_meshtri()
    rotor_element = np.zeros(mesh.t.shape[1], dtype=bool)
    for name in rotor_names:
        rotor_element[mesh.subdomains[name]] = True
    sectors = round(2 * math.pi / sector_angle)
    return MachineMesh(
        mesh, rotor_element, sector_angle, sectors, edge_sign, float(rotor_radii[-1]), divisions
    )
