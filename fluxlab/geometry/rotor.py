"""Flux barriers of one rotor pole, drawn with the pole's q-axis on +x.

A barrier is placed by where its centre line crosses the q-axis (``depth`` below the rotor
surface) and by where it opens under its tangential rib (``end_angle``), and sized by its
``width``. Its ends stop a tangential rib below the rotor surface, on the rib circle of
radius r_rib = r_rotor - tangential_rib; an optional radial rib (post) of width
``post_width`` splits it on the q-axis.

``end_angle`` is the angle from the q-axis of the middle of the barrier's opening under the
rib: the arc of the rib circle the barrier occupies on one side of the q-axis, from its
inner edge (nearer the q-axis) to its outer edge, has its angular midpoint there. The
centre line is drawn to an end point half a width inside the rib circle; the angle of that
point (the centre-line end angle) is found by a 1-D root search so that the opening's
middle falls on ``end_angle``.

- ``arc``: the centre line is the circle through the q-axis point and the two end points;
  its centre lies on the q-axis beyond the first point, so the barrier bows towards the
  shaft. The opening edges are where the circles of radius arc_radius -/+ width/2 about
  the arc centre cross the rib circle (law of cosines), or, for a barrier that bends back
  before the rib, where the half ring's cut through the arc centre does.
- ``u``: a bottom across the q-axis and two legs parallel to the q-axis ending at the
  end points. The opening edges are where the leg edges y = end_y -/+ width/2 cross the
  rib circle.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from fluxlab.errors import GeometryError
from fluxlab.geometry.csg import Shape, cut, disk, intersect, polygon
from fluxlab.spec.types import BarrierSpec, RotorSpec

__all__ = [
    "BarrierPlacement",
    "barrier_placement",
    "barrier_shape",
    "end_angle_range",
    "opening_angles",
    "post_shape",
]

#: Arc centre distance, in rib radii, taken as the straight-barrier limit of an arc
#: barrier (the centre line's end angle reaching the q-axis point's abscissa): the opening
#: middle is then 2e-8 to 5e-8 rad short of its limit (measured on rotors of 20 to 200 mm
#: radius).
_FAR_CENTRE = 1e7
#: Samples of the opening middle when looking for its least value (see _arc_low); found
#: the least value of 400-point scans on 3000 random arc barriers (measured).
_SAMPLES = 64
#: Absolute tolerance of the centre-line end angle searches, rad.
_XTOL = 1e-13


@dataclass(frozen=True)
class BarrierPlacement:
    """Centre-line geometry of one barrier in pole coordinates, m.

    ``r_axis``: where the centre line crosses the q-axis; ``end_x``, ``end_y``: the end point
    (upper one, the other mirrored); ``arc_centre`` and ``arc_radius`` for arc barriers.
    """

    r_axis: float
    end_x: float
    end_y: float
    arc_centre: float
    arc_radius: float


@dataclass(frozen=True)
class _Frame:
    """The radii a barrier's placement depends on, m, and its shape (``arc`` or ``u``)."""

    shape: str
    r_axis: float  # centre line on the q-axis
    r_end: float  # centre-line end points
    r_rib: float  # rib circle
    half: float  # half the barrier width
    post_half: float  # half the post width


def _frame(rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec) -> _Frame:
    r_rib = rotor_radius - rotor.tangential_rib
    half = barrier.width / 2
    return _Frame(rotor.barrier_shape, rotor_radius - barrier.depth, r_rib - half, r_rib,
                  half, barrier.post_width / 2)


def _arc_centre(r_axis: float, r_end: float, end_angle: float) -> float:
    """x of the circle through (r_axis, 0) and the end point with its centre on the x-axis."""
    return (r_end**2 - r_axis**2) / (2 * (r_end * math.cos(end_angle) - r_axis))


def _rib_crossing(centre: float, rho: float, r_rib: float) -> float:
    """Angle, rad, of the rib-circle point at distance ``rho`` from (centre, 0).

    Law of cosines in the triangle origin - (centre, 0) - point (elementary geometry); the
    distance grows with the angle, so a circle that misses the rib circle gives 0 (all rib
    points farther) or pi (all nearer).
    """
    cos_phi = (r_rib**2 + centre**2 - rho**2) / (2 * r_rib * centre)
    return math.acos(min(1.0, max(-1.0, cos_phi)))


