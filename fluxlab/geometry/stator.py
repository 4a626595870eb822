"""Semi-closed stator slots: outline of one slot and the slot's winding layers.

A slot is drawn with its axis on +x and the machine centre at the origin: an opening of
width ``slot_opening`` through the tooth tips of height ``tip_height``, then the slot body
up to ``slot_depth`` below the bore, with either parallel teeth (``tooth_width``) or a
parallel slot (``slot_width``), and a round or flat (optionally filleted) bottom.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from fluxlab.geometry.csg import Shape, cut, disk, intersect, polygon, union
from fluxlab.spec.types import StatorSpec

__all__ = ["SlotOutline", "slot_outline", "slot_shapes"]


@dataclass(frozen=True)
class SlotOutline:
    """Key dimensions of one slot body in slot coordinates, m.

    ``x_top``: body start (bore + tip height); ``x_bottom``: deepest point;
    ``half_width_top`` / ``half_width_bottom``: half widths at the body's straight-side ends;
    ``x_side_end``: where the straight sides end; ``round_centre`` and ``round_radius``
    describe the round bottom (radius 0 for a flat bottom).
    """

    x_top: float
    x_bottom: float
    x_side_end: float
    half_width_top: float
    half_width_bottom: float
    round_centre: float
    round_radius: float


def _half_width(stator: StatorSpec, x: float) -> float:
    """Half width of the slot body at distance x from the centre along the slot axis, m."""
    if stator.slot_width is not None:
        return stator.slot_width / 2
    # Parallel teeth: the side is the line at tooth_width/2 from the tooth centre line,
    # which runs through the origin at half a slot pitch from the slot axis.
    a = math.pi / stator.slots
    return (x * math.sin(a) - stator.tooth_width / 2) / math.cos(a)


def slot_outline(stator: StatorSpec) -> SlotOutline:
    """The slot body's dimensions (see :class:`SlotOutline`)."""
    r_bore = stator.bore_diameter / 2
    x_top = r_bore + stator.tip_height
    x_bottom = r_bore + stator.slot_depth
    if stator.slot_bottom == "round":
        if stator.slot_width is not None:
            radius = stator.slot_width / 2
            centre = x_bottom - radius
            side_end = centre
        else:
            a = math.pi / stator.slots
            centre = (x_bottom + stator.tooth_width / 2) / (1 + math.sin(a))
            radius = x_bottom - centre
            side_end = centre - radius * math.sin(a)
    else:
        centre, radius, side_end = x_bottom, 0.0, x_bottom
    return SlotOutline(
        x_top=x_top,
        x_bottom=x_bottom,
        x_side_end=side_end,
        half_width_top=_half_width(stator, x_top),
        half_width_bottom=_half_width(stator, side_end),
        round_centre=centre,
        round_radius=radius,
    )


def _body(stator: StatorSpec, s: SlotOutline) -> Shape:
    corners = [
        (s.x_top, -s.half_width_top),
        (s.x_side_end, -s.half_width_bottom),
        (s.x_side_end, s.half_width_bottom),
        (s.x_top, s.half_width_top),
    ]
    body = polygon(corners)
    if s.round_radius > 0:
        # Only the cap beyond the sides' end belongs to the slot: in a slot shallower than
        # its width the whole disk would reach back through the tooth tips into the gap.
        far = 2 * s.x_bottom
        beyond = polygon([(s.x_side_end, -far), (far, -far), (far, far), (s.x_side_end, far)])
        cap = intersect(disk(s.round_centre, 0.0, s.round_radius), beyond)
        return union(body, cap)
    f = stator.bottom_fillet
    if f <= 0:
        return body
    # A fillet of radius f in each bottom corner: a circle tangent to the side and the
    # bottom. Cut the corner piece outside that circle.
    pieces = []
    for sign in (-1.0, 1.0):
        xc = s.x_bottom - f
        # side line: |y| = w(x); for the fillet centre take the side's half width at xc
        yc = sign * (_half_width(stator, xc) - f)
        corner = (s.x_bottom, sign * s.half_width_bottom)
        t_side = (xc, sign * _half_width(stator, xc))
        t_bottom = (s.x_bottom, yc)
        pieces.append(cut(polygon([corner, t_side, t_bottom]), disk(xc, yc, f)))
    return cut(body, *pieces)


def slot_shapes(stator: StatorSpec, layers: int) -> dict[str, Shape]:
    """Regions of one slot in slot coordinates.

    Returns ``{"opening": ..., "layer_0": ..., "layer_1": ...}``: the air of the slot
    opening between the tooth tips, and the winding layers. Layer 0 is the one nearer the
    air gap; two layers are split at the middle of the body's radial extent (a top/bottom
    double-layer winding, common practice, no source).
    """
    s = slot_outline(stator)
    r_bore = stator.bore_diameter / 2
    half = stator.slot_opening / 2
    x_in = r_bore - 2 * stator.tip_height - half  # well inside the bore circle
    opening = cut(
        polygon([(x_in, -half), (s.x_top, -half), (s.x_top, half), (x_in, half)]),
        disk(0.0, 0.0, r_bore),
    )
    body = _body(stator, s)
    if layers == 1:
        return {"opening": opening, "layer_0": body}
    x_mid = 0.5 * (s.x_top + s.x_bottom)
    big = 2 * s.x_bottom
    lower = polygon([(0, -big), (x_mid, -big), (x_mid, big), (0, big)])
    upper = polygon([(x_mid, -big), (big, -big), (big, big), (x_mid, big)])
    return {
        "opening": opening,
        "layer_0": intersect(body, lower),
        "layer_1": intersect(body, upper),
    }
