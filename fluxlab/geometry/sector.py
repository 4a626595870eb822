"""The modelled sector: the rotor part and the stator part as lists of named regions.

Regions are listed background first; where two regions overlap, the later one wins (a
barrier over the rotor iron, a slot over the stator iron). The rotor part ends on the
sliding circle in the middle of the air gap, where the stator part begins.
"""

from __future__ import annotations

import math

from fluxlab.geometry.csg import Shape, annular_sector, rotate
from fluxlab.geometry.fillets import barrier_air
from fluxlab.geometry.stator import slot_shapes
from fluxlab.machine.winding import machine_symmetry
from fluxlab.spec.types import MachineSpec

__all__ = [
    "model_sector",
    "sector_pole_choices",
    "sliding_radius",
    "slots_in_sector",
    "poles_in_sector",
    "rotor_regions",
    "stator_regions",
    "slot_region_name",
]


def sliding_radius(spec: MachineSpec) -> float:
    """Radius of the sliding circle, m: the middle of the air gap."""
    return spec.rotor_radius + spec.stator.airgap / 2


def sector_pole_choices(slots: int, poles: int) -> list[int]:
    """The pole counts a model sector may span: the smallest sector the symmetry allows
    (:func:`fluxlab.machine.winding.machine_symmetry`) times every divisor of its count of
    sectors, up to the whole machine (``poles``)."""
    sectors, _, _ = machine_symmetry(slots, poles)
    smallest = poles // sectors  # p/t or 2p/t poles, t = gcd(slots, p): a whole number
    return [smallest * m for m in range(1, sectors + 1) if sectors % m == 0]


def model_sector(spec: MachineSpec) -> tuple[int, float, int]:
    """The modelled sector: (sectors in the machine, sector angle in rad, edge sign).

    ``mesh.sector_poles`` poles when the file gives it, else the smallest sector of
    :func:`fluxlab.machine.winding.machine_symmetry`. A sector made of m smallest sectors
    carries edge_sign**m on its edges (a pair of anti-periodic sectors is periodic); the
    whole machine (one sector of 2 pi) has no edges, and its sign is +1.
    """
    sectors, angle, sign = machine_symmetry(spec.stator.slots, spec.poles)
    poles = spec.mesh.sector_poles
    if poles is None or poles * sectors == spec.poles:
        return sectors, angle, sign
    m = round(poles * sectors / spec.poles)  # smallest sectors in the model (validated)
    return sectors // m, angle * m, sign**m


def slots_in_sector(spec: MachineSpec, sector_angle: float) -> int:
    """Number of stator slots in a sector of ``sector_angle`` rad."""
    return round(spec.stator.slots * sector_angle / (2 * math.pi))


def poles_in_sector(spec: MachineSpec, sector_angle: float) -> int:
    """Number of rotor poles in a sector of ``sector_angle`` rad."""
    return round(spec.poles * sector_angle / (2 * math.pi))


def slot_region_name(slot: int, layer: int) -> str:
    """Region name of a winding layer of a slot (slot index from 0 at the sector start)."""
    return f"slot_{slot}_layer_{layer}"


def rotor_regions(spec: MachineSpec, sector_angle: float) -> list[tuple[str, Shape]]:
    """Rotor part at position 0: the d-axis on the sector start edge (angle 0).

    Pole j has its q-axis at (j + 1/2) * pi/p; barrier i of every pole in the sector is
    the region ``barrier_{i}``, i as in the machine file's ``rotor.barriers[i]`` (0 the
    nearest the surface).
    """
    rotor, r_rotor = spec.rotor, spec.rotor_radius
    r_shaft = rotor.shaft_diameter / 2
    regions: list[tuple[str, Shape]] = [
        ("shaft", annular_sector(0.0, r_shaft, 0.0, sector_angle)),
        ("rotor_iron", annular_sector(r_shaft, r_rotor, 0.0, sector_angle)),
        ("airgap_rotor", annular_sector(r_rotor, sliding_radius(spec), 0.0, sector_angle)),
    ]
    pole_pitch = 2 * math.pi / spec.poles
    for i, barrier in enumerate(rotor.barriers):
        shape = barrier_air(rotor, r_rotor, barrier, f"rotor.barriers[{i}]")
        for j in range(poles_in_sector(spec, sector_angle)):
            regions.append((f"barrier_{i}", rotate(shape, (j + 0.5) * pole_pitch)))
    return regions


def stator_regions(spec: MachineSpec, sector_angle: float) -> list[tuple[str, Shape]]:
    """Stator part: air gap beyond the sliding circle, iron, slot openings, winding layers.

    Slot k of the sector has its axis at (k + 1/2) slot pitches from the start edge, so
    the sector edges pass through tooth centres.
    """
    st = spec.stator
    r_bore, r_out = st.bore_diameter / 2, st.outer_diameter / 2
    regions: list[tuple[str, Shape]] = [
        ("airgap_stator", annular_sector(sliding_radius(spec), r_bore, 0.0, sector_angle)),
        ("stator_iron", annular_sector(r_bore, r_out, 0.0, sector_angle)),
    ]
    shapes = slot_shapes(st, spec.winding.layers)
    pitch = 2 * math.pi / st.slots
    for k in range(slots_in_sector(spec, sector_angle)):
        angle = (k + 0.5) * pitch
        regions.append(("slot_opening", rotate(shapes["opening"], angle)))
        for layer in range(spec.winding.layers):
            regions.append((slot_region_name(k, layer), rotate(shapes[f"layer_{layer}"], angle)))
    return regions
