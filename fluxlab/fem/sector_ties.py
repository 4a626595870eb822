"""The ties of a machine sector at any rotor step, as one :class:`fluxlab.fem.tiemap.TieMap`.

For a machine sector (:class:`fluxlab.mesh.machine_mesh.MachineMesh`) the constraints are: A = 0 on
``outer``; ``edge_end_X`` = ``edge_sign`` * ``edge_start_X`` at the same radius (X = rotor,
stator); ``sliding_rotor`` = ``sliding_stator`` at the same angle once the rotor is turned
by ``step * step_angle``, times ``edge_sign`` per sector wrapped over.  Rotor matrices stay
in the rotor frame: a new rotor step changes only P.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from skfem import MeshTri

from fluxlab.errors import MeshError
from fluxlab.fem.tiemap import Tie, TieMap, build_tie_map, match_points, rotate
from fluxlab.mesh.machine_mesh import MachineMesh

__all__ = ["SectorDofs", "sector_dofs", "sector_tie_map", "sector_wraps"]

#: Angular slack (rad) when deciding how many sectors a turned rotor dof has wrapped over;
#: either choice at the boundary gives the same constraint through the edge tie.
_WRAP_SLACK = 1e-9


def sector_wraps(angle, sector_angle: float, edge_sign: int):
    """Whole sectors an angle (rad from the sector start, scalar or array) has gone past,
    and the factor on a potential carried back over them: edge_sign per sector wrapped
    (the machine repeats every sector with that sign). Returns (wraps, sign)."""
    wraps = np.floor(np.asarray(angle, dtype=float) / sector_angle + _WRAP_SLACK)
    return wraps, np.where(np.mod(wraps, 2) == 1, float(edge_sign), 1.0)


@dataclass(frozen=True, eq=False)
class SectorDofs:
    """Dof sets and sector data for building the tie map of any rotor step.

    Attributes
    ----------
    doflocs
        (2, n_dofs) dof coordinates, m (rotor dofs in the rotor frame).
    outer
        Dirichlet dofs (A = 0).
    edges
        Part name ("rotor", "stator") -> (start dofs, end dofs); parts without edges absent.
    sliding
        (rotor dofs, stator dofs) on the sliding circle, or None.
    sector_angle
        rad (2 pi when the mesh is not a sector).
    edge_sign
        +1 periodic, -1 anti-periodic.
    step_angle
        Rotor step, rad (0 without a sliding circle).
    """

    doflocs: np.ndarray
    outer: np.ndarray
    edges: dict[str, tuple[np.ndarray, np.ndarray]] = field(default_factory=dict)
    sliding: tuple[np.ndarray, np.ndarray] | None = None
    sector_angle: float = 2.0 * np.pi
    edge_sign: int = 1
    step_angle: float = 0.0


def _dofs(basis, boundaries: dict, name: str) -> np.ndarray | None:
    if name not in boundaries:
        return None
    return np.asarray(basis.get_dofs(np.asarray(boundaries[name])).all(), dtype=np.intp)


def sector_dofs(basis, mesh: MachineMesh | MeshTri) -> SectorDofs:
    """Collect the dof sets of the named boundaries of ``mesh`` for ``basis``.

    A missing name switches its mechanism off; half of a pair present is a
    :class:`MeshError`.  A bare MeshTri uses only ``outer`` (if present).
    """
    skmesh = mesh.mesh if isinstance(mesh, MachineMesh) else mesh
    bnd = dict(skmesh.boundaries or {})
    doflocs = np.asarray(basis.doflocs)
    outer = _dofs(basis, bnd, "outer")
    outer = np.zeros(0, dtype=np.intp) if outer is None else outer
    if not isinstance(mesh, MachineMesh):
        return SectorDofs(doflocs, outer)
    edges = {}
    for part in ("rotor", "stator"):
        start, end = _dofs(basis, bnd, f"edge_start_{part}"), _dofs(basis, bnd, f"edge_end_{part}")
        if (start is None) != (end is None):
            raise MeshError(f"boundaries: edge_start_{part} and edge_end_{part} come in pairs")
        if start is not None:
            edges[part] = (start, end)
    rot, sta = _dofs(basis, bnd, "sliding_rotor"), _dofs(basis, bnd, "sliding_stator")
    if (rot is None) != (sta is None):
        raise MeshError("boundaries: sliding_rotor and sliding_stator come in pairs")
    sliding = None if rot is None else (rot, sta)
    if mesh.edge_sign not in (1, -1):
        raise MeshError(f"edge_sign: {mesh.edge_sign!r} must be +1 or -1")
    return SectorDofs(
        doflocs,
        outer,
        edges,
        sliding,
        float(mesh.sector_angle),
        int(mesh.edge_sign),
        float(mesh.step_angle) if sliding is not None else 0.0,
    )


def _edge_tie(sd: SectorDofs, part: str) -> Tie:
    start, end = sd.edges[part]
    what = f"edge_end_{part} -> edge_start_{part}"
    if start.size != end.size:
        raise MeshError(f"{what}: {end.size} end dofs but {start.size} start dofs")
    back = rotate(sd.doflocs[:, end], -sd.sector_angle)
    index = match_points(back, sd.doflocs[:, start], what)
    return Tie(end, start[index], float(sd.edge_sign), 0.0, what)


def _sliding_tie(sd: SectorDofs, step: int) -> Tie:
    rot, sta = sd.sliding
    # Dofs on an end edge are tied through that edge to the start edge: leaving them out
    # makes the rest a one-to-one match (and the edge tie carries their sign).
    if "rotor" in sd.edges:
        rot = np.setdiff1d(rot, sd.edges["rotor"][1])
    if "stator" in sd.edges:
        sta = np.setdiff1d(sta, sd.edges["stator"][1])
    what = f"sliding_rotor -> sliding_stator at step {step}"
    if rot.size != sta.size:
        raise MeshError(f"{what}: {rot.size} rotor dofs but {sta.size} stator dofs")
    xy = sd.doflocs[:, rot]
    turn = step * sd.step_angle
    theta = np.mod(np.arctan2(xy[1], xy[0]), 2.0 * np.pi) + turn
    wraps, sign = sector_wraps(theta, sd.sector_angle, sd.edge_sign)
    moved = rotate(xy, turn - wraps * sd.sector_angle)
    index = match_points(moved, sd.doflocs[:, sta], what)
    return Tie(rot, sta[index], sign, 0.0, what)


def sector_tie_map(sd: SectorDofs, step: int = 0) -> TieMap:
    """The tie map of a machine sector with the rotor ``step`` steps turned (any sign).

    Order of precedence: ``outer`` (A = 0), rotor edges, stator edges, sliding tie; a
    rotor dof on both the end edge and the sliding circle is resolved through the edge
    tie to its stator master with the product of the signs.
    """
    if step != int(step):
        raise ValueError(f"step: {step!r} must be an integer number of rotor steps")
    ties = [_edge_tie(sd, part) for part in ("rotor", "stator") if part in sd.edges]
    if sd.sliding is not None:
        ties.append(_sliding_tie(sd, int(step)))
    return build_tie_map(sd.doflocs.shape[1], sd.outer, 0.0, ties)
