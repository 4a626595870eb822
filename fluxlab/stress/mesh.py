"""A mesh of the rotor lamination for the stress model, apart from the magnetic mesh.

The sector is one pole pitch, 2 pi / poles, from d-axis to d-axis: every pole of a
flux-barrier rotor is the same, so this is the smallest sector the rotor geometry repeats
over (the magnetic sector may be larger: it follows the stator and winding too). The mesh
is graded from ``local`` at the tangential ribs, posts and fillets to ``bulk`` elsewhere;
the two sector edges are meshed as rotated copies of each other (the cyclic tie needs node
pairs). ``full=True`` meshes the whole lamination instead (a check of the cyclic model).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from skfem import MeshTri

from fluxlab.geometry.csg import annular_sector, cut, disk, rotate
from fluxlab.geometry.fillets import barrier_air, barrier_fillets
from fluxlab.geometry.rotor import barrier_placement, opening_angles
from fluxlab.mesh.gmsh_part import PartSizes, mesh_part
from fluxlab.mesh.machine_mesh import facet_indices
from fluxlab.spec.types import MachineSpec

__all__ = ["StressMesh", "local_size", "stress_mesh"]

#: Local element size per thinnest rib, post or fillet radius: three P2 elements across a
#: rib; the convergence test (tests/test_stress_convergence.py) halves it.
_PER_FEATURE = 1 / 3


@dataclass(frozen=True, eq=False)
class StressMesh:
    """The lamination mesh: ``mesh`` (boundaries ``bore``, ``surface``, and for a sector
    ``edge_start``, ``edge_end``), the ``sector_angle`` (rad; 2 pi for the full lamination)
    and the ``sectors`` in the whole rotor; lengths in m."""

    mesh: MeshTri
    sector_angle: float
    sectors: int
    local_size: float
    bulk_size: float


def local_size(spec: MachineSpec) -> float:
    """Default element size at ribs, posts and fillets, m."""
    rotor = spec.rotor
    features = [rotor.tangential_rib, *(b.post_width for b in rotor.barriers if b.post_width)]
    if rotor.rib_fillet > 0:
        features.append(rotor.rib_fillet)
    return _PER_FEATURE * min(features)


def _refine_points(spec: MachineSpec, h: float) -> np.ndarray:
    """Points along the ribs, posts and fillets of one pole (q-axis on +x), (n, 2) m."""
    rotor, radius = spec.rotor, spec.rotor_radius
    r_mid = radius - rotor.tangential_rib / 2
    pts = []
    for i, b in enumerate(rotor.barriers):
        key = f"rotor.barriers[{i}]"
        inner, _, outer = opening_angles(rotor, radius, b, key)
        margin = (rotor.rib_fillet + rotor.tangential_rib) / r_mid
        angles = np.arange(inner - margin, outer + margin, h / r_mid)
        for sign in (1, -1):
            pts += [(r_mid * math.cos(a), sign * r_mid * math.sin(a)) for a in angles]
        if b.post_width > 0:
            place = barrier_placement(rotor, radius, b, key)
            xs = np.arange(place.r_axis - b.width, place.r_axis + b.width, h)
            pts += [(x, 0.0) for x in xs]
        pts += [f.centre for f in barrier_fillets(rotor, radius, b, key)]
    return np.asarray(pts, dtype=float).reshape(-1, 2)


def _regions(spec: MachineSpec, angle: float, poles: int) -> list:
    rotor, radius = spec.rotor, spec.rotor_radius
    r_bore = rotor.shaft_diameter / 2
    if poles == spec.poles:
        steel = cut(disk(0.0, 0.0, radius), disk(0.0, 0.0, r_bore))
    else:
        steel = annular_sector(r_bore, radius, 0.0, angle)
    regions = [("steel", steel)]
    pitch = 2 * math.pi / spec.poles
    for i, b in enumerate(rotor.barriers):
        air = barrier_air(rotor, radius, b, f"rotor.barriers[{i}]")
        regions += [("barrier", rotate(air, (j + 0.5) * pitch)) for j in range(poles)]
    return regions


def stress_mesh(spec: MachineSpec, *, local: float | None = None, bulk: float | None = None,
                full: bool = False) -> StressMesh:
    """Mesh the rotor lamination (steel only) of one pole pitch, or all of it.

    Parameters
    ----------
    spec
        The machine.
    local, bulk
        Element sizes, m, at ribs/posts/fillets (default :func:`local_size`) and elsewhere
        (default ``spec.mesh.size``).
    full
        Mesh the whole lamination instead of one pole pitch.
    """
    h = local_size(spec) if local is None else local
    size = spec.mesh.size if bulk is None else bulk
    poles = spec.poles if full else 1
    angle = 2 * math.pi * poles / spec.poles
    radius, r_bore = spec.rotor_radius, spec.rotor.shaft_diameter / 2
    pole_pts = _refine_points(spec, h)
    pts = np.vstack([pole_pts @ np.array([[math.cos(q), math.sin(q)],
                                          [-math.sin(q), math.cos(q)]])
                     for q in (np.arange(poles) + 0.5) * 2 * math.pi / spec.poles])
    # the surface is a transfinite curve (mesh_part's sliding circle): divided at the
    # local size, since the ribs lie along it, and graded from there as the air gap is
    divisions = max(8, math.ceil(angle * radius / h))
    part = mesh_part(_regions(spec, angle, poles), angle, radius, divisions,
                     PartSizes(size, h, (radius,), h, pts), r_outer=r_bore)
    steel = part.region_names.index("steel")
    triangles = part.triangles[part.element_region == steel]
    used = np.unique(triangles)
    renumber = np.full(len(part.points), -1, dtype=np.int64)
    renumber[used] = np.arange(used.size)
    mesh = MeshTri(np.ascontiguousarray(part.points[used].T),
                   np.ascontiguousarray(renumber[triangles].T))
    names = {"surface": "sliding", "bore": "outer", "edge_start": "edge_start",
             "edge_end": "edge_end"}
    boundaries = {ours: facet_indices(mesh, renumber[part.lines[theirs]])
                  for ours, theirs in names.items() if len(part.lines[theirs])}
    return StressMesh(mesh.with_boundaries(boundaries), angle, spec.poles // poles, h, size)
