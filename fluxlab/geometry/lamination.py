"""Whole laminations (not the modelled sector) as closed contours, for a drawing.

A lamination is an outer circle, an inner circle (the stator bore or the shaft bore) and
its cut-outs: the stator slots (opening and winding layers as one contour each, closed
along the bore circle across the opening) or the rotor's barrier pieces (a post splits a
barrier in two). The cut-outs come from the same shape trees as the modelled sector
(:mod:`fluxlab.geometry.stator`, :mod:`fluxlab.geometry.fillets`), turned to every slot and
every pole. Coordinates in m, the machine centre at the origin; the rotor at position 0
(its d-axis on +x), slot k with its axis at (k + 1/2) slot pitches from +x, as in the model.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.geometry.csg import Shape, rotate, to_shapely, union
from fluxlab.geometry.fillets import barrier_air
from fluxlab.geometry.stator import slot_shapes
from fluxlab.spec.types import MachineSpec

__all__ = ["Lamination", "stator_lamination", "rotor_lamination", "ring_area"]


@dataclass(frozen=True)
class Lamination:
    """One lamination: circles (radii, m) and cut-out contours ((n, 2) arrays, m, open rings).

    ``cutouts`` holds one closed contour per slot or barrier piece (last point not repeated);
    ``cutout_kind`` names them ("slot" or "barrier").
    """

    name: str
    outer_radius: float
    inner_radius: float
    cutout_kind: str
    cutouts: tuple[np.ndarray, ...]

    @property
    def area(self) -> float:
        """Steel area of the lamination, m² (outer disk less the bore and the cut-outs)."""
        holes = sum(ring_area(c) for c in self.cutouts)
        return math.pi * (self.outer_radius**2 - self.inner_radius**2) - holes


def ring_area(points: np.ndarray) -> float:
    """Area enclosed by a closed ring of points ((n, 2), any orientation), shoelace formula."""
    x, y = points[:, 0], points[:, 1]
    return 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))


def _contours(shape: Shape, copies: int, first_angle: float) -> tuple[np.ndarray, ...]:
    """Exterior rings of ``shape`` turned to ``copies`` equal angles from ``first_angle``."""
    pitch = 2 * math.pi / copies
    rings = []
    for k in range(copies):
        geometry = to_shapely(rotate(shape, first_angle + k * pitch))
        for piece in getattr(geometry, "geoms", [geometry]):
            if piece.area > 0:
                rings.append(np.asarray(piece.exterior.coords)[:-1])
    return tuple(rings)


def stator_lamination(spec: MachineSpec) -> Lamination:
    """The whole stator lamination: outer circle, bore circle and ``Q`` slot contours."""
    st = spec.stator
    shapes = slot_shapes(st, spec.winding.layers)
    slot = union(*shapes.values())
    pitch = 2 * math.pi / st.slots
    return Lamination("stator", st.outer_diameter / 2, st.bore_diameter / 2, "slot",
                      _contours(slot, st.slots, 0.5 * pitch))


def rotor_lamination(spec: MachineSpec) -> Lamination:
    """The whole rotor lamination: outer circle, shaft bore and every barrier piece."""
    rotor, r_rotor = spec.rotor, spec.rotor_radius
    pole_pitch = 2 * math.pi / spec.poles
    cutouts: list[np.ndarray] = []
    for i, barrier in enumerate(rotor.barriers):
        shape = barrier_air(rotor, r_rotor, barrier, f"rotor.barriers[{i}]")
        cutouts.extend(_contours(shape, spec.poles, 0.5 * pole_pitch))
    return Lamination("rotor", r_rotor, rotor.shaft_diameter / 2, "barrier", tuple(cutouts))