def _opening(f: _Frame, theta: float) -> tuple[float, float] | None:
    """Opening (inner edge, outer edge) under the rib, rad from the q-axis, for a
    centre-line end angle ``theta`` rad; None when the barrier does not reach its rib."""
    if f.shape == "u":
        return _u_opening(f, f.r_end * math.sin(theta))
    if f.r_end * math.cos(theta) <= f.r_axis:
        return None  # no arc through these points
    centre = _arc_centre(f.r_axis, f.r_end, theta)
    radius = centre - f.r_axis
    outer = _rib_crossing(centre, radius + f.half, f.r_rib)
    inner = _rib_crossing(centre, radius - f.half, f.r_rib) if radius > f.half else 0.0
    # the barrier is the half ring x <= centre (see barrier_shape)
    inner = max(inner, math.acos(min(1.0, centre / f.r_rib)))
    return (inner, outer) if outer >= inner else None


def _u_opening(f: _Frame, end_y: float) -> tuple[float, float]:
    """Opening of a U barrier whose leg centre lines are y = +/- ``end_y`` m.

    A leg edge meets the rib circle at asin(y / r_rib), unless the circle already left the
    barrier through its bottom edge x = r_axis -/+ width/2 (then acos(x / r_rib));
    elementary geometry. Legs that meet (y < 0) are rejected before; 0 keeps this defined.
    """
    def angle(y: float, x: float) -> float:
        by_leg = math.asin(min(1.0, max(0.0, y / f.r_rib)))
        return min(by_leg, math.acos(min(1.0, max(-1.0, x / f.r_rib))))

    return (angle(end_y - f.half, f.r_axis + f.half),
            angle(end_y + f.half, f.r_axis - f.half))


def _middle(f: _Frame, theta: float) -> float:
    """Opening middle, rad from the q-axis (nan when the barrier misses its rib)."""
    edges = _opening(f, theta)
    return math.nan if edges is None else 0.5 * (edges[0] + edges[1])


def _arc_reach(f: _Frame, theta_max: float) -> float:
    """Smallest centre-line end angle, rad, at which an arc barrier reaches its rib."""
    lo, hi = 0.0, theta_max
    if _opening(f, lo) is not None:
        return lo
    for _ in range(60):  # bisection: below it the arc turns back before the rib
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if _opening(f, mid) is not None else (mid, hi)
    return hi


def _arc_low(f: _Frame, theta_reach: float, theta_high: float) -> float:
    """Centre-line end angle, rad, of the least opening middle of an arc barrier.

    Where the inner ring edge crosses the rib circle, both opening edges move away from
    the q-axis as the end angle grows: the arc centre moves out, and by the law of cosines
    (elementary geometry) both crossing angles grow with it, so the middle rises. Below
    that, near the least reaching end angle, the opening's inner edge is the half ring's
    cut through the arc centre, which moves towards the q-axis: the middle may dip first
    (measured: up to some degrees on deep barriers). The least middle is searched on a
    grid, then refined; only the rising branch beyond it is used.
    """
    thetas = np.linspace(theta_reach, theta_high, _SAMPLES + 1)
    values = [_middle(f, t) for t in thetas]
    k = int(np.nanargmin(values))
    a, b = thetas[max(k - 1, 0)], thetas[min(k + 1, _SAMPLES)]
    best = minimize_scalar(lambda t: _middle(f, t), bounds=(a, b), method="bounded",
                           options={"xatol": _XTOL})
    return float(best.x) if best.fun < values[k] else float(thetas[k])


