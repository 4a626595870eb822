"""Meshing: the machine geometry through gmsh into a scikit-fem mesh with region tags.

The rotor part and the stator part are meshed apart and meet on the sliding circle in the
middle of the air gap, where each part has its own copy of the same equally spaced nodes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from skfem import MeshTri

__all__ = ["MachineMesh", "BOUNDARY_NAMES"]

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
