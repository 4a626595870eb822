"""Flux barriers of one rotor pole, drawn with the pole's q-axis on +x.

A barrier is placed by where its centre line crosses the q-axis (``depth`` below the rotor
surface) and where the centre line ends near the surface (``end_angle`` from the q-axis),
and sized by its ``width``. Its ends stop a tangential rib below the rotor surface; an
optional radial rib (post) of width ``post_width`` splits it on the q-axis.

- ``arc``: the centre line is the circle through the q-axis point and the two end points;
  its centre lies on the q-axis beyond the first point, so the barrier bows towards the
  shaft.
- ``u``: a bottom across the q-axis and two legs parallel to the q-axis ending at the
  end points.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import GeometryError
from ..spec import BarrierSpec, RotorSpec
from .csg import Shape, cut, disk, intersect, polygon

__all__ = ["BarrierPlacement", "barrier_placement", "barrier_shape", "post_shape"]


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


def _end_radius(rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec) -> float:
    """Radius of the centre line's end point: half a width inside the rib circle."""
    return rotor_radius - rotor.tangential_rib - barrier.width / 2


def barrier_placement(
    rotor: RotorSpec, rotor_radius: float, barrier: BarrierSpec, key: str
) -> BarrierPlacement:
    """Centre line of a barrier; ``key`` names the barrier in error messages."""
    r_axis = rotor_radius - barrier.depth
    r_end = _end_radius(rotor, rotor_radius, barrier)
    end_x, end_y = r_end * math.cos(barrier.end_angle), r_end * math.sin(barrier.end_angle)
    if rotor.barrier_shape == "u":
        return BarrierPlacement(r_axis, end_x, end_y, math.nan, math.nan)
    if end_x <= r_axis:
        raise GeometryError(
            f"{key}.end_angle_deg = {math.degrees(barrier.end_angle):.3g}: too wide for "
            f"depth_mm = {barrier.depth * 1e3:.3g}; an arc barrier needs its ends beyond its "
            f"q-axis point, end angle below {math.degrees(math.acos(min(1, r_axis / r_end))):.3g}"
            " deg"
        )
    centre = _arc_centre(r_axis, r_end, barrier.end_angle)
    r_rib, half = rotor_radius - rotor.tangential_rib, barrier.width / 2
    if not _reaches_rib(r_axis, r_end, half, r_rib, barrier.end_angle):
        # the barrier is the half ring x <= centre (see barrier_shape); its farthest point
        # from the origin is the outer edge at x = centre
        lo, hi = 0.0, math.acos(min(1.0, r_axis / r_end))
        for _ in range(50):  # bisection for the smallest end angle that reaches the rib
            mid = 0.5 * (lo + hi)
            lo, hi = (lo, mid) if _reaches_rib(r_axis, r_end, half, r_rib, mid) else (mid, hi)
        raise GeometryError(
            f"{key}.end_angle_deg = {math.degrees(barrier.end_angle):.4g}: too small for "
            f"depth_mm = {barrier.depth * 1e3:.4g} and width_mm = {barrier.width * 1e3:.4g}; "
            "the arc turns back towards the q-axis before the barrier reaches its "
            f"tangential rib, end angle above {math.degrees(hi):.4g} deg"
        )
    radius = centre - r_axis
    if 2 * (radius - half) < rotor.min_steel:
        # the steel inside the arc, between the barrier and the surface, is 2 (radius -
        # width/2) across; below zero the ring has no inner edge at all
        raise GeometryError(
            f"{key}.width_mm = {barrier.width * 1e3:.4g}: leaves "
            f"{2 * (radius - half) * 1e3:.4g} mm of steel inside the barrier's arc (centre-"
            f"line radius {radius * 1e3:.4g} mm, from depth_mm and end_angle_deg), less "
            f"than rotor.min_steel_mm = {rotor.min_steel * 1e3:.4g}"
        )
    return BarrierPlacement(r_axis, end_x, end_y, centre, radius)


def _arc_centre(r_axis: float, r_end: float, end_angle: float) -> float:
    """x of the circle through (r_axis, 0) and the end point with its centre on the x-axis."""
    return (r_end**2 - r_axis**2) / (2 * (r_end * math.cos(end_angle) - r_axis))


def _reaches_rib(r_axis: float, r_end: float, half: float, r_rib: float, end_angle: float
                 ) -> bool:
    """Whether the outer edge of an arc barrier's half ring gets out to the rib circle."""
    if r_end * math.cos(end_angle) <= r_axis:
        return True  # no arc at all; reported by the caller
    centre = _arc_centre(r_axis, r_end, end_angle)
    return centre**2 + (centre - r_axis + half) ** 2 >= r_rib**2


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