def _span(f: _Frame, key: str) -> tuple[float, float, float, float]:
    """Centre-line end angles (a, b), rad, between which the opening middle rises from its
    least value ``low`` to its greatest ``high`` (rad; for an arc barrier the straight
    limit, approached as b nears the angle where the arc turns straight)."""
    if f.shape == "u":
        # the inner leg edges stay beyond the post up to a leg along y = r_end
        a = math.asin(min(1.0, (f.half + f.post_half) / f.r_end))
        return a, math.pi / 2, _middle(f, a), _middle(f, math.pi / 2)
    if f.r_end <= f.r_axis:
        raise GeometryError(
            f"{key}: its q-axis point is beyond the centre line's end radius "
            f"{f.r_end * 1e3:.4g} mm; an arc barrier needs a depth_mm greater than its "
            "tangential rib plus half its width"
        )
    # the arc centre at _FAR_CENTRE rib radii: cos(b) from the _arc_centre equation
    cos_b = (f.r_axis + (f.r_end**2 - f.r_axis**2) / (2 * _FAR_CENTRE * f.r_rib)) / f.r_end
    b = math.acos(min(1.0, cos_b))
    a = _arc_low(f, _arc_reach(f, b), b)
    # straight limit: the strip |x - r_axis| <= width/2 meets the rib circle at acos(x/r_rib)
    high = 0.5 * sum(math.acos(min(1.0, (f.r_axis + s * f.half) / f.r_rib)) for s in (1, -1))
    return a, b, _middle(f, a), high


def end_angle_range(rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec, key: str
                    ) -> tuple[float, float]:
    """Least and greatest opening middle a barrier of this depth and width can have, rad.

    Parameters
    ----------
    rotor, rotor_radius, barrier
        The rotor, its outer radius (m) and the barrier; ``barrier.end_angle`` is unused.
    key
        Names the barrier in error messages, e.g. ``"rotor.barriers[1]"``.

    Returns
    -------
    (low, high)
        Angles from the q-axis, rad. A U barrier's legs meet at ``low`` (excluded); an arc
        barrier reaches ``high`` only in the limit of a straight barrier.
    """
    _, _, low, high = _span(_frame(rotor, rotor_radius, barrier), key)
    return low, high


def _deg(x: float) -> str:
    return f"{math.degrees(x):.4g}"


def _range_problem(f: _Frame, barrier: BarrierSpec, key: str, low: float, high: float
                   ) -> str:
    """Message for an end angle outside the opening middles ``low``..``high`` rad."""
    head = f"{key}.end_angle_deg = {_deg(barrier.end_angle)}: "
    span = f" (feasible for this depth and width: {_deg(low)} to {_deg(high)} deg)"
    depth = f"depth_mm = {barrier.depth * 1e3:.4g}"
    width = f"width_mm = {barrier.width * 1e3:.4g}"
    if f.shape == "u" and barrier.end_angle <= low:
        return (f"{head}too small for a U barrier of width {barrier.width * 1e3:.4g} mm; "
                f"its legs would meet, end angle above {_deg(low)} deg{span}")
    if f.shape == "u":
        return (f"{head}too large for a U barrier of {width}; its legs would run past the "
                f"top of the rib circle, end angle at most {_deg(high)} deg{span}")
    if barrier.end_angle < low:
        return (f"{head}too small for {depth} and {width}; the arc turns back towards the "
                "q-axis before the barrier gets out to its tangential rib, end angle above "
                f"{_deg(low)} deg{span}")
    return (f"{head}too wide for {depth}; an arc barrier needs its ends beyond its q-axis "
            "point, so it opens nearer the q-axis than a straight barrier across the q-axis "
            f"there, end angle below {_deg(high)} deg{span}")


def _steel_problems(f: _Frame, rotor: RotorSpec, barrier: BarrierSpec, key: str,
                    theta: float) -> list[str]:
    """Too little steel inside an arc barrier with centre-line end angle ``theta`` rad."""
    radius = _arc_centre(f.r_axis, f.r_end, theta) - f.r_axis
    if 2 * (radius - f.half) >= rotor.min_steel:
        return []
    # the steel inside the arc, between the barrier and the surface, is 2 (radius -
    # width/2) across; below zero the ring has no inner edge at all
    return [
        f"{key}.width_mm = {barrier.width * 1e3:.4g}: leaves "
        f"{2 * (radius - f.half) * 1e3:.4g} mm of steel inside the barrier's arc (centre-"
        f"line radius {radius * 1e3:.4g} mm, from depth_mm and end_angle_deg), less "
        f"than rotor.min_steel_mm = {rotor.min_steel * 1e3:.4g}"
    ]


