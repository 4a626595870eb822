"""Rounded barrier ends: fillets where a flux barrier meets its tangential rib and its post.

A barrier drawn by :func:`fluxlab.geometry.rotor.barrier_shape` has sharp corners where its
edges meet the rib circle and, with a post, the post's sides (and, for a U barrier, where
the outer leg edges meet the bottom). Each is a re-entrant corner of the steel, where an
elastic stress has no finite peak; real laminations are punched with rounded corners.

A fillet of radius r_f at a corner is the circle tangent to both edges on the barrier side:
its centre is where the two edges, each offset by r_f into the barrier, cross (a circle
offset by r_f is the concentric circle of radius R -/+ r_f, a line the parallel line;
elementary geometry). The corner piece outside that circle (the "web" between the circle
and the corner) is given back to the steel: the web is the wedge from the centre through
the two tangent points, out past the corner, minus the fillet disk. Every convex corner of
the barrier is rounded, so the filleted barrier equals the morphological opening of the
sharp one by a disk of radius r_f (used by the tests as the independent reference).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import GeometryError
from fluxlab.geometry.csg import Shape, cut, disk, polygon
from fluxlab.geometry.rotor import barrier_placement, barrier_shape, opening_angles, post_shape
from fluxlab.spec.types import BarrierSpec, RotorSpec

__all__ = ["Fillet", "barrier_air", "barrier_fillets", "fillet_problems"]

#: Reach of the web's wedge past the corner, in centre-to-corner distances: any factor
#: above 1 covers the corner piece; 2 keeps clear of the edges' curvature.
_WEDGE_REACH = 2.0


@dataclass(frozen=True)
class Fillet:
    """One rounded corner in pole coordinates (q-axis on +x), m: the fillet ``centre``,
    its ``tangents`` on the two edges and the sharp ``corner`` it replaces."""

    centre: tuple[float, float]
    tangents: tuple[tuple[float, float], tuple[float, float]]
    corner: tuple[float, float]


# An edge: ("circle", cx, cy, R, s) with the barrier inside (s = -1) or outside (s = +1)
# the circle; ("line", nx, ny, d) with the barrier where n . x >= d (n a unit normal).
def _offset(edge: tuple, r: float) -> tuple:
    if edge[0] == "circle":
        _, cx, cy, radius, s = edge
        return ("circle", cx, cy, radius + s * r, s)
    _, nx, ny, d = edge
    return ("line", nx, ny, d + r)


def _crossings(a: tuple, b: tuple) -> list[np.ndarray]:
    """Points where two edges (circles or lines) cross; elementary geometry."""
    if a[0] == "line" and b[0] == "circle":
        a, b = b, a
    if a[0] == "line":  # both lines
        m = np.array([[a[1], a[2]], [b[1], b[2]]])
        if abs(np.linalg.det(m)) < 1e-12:
            return []
        return [np.linalg.solve(m, [a[3], b[3]])]
    c1, r1 = np.array(a[1:3]), a[3]
    if b[0] == "line":
        n, d = np.array(b[1:3]), b[3]
        foot = c1 + (d - n @ c1) * n
        h2 = r1**2 - (d - n @ c1) ** 2
        if h2 < 0:
            return []
        t = np.array([-n[1], n[0]]) * math.sqrt(h2)
        return [foot + t, foot - t]
    c2, r2 = np.array(b[1:3]), b[3]
    dist = float(np.hypot(*(c2 - c1)))
    along = (dist**2 + r1**2 - r2**2) / (2 * dist)
    h2 = r1**2 - along**2
    if h2 < 0:
        return []
    u = (c2 - c1) / dist
    base, t = c1 + along * u, np.array([-u[1], u[0]]) * math.sqrt(h2)
    return [base + t, base - t]


def _foot(edge: tuple, p: np.ndarray) -> np.ndarray:
    """The point of ``edge`` nearest ``p``."""
    if edge[0] == "circle":
        c = np.array(edge[1:3])
        return c + edge[3] * (p - c) / np.hypot(*(p - c))
    n = np.array(edge[1:3])
    return p - (n @ p - edge[3]) * n


def _nearest(points: list[np.ndarray], hint: np.ndarray, what: str) -> np.ndarray:
    if not points:
        raise GeometryError(what)
    return min(points, key=lambda q: float(np.hypot(*(q - hint))))


def _corner_edges(rotor: RotorSpec, radius: float, barrier: BarrierSpec, key: str
                  ) -> list[tuple[tuple, tuple, np.ndarray]]:
    """(edge, edge, hint near the corner) for each corner on the upper side (y > 0)."""
    place = barrier_placement(rotor, radius, barrier, key)
    r_rib = radius - rotor.tangential_rib
    inner, _, outer = opening_angles(rotor, radius, barrier, key)
    rib = ("circle", 0.0, 0.0, r_rib, -1)
    half, post = barrier.width / 2, barrier.post_width / 2
    at = [np.array([r_rib * math.cos(a), r_rib * math.sin(a)]) for a in (inner, outer)]
    if rotor.barrier_shape == "arc":
        c, r = place.arc_centre, place.arc_radius
        edge_out, edge_in = ("circle", c, 0.0, r + half, -1), ("circle", c, 0.0, r - half, 1)
        if r - half <= 0 or at[0][0] >= c - 1e-12:  # bent back: the inner end is the cut x = c
            edge_in = ("line", -1.0, 0.0, -c)
        corners = [(edge_in, rib, at[0]), (edge_out, rib, at[1])]
        if post > 0:
            line = ("line", 0.0, 1.0, post)
            corners += [(edge_out, line, np.array([c - r - half, post])),
                        (edge_in, line, np.array([c - r + half, post]))]
        return corners
    y_out, y_in = place.end_y + half, place.end_y - half
    leg_out, leg_in = ("line", 0.0, -1.0, -y_out), ("line", 0.0, 1.0, y_in)
    bottom_out = ("line", 1.0, 0.0, place.r_axis - half)
    corners = [(leg_in, rib, at[0]), (leg_out, rib, at[1]),
               (bottom_out, leg_out, np.array([place.r_axis - half, y_out]))]
    if post > 0:
        bottom_in = ("line", -1.0, 0.0, -(place.r_axis + half))
        corners += [(bottom_out, ("line", 0.0, 1.0, post), np.array([place.r_axis - half, post])),
                    (bottom_in, ("line", 0.0, 1.0, post), np.array([place.r_axis + half, post]))]
    return corners


def barrier_fillets(rotor: RotorSpec, radius: float, barrier: BarrierSpec, key: str
                    ) -> list[Fillet]:
    """The fillets of one barrier (both sides of the q-axis), radius ``rotor.rib_fillet`` m.

    Raises
    ------
    GeometryError
        When a fillet does not fit its corner (no offset crossing).
    """
    r_f = rotor.rib_fillet
    if r_f <= 0:
        return []
    out = []
    for a, b, hint in _corner_edges(rotor, radius, barrier, key):
        what = (f"rotor.rib_fillet_mm = {r_f * 1e3:.4g}: does not fit a corner of {key} "
                f"near ({hint[0] * 1e3:.4g}, {hint[1] * 1e3:.4g}) mm")
        corner = _nearest(_crossings(a, b), hint, what)
        centre = _nearest(_crossings(_offset(a, r_f), _offset(b, r_f)), corner, what)
        t1, t2 = _foot(a, centre), _foot(b, centre)
        for sign in (1, -1):
            flip = np.array([1.0, sign])
            out.append(Fillet(tuple(centre * flip), (tuple(t1 * flip), tuple(t2 * flip)),
                              tuple(corner * flip)))
    return out


def _web(f: Fillet, r_f: float) -> Shape:
    p = np.array(f.centre)
    far = [p + _WEDGE_REACH * (np.array(q) - p) for q in (f.tangents[0], f.corner,
                                                           f.tangents[1])]
    return cut(polygon([p, *far]), disk(p[0], p[1], r_f))


def barrier_air(rotor: RotorSpec, radius: float, barrier: BarrierSpec, key: str) -> Shape:
    """The air of one barrier in pole coordinates: its shape without the post, corners
    rounded by ``rotor.rib_fillet`` (sharp when 0)."""
    shape = barrier_shape(rotor, radius, barrier, key)
    post = post_shape(radius, barrier)
    tools = [] if post is None else [post]
    tools += [_web(f, rotor.rib_fillet) for f in barrier_fillets(rotor, radius, barrier, key)]
    return cut(shape, *tools) if tools else shape


def fillet_problems(rotor: RotorSpec, radius: float, barrier: BarrierSpec, key: str,
                    barrier_region) -> list[str]:
    """Fillets of a barrier that do not fit: each fillet disk must lie in the sharp barrier
    (``barrier_region``, shapely, post cut out), which needs the barrier at least two fillet
    radii wide at the corner (so also under its rib and beside its post)."""
    from shapely.geometry import Point

    r_f = rotor.rib_fillet
    head = f"rotor.rib_fillet_mm = {r_f * 1e3:.4g}"
    try:
        fillets = barrier_fillets(rotor, radius, barrier, key)
    except GeometryError as err:
        return list(err.problems)
    # slack: 1 % of the fillet, plus twice the chord error of the 720-gon arcs (9.5e-6 R)
    grown = barrier_region.buffer(1e-2 * r_f + 2e-5 * radius)
    for f in fillets:
        if not grown.contains(Point(f.centre).buffer(r_f, quad_segs=32)):
            return [f"{head}: too large for {key} (width_mm = {barrier.width * 1e3:.4g}, "
                    f"post_mm = {barrier.post_width * 1e3:.4g}, end_angle_deg = "
                    f"{math.degrees(barrier.end_angle):.4g}, rotor.tangential_rib_mm = "
                    f"{rotor.tangential_rib * 1e3:.4g}); the rounded corners do not fit its "
                    "ends, whose width the end angle and depth set; must be less than about "
                    "half the barrier's width at its ends"]
    return []
