"""Mesh one part (rotor or stator) of a sector with gmsh, in memory.

The part is a list of named regions (later ones win where they overlap). Its boundary is
classified by position into the sliding circle, the outer circle and the two sector
edges; the end edge is meshed as the periodic image of the start edge and the sliding
circle gets a fixed number of equal segments, so that the two parts' copies of it match.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import MeshError
from fluxlab.geometry.csg import Shape, to_occ

__all__ = ["PartMesh", "PartSizes", "mesh_part"]

_REL_TOL = 1e-7  # relative tolerance of the boundary classification


@dataclass(frozen=True)
class PartSizes:
    """Mesh sizes of a part, m, and where they apply.

    ``fine_radii``: circles (the air-gap surfaces) near which the size is ``fine``;
    ``rib_points``: (n, 2) points in ribs and posts near which the size is ``rib``.
    """

    size: float
    fine: float
    fine_radii: tuple[float, ...]
    rib: float
    rib_points: np.ndarray


@dataclass(frozen=True)
class PartMesh:
    """Triangles of one part: ``points`` (n, 2) m, ``triangles`` (m, 3), counter-clockwise,
    ``element_region`` (m,) index into ``region_names``, ``lines`` name -> (k, 2) node pairs."""

    points: np.ndarray
    triangles: np.ndarray
    element_region: np.ndarray
    region_names: tuple[str, ...]
    lines: dict[str, np.ndarray]


def _fragment(regions: list[tuple[str, Shape]]) -> dict[int, str]:
    """Build all regions, fragment them together, and name each resulting surface."""
    import gmsh

    occ = gmsh.model.occ
    inputs: list[tuple[int, int]] = []
    owner: list[str] = []
    for name, shape in regions:
        for dim_tag in to_occ(shape):
            inputs.append(dim_tag)
            owner.append(name)
    # OCC's fragment of a single surface returns nothing: it is its own piece
    pieces = occ.fragment(inputs, [])[1] if len(inputs) > 1 else [inputs]
    occ.synchronize()
    surface_name: dict[int, str] = {}
    for name, outs in zip(owner, pieces):
        for dim, tag in outs:
            if dim == 2:
                surface_name[tag] = name  # later regions overwrite earlier ones
    return surface_name


def _curve_points(tag: int) -> np.ndarray:
    """Start, middle and end point of a curve, (3, 2)."""
    import gmsh

    lo, hi = gmsh.model.getParametrizationBounds(1, tag)
    t = [lo[0], 0.5 * (lo[0] + hi[0]), hi[0]]
    return np.asarray(gmsh.model.getValue(1, tag, t)).reshape(3, 3)[:, :2]


def _classify(sector_angle: float, r_slide: float, r_outer: float | None) -> dict[str, list]:
    import gmsh

    scale = r_slide
    names: dict[str, list] = {"sliding": [], "outer": [], "edge_start": [], "edge_end": []}
    boundary = gmsh.model.getBoundary(gmsh.model.getEntities(2), combined=True, oriented=False)
    tol = _REL_TOL * scale

    def on_ray(pts: np.ndarray, angle: float) -> bool:
        # on the ray from the origin at ``angle``, not merely on its line: the two edges of a
        # half-machine sector (angle pi) lie on the same line, on either side of the origin
        along = pts @ np.array([math.cos(angle), math.sin(angle)])
        across = pts @ np.array([-math.sin(angle), math.cos(angle)])
        return bool(np.all(abs(across) < tol) and np.all(along > -tol))

    for _, tag in boundary:
        pts = _curve_points(abs(tag))
        radius = np.hypot(pts[:, 0], pts[:, 1])
        if np.all(abs(radius - r_slide) < tol):
            names["sliding"].append(abs(tag))
        elif r_outer is not None and np.all(abs(radius - r_outer) < tol):
            names["outer"].append(abs(tag))
        elif on_ray(pts, 0.0):
            names["edge_start"].append(abs(tag))
        elif on_ray(pts, sector_angle):
            names["edge_end"].append(abs(tag))
        else:
            raise MeshError(f"a boundary curve of the part lies on no known boundary: {pts}")
    return names


def _radial_span(tag: int) -> tuple[float, float]:
    pts = _curve_points(tag)
    r = np.hypot(pts[:, 0], pts[:, 1])
    return float(min(r)), float(max(r))


def _set_periodic(edges: dict[str, list], sector_angle: float, scale: float) -> None:
    """Mesh each end-edge curve as the rotated copy of the start-edge curve it matches."""
    import gmsh

    c, s = math.cos(sector_angle), math.sin(sector_angle)
    affine = [c, -s, 0, 0, s, c, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
    starts = {tag: _radial_span(tag) for tag in edges["edge_start"]}
    if len(edges["edge_start"]) != len(edges["edge_end"]):
        raise MeshError(
            f"sector edges do not match: {len(edges['edge_start'])} curves at angle 0, "
            f"{len(edges['edge_end'])} at {math.degrees(sector_angle):.4g} deg"
        )
    for tag in edges["edge_end"]:
        span = _radial_span(tag)
        match = [t for t, sp in starts.items() if np.allclose(sp, span, atol=_REL_TOL * scale)]
        if len(match) != 1:
            raise MeshError(f"sector end-edge curve at radii {span} has no start-edge twin")
        gmsh.model.mesh.setPeriodic(1, [tag], match, affine)


def _size_field(sizes: PartSizes) -> None:
    import gmsh

    field = gmsh.model.mesh.field
    r_fine = sizes.fine_radii
    fields = []
    # Air gap: size grows linearly with the distance from the gap surfaces.
    for r in r_fine:
        f = field.add("MathEval")
        ramp = f"{sizes.fine} + 0.5 * Fabs(Sqrt(x*x + y*y) - {r})"
        field.setString(f, "F", f"Min({sizes.size}, {ramp})")
        fields.append(f)
    if len(sizes.rib_points):
        pts = [gmsh.model.occ.addPoint(x, y, 0.0) for x, y in sizes.rib_points]
        gmsh.model.occ.synchronize()
        dist = field.add("Distance")
        field.setNumbers(dist, "PointsList", pts)
        thr = field.add("Threshold")
        field.setNumber(thr, "InField", dist)
        field.setNumber(thr, "SizeMin", sizes.rib)
        field.setNumber(thr, "SizeMax", sizes.size)
        field.setNumber(thr, "DistMin", 2 * sizes.rib)
        field.setNumber(thr, "DistMax", 2 * sizes.rib + 8 * sizes.size)
        fields.append(thr)
    least = field.add("Min")
    field.setNumbers(least, "FieldsList", fields)
    field.setAsBackgroundMesh(least)


def _extract(surface_name: dict[int, str], curves: dict[str, list]) -> PartMesh:
    import gmsh

    tags, coords, _ = gmsh.model.mesh.getNodes()
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(len(tags))
    points = coords.reshape(-1, 3)[:, :2]
    names = tuple(sorted(set(surface_name.values())))
    tris, regs = [], []
    for surf, name in surface_name.items():
        etypes, _, enodes = gmsh.model.mesh.getElements(2, surf)
        for etype, nodes in zip(etypes, enodes):
            if etype != 2:
                raise MeshError(f"gmsh produced element type {etype}, expected 3-node triangles")
            t = index[nodes.astype(np.int64)].reshape(-1, 3)
            tris.append(t)
            regs.append(np.full(len(t), names.index(name)))
    triangles, element_region = np.vstack(tris), np.concatenate(regs)
    lines = {}
    for name, tags_ in curves.items():
        pairs = []
        for tag in tags_:
            _, _, enodes = gmsh.model.mesh.getElements(1, tag)
            pairs.append(index[enodes[0].astype(np.int64)].reshape(-1, 2))
        lines[name] = np.vstack(pairs) if pairs else np.zeros((0, 2), dtype=np.int64)
    # drop nodes no triangle uses (geometry points of size fields) and renumber
    used = np.unique(triangles)
    renumber = np.full(len(points), -1, dtype=np.int64)
    renumber[used] = np.arange(len(used))
    triangles = renumber[triangles]
    lines = {k: renumber[v] for k, v in lines.items()}
    points = points[used]
    # orient counter-clockwise
    p = points[triangles]
    area2 = (p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1]) - (
        p[:, 2, 0] - p[:, 0, 0]
    ) * (p[:, 1, 1] - p[:, 0, 1])
    flip = area2 < 0
    triangles[flip] = triangles[flip][:, [0, 2, 1]]
    return PartMesh(points, triangles, element_region, names, lines)


_KEPT_SIGNALS = ("SIGPIPE", "SIGINT", "SIGTERM")


def _signal_dispositions() -> dict:
    """Python's view of the signal handlers gmsh's C++ start-up resets behind its back.

    gmsh resets SIGPIPE to its default (terminate) at the C level; a later write to a pipe
    whose reader died (a crashed worker process) would then kill this process silently.
    """
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        return {}
    return {name: signal.getsignal(getattr(signal, name))
            for name in _KEPT_SIGNALS if hasattr(signal, name)}


def _restore_signals(saved: dict) -> None:
    import signal

    for name, handler in saved.items():
        if handler is not None:
            signal.signal(getattr(signal, name), handler)


def mesh_part(
    regions: list[tuple[str, Shape]],
    sector_angle: float,
    r_slide: float,
    divisions: int,
    sizes: PartSizes,
    r_outer: float | None = None,
) -> PartMesh:
    """Mesh a part with gmsh (OCC kernel, one thread, reproducible).

    Parameters
    ----------
    regions
        Named region trees, background first.
    sector_angle
        Sector angle, rad; the part spans 0..sector_angle.
    r_slide
        Radius of the sliding circle, m.
    divisions
        Equal segments of the sliding circle.
    sizes
        Mesh sizes, m.
    r_outer
        Radius of the outer boundary (stator part), m; None for the rotor part.
    """
    import gmsh

    owns_gmsh = not gmsh.isInitialized()
    saved = _signal_dispositions()
    if owns_gmsh:
        gmsh.initialize(interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.NumThreads", 1)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 12)  # elements per full circle
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.MeshSizeMax", sizes.size)
        gmsh.model.add("part")
        surface_name = _fragment(regions)
        curves = _classify(sector_angle, r_slide, r_outer)
        if len(curves["sliding"]) != 1:
            raise MeshError(f"the sliding circle is split into {len(curves['sliding'])} curves")
        gmsh.model.mesh.setTransfiniteCurve(curves["sliding"][0], divisions + 1)
        _set_periodic(curves, sector_angle, r_slide)
        _size_field(sizes)
        gmsh.model.mesh.generate(2)
        return _extract(surface_name, curves)
    except MeshError:
        raise
    except Exception as err:  # gmsh raises plain Exception with its log message
        raise MeshError(f"gmsh failed on the {'stator' if r_outer else 'rotor'} part: {err}") \
            from err
    finally:
        if owns_gmsh:
            gmsh.finalize()
        else:
            gmsh.model.remove()
        _restore_signals(saved)