def _centre_line_end(f: _Frame, rotor: RotorSpec, barrier: BarrierSpec, key: str) -> float:
    """Centre-line end angle, rad, that centres the opening on ``barrier.end_angle``."""
    a, b, low, high = _span(f, key)
    target = barrier.end_angle
    if f.shape == "u":
        inside = low < target <= high
    else:
        inside = low <= target <= _middle(f, b)
    if not inside:
        problems = [_range_problem(f, barrier, key, low, high)]
        if f.shape == "arc" and target < low:
            # the nearest drawable arc may leave no steel inside it either: say so too
            problems += _steel_problems(f, rotor, barrier, key, a)
        raise GeometryError(problems)
    if target == low:
        return a
    return brentq(lambda t: _middle(f, t) - target, a, b, xtol=_XTOL)


def barrier_placement(
    rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec, key: str
) -> BarrierPlacement:
    """Centre line of a barrier whose opening under the rib is centred on its end angle.

    Parameters
    ----------
    rotor, rotor_radius, barrier
        The rotor, its outer radius (m) and the barrier.
    key
        Names the barrier in error messages, e.g. ``"rotor.barriers[1]"``.

    Returns
    -------
    BarrierPlacement
        The centre line in pole coordinates, m.

    Raises
    ------
    GeometryError
        When no centre line opens the barrier at ``end_angle_deg`` (the message gives the
        feasible range) or an arc barrier leaves too little steel inside its arc.
    """
    f = _frame(rotor, rotor_radius, barrier)
    theta = _centre_line_end(f, rotor, barrier, key)
    end_x, end_y = f.r_end * math.cos(theta), f.r_end * math.sin(theta)
    if f.shape == "u":
        return BarrierPlacement(f.r_axis, end_x, end_y, math.nan, math.nan)
    problems = _steel_problems(f, rotor, barrier, key, theta)
    if problems:
        raise GeometryError(problems)
    centre = _arc_centre(f.r_axis, f.r_end, theta)
    return BarrierPlacement(f.r_axis, end_x, end_y, centre, centre - f.r_axis)


def opening_angles(rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec, key: str
                   ) -> tuple[float, float, float]:
    """Where a barrier opens under its tangential rib, on one side of the q-axis.

    Parameters
    ----------
    rotor, rotor_radius, barrier
        The rotor, its outer radius (m) and the barrier.
    key
        Names the barrier in error messages, e.g. ``"rotor.barriers[1]"``.

    Returns
    -------
    (inner_edge, middle, outer_edge)
        Angles from the q-axis, rad, of the arc of the rib circle (radius rotor_radius -
        tangential_rib) that the barrier occupies; ``middle`` equals ``barrier.end_angle``
        to the search tolerance.
    """
    f = _frame(rotor, rotor_radius, barrier)
    place = barrier_placement(rotor, rotor_radius, barrier, key)
    edges = _opening(f, math.atan2(place.end_y, place.end_x))
    if edges is None:  # not reached: the placement found an opening at this angle
        raise GeometryError(f"{key}: the barrier does not reach its tangential rib")
    return edges[0], 0.5 * (edges[0] + edges[1]), edges[1]


def barrier_shape(rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec, key: str) -> Shape:
    """The whole barrier (without its post) in pole coordinates."""
    place = barrier_placement(rotor, rotor_radius, barrier, key)
    half = barrier.width / 2
    clip = disk(0.0, 0.0, rotor_radius - rotor.tangential_rib)
    far = 2 * rotor_radius
    if rotor.barrier_shape == "arc":
        c, r = place.arc_centre, place.arc_radius
        band = cut(disk(c, 0.0, r + half), disk(c, 0.0, r - half))
        # keep the side of the band towards the origin: the barrier proper
        near = polygon([(-far, -far), (c, -far), (c, far), (-far, far)])
        return intersect(intersect(band, near), clip)
    y_out, y_in = place.end_y + half, place.end_y - half
    outer = polygon([(place.r_axis - half, -y_out), (far, -y_out), (far, y_out),
                     (place.r_axis - half, y_out)])
    inner = polygon([(place.r_axis + half, -y_in), (far, -y_in), (far, y_in),
                     (place.r_axis + half, y_in)])
    return intersect(cut(outer, inner), clip)


def post_shape(rotor_radius: float, barrier: BarrierSpec) -> Shape | None:
    """The radial rib (post) strip on the q-axis, or None without a post."""
    if barrier.post_width <= 0:
        return None
    h, far = barrier.post_width / 2, 2 * rotor_radius
    return polygon([(0.0, -h), (far, -h), (far, h), (0.0, h)])
