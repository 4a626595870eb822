"""Which part of the lamination each stress element lies in, from the geometry.

Four kinds, tested in this order on the element's centroid (pole coordinates, the q-axis of
the nearest pole on +x):

- ``tangential_ribs``: the rib ring (rotor surface to rib circle) over a barrier's opening,
  widened by a fillet radius plus a rib thickness each side and reaching a fillet radius
  below the rib circle, so the fillets belong to their rib;
- ``posts``: the post strip across its barrier, widened by a fillet radius plus half a
  post width each side and reaching past both barrier edges by the same margin;
- ``around_bore``: the core inside the deepest barrier's q-axis edge (radius below it);
- ``flux_guides``: the rest (the steel between barriers, the d-axis steel).
"""

from __future__ import annotations

import math

import numpy as np

from fluxlab.geometry.rotor import barrier_placement, opening_angles
from fluxlab.spec.types import MachineSpec

__all__ = ["ZONES", "element_zones"]

ZONES = ("tangential_ribs", "posts", "flux_guides", "around_bore")


def _pole_coordinates(spec: MachineSpec, xy: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(r, angle from the nearest q-axis) of (2, n) points; the angle in [-pi/p, pi/p)."""
    pitch = 2 * math.pi / spec.poles
    angle = np.mod(np.arctan2(xy[1], xy[0]), pitch) - pitch / 2
    return np.hypot(xy[0], xy[1]), angle


def element_zones(spec: MachineSpec, centroids: np.ndarray) -> np.ndarray:
    """Index into :data:`ZONES` for each element, from its (2, n) centroid, m."""
    rotor, radius = spec.rotor, spec.rotor_radius
    r, angle = _pole_coordinates(spec, centroids)
    x, y = r * np.cos(angle), np.abs(r * np.sin(angle))
    zone = np.full(r.size, ZONES.index("flux_guides"))
    r_rib = radius - rotor.tangential_rib
    core = radius  # a plain disc: all of it is the core
    for i, b in enumerate(rotor.barriers):
        key = f"rotor.barriers[{i}]"
        inner, _, outer = opening_angles(rotor, radius, b, key)
        margin = (rotor.rib_fillet + rotor.tangential_rib) / r_rib
        rib = (r >= r_rib - rotor.rib_fillet) & (np.abs(angle) >= inner - margin) & (
            np.abs(angle) <= outer + margin)
        place = barrier_placement(rotor, radius, b, key)
        reach = rotor.rib_fillet + b.post_width / 2
        post = (b.post_width > 0) & (y <= b.post_width / 2 + reach) & (
            np.abs(x - place.r_axis) <= b.width / 2 + reach)
        zone[post & (zone == ZONES.index("flux_guides"))] = ZONES.index("posts")
        zone[rib] = ZONES.index("tangential_ribs")
        core = place.r_axis - b.width / 2  # ends as the deepest barrier's inner edge
    zone[(r < core) & (zone == ZONES.index("flux_guides"))] = ZONES.index("around_bore")
    return zone
