"""A tiny constructive-solid-geometry language for 2-D regions.

Each machine region is described once as a tree of primitives (disk, polygon, sector) and
boolean operations; two evaluators turn the same tree into gmsh OCC surfaces (for meshing)
and into shapely polygons (for fast validity checks before any meshing).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "Shape",
    "disk",
    "polygon",
    "sector",
    "annular_sector",
    "union",
    "cut",
    "intersect",
    "rotate",
    "to_shapely",
    "to_occ",
]

_ARC_SEGMENTS = 720  # shapely points per full circle: chord error < 1e-5 of the radius


@dataclass(frozen=True)
class Shape:
    """A node of the tree: ``op`` names a primitive or an operation, ``args`` its data."""

    op: str
    args: tuple


def disk(x: float, y: float, r: float) -> Shape:
    """Disk of radius ``r`` (m) centred at (x, y)."""
    return Shape("disk", (float(x), float(y), float(r)))


def polygon(points) -> Shape:
    """Polygon through ``points`` ((n, 2) m), closed implicitly."""
    return Shape("polygon", (tuple(map(tuple, np.asarray(points, dtype=float))),))


def sector(r: float, start: float, end: float) -> Shape:
    """Circular sector about the origin, radius ``r`` m, between angles ``start``..``end`` rad;
    a full turn (or more) is the disk, with no cut along a ray."""
    if end - start >= 2 * math.pi * (1 - 1e-12):
        return disk(0.0, 0.0, r)
    return Shape("sector", (float(r), float(start), float(end)))


def annular_sector(r_in: float, r_out: float, start: float, end: float) -> Shape:
    """Ring sector about the origin between radii ``r_in`` and ``r_out`` (``r_in`` may be 0)."""
    outer = sector(r_out, start, end)
    return outer if r_in <= 0 else cut(outer, disk(0.0, 0.0, r_in))


def union(*shapes: Shape) -> Shape:
    """Union of shapes."""
    return Shape("union", shapes)


def cut(shape: Shape, *tools: Shape) -> Shape:
    """``shape`` minus every tool."""
    return Shape("cut", (shape, *tools))


def intersect(a: Shape, b: Shape) -> Shape:
    """Intersection of two shapes."""
    return Shape("intersect", (a, b))


def rotate(shape: Shape, angle: float) -> Shape:
    """``shape`` turned by ``angle`` rad counter-clockwise about the origin."""
    return Shape("rotate", (shape, float(angle)))


# ---------------------------------------------------------------- shapely evaluator
def to_shapely(shape: Shape):
    """Evaluate a tree into a shapely geometry (polygonal approximation of the arcs)."""
    import shapely
    from shapely import affinity
    from shapely.geometry import Point, Polygon

    op, args = shape.op, shape.args
    if op == "disk":
        x, y, r = args
        return Point(x, y).buffer(r, quad_segs=_ARC_SEGMENTS // 4)
    if op == "polygon":
        return Polygon(args[0]).buffer(0)
    if op == "sector":
        r, a0, a1 = args
        n = max(8, int(_ARC_SEGMENTS * (a1 - a0) / (2 * math.pi)))
        t = np.linspace(a0, a1, n + 1)
        pts = np.column_stack([r * np.cos(t), r * np.sin(t)])
        return Polygon(np.vstack([[0.0, 0.0], pts]))
    if op == "union":
        return shapely.union_all([to_shapely(s) for s in args])
    if op == "cut":
        out = to_shapely(args[0])
        for tool in args[1:]:
            out = out.difference(to_shapely(tool))
        return out
    if op == "intersect":
        return to_shapely(args[0]).intersection(to_shapely(args[1]))
    if op == "rotate":
        return affinity.rotate(to_shapely(args[0]), args[1], origin=(0, 0), use_radians=True)
    raise ValueError(f"unknown shape operation {op!r}")


# ---------------------------------------------------------------- gmsh OCC evaluator
def to_occ(shape: Shape) -> list[tuple[int, int]]:
    """Evaluate a tree into gmsh OCC surfaces of the current model; returns their dim-tags."""
    import gmsh

    occ = gmsh.model.occ
    op, args = shape.op, shape.args
    if op == "disk":
        x, y, r = args
        return [(2, occ.addDisk(x, y, 0.0, r, r))]
    if op == "polygon":
        pts = [occ.addPoint(x, y, 0.0) for x, y in args[0]]
        lines = [occ.addLine(pts[i], pts[(i + 1) % len(pts)]) for i in range(len(pts))]
        return [(2, occ.addPlaneSurface([occ.addCurveLoop(lines)]))]
    if op == "sector":
        r, a0, a1 = args
        c = occ.addPoint(0.0, 0.0, 0.0)
        p0 = occ.addPoint(r * math.cos(a0), r * math.sin(a0), 0.0)
        p1 = occ.addPoint(r * math.cos(a1), r * math.sin(a1), 0.0)
        arc = occ.addCircleArc(p0, c, p1)
        loop = occ.addCurveLoop([occ.addLine(c, p0), arc, occ.addLine(p1, c)])
        return [(2, occ.addPlaneSurface([loop]))]
    if op == "union":
        parts = [dt for s in args for dt in to_occ(s)]
        if len(parts) == 1:
            return parts
        out, _ = occ.fuse(parts[:1], parts[1:])
        return out
    if op == "cut":
        out = to_occ(args[0])
        tools = [dt for s in args[1:] for dt in to_occ(s)]
        if tools and out:
            out, _ = occ.cut(out, tools)
        return out
    if op == "intersect":
        a, b = to_occ(args[0]), to_occ(args[1])
        if not a or not b:
            return []
        out, _ = occ.intersect(a, b)
        return out
    if op == "rotate":
        out = to_occ(args[0])
        if out:
            occ.rotate(out, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, args[1])
        return out
    raise ValueError(f"unknown shape operation {op!r}")
