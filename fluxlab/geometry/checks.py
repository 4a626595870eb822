"""Geometric validity of a machine before meshing: overlaps, thin steel, slot fit.

Works on shapely approximations of the same region trees that are meshed, so a rejected
candidate costs milliseconds, not a failed mesh.
"""

from __future__ import annotations

import math

from fluxlab.errors import GeometryError
from fluxlab.geometry.csg import cut, disk, to_shapely
from fluxlab.geometry.fillets import fillet_problems
from fluxlab.geometry.rotor import barrier_shape, post_shape
from fluxlab.geometry.sector import sector_pole_choices
from fluxlab.geometry.stator import slot_outline
from fluxlab.machine.winding import machine_symmetry
from fluxlab.spec.types import MachineSpec

__all__ = ["geometry_problems"]

_TOL = 1e-9  # m: geometric tolerance of the comparisons
_FILLET_PER_SIZE = 0.01  # smallest slot fillet per mesh element size
#: Smallest barrier-end fillet, m: punching dies are not made with corners much below the
#: sheet thickness (0.35-0.65 mm), common practice, no source; at 0.1 mm the stress mesh
#: has about 400k P2 dofs (measured on the demo), a tenth of that would need millions.
_LEAST_RIB_FILLET = 0.1e-3


def _mm(x: float) -> str:
    return f"{x * 1e3:.4g}"


def _width_key(st) -> str:
    """The key that sets the slot body's width, with its value."""
    if st.slot_width is not None:
        return f"stator.slot_width_mm = {_mm(st.slot_width)}"
    return f"stator.tooth_width_mm = {_mm(st.tooth_width or 0)}"


def _stator_problems(spec: MachineSpec) -> list[str]:
    st = spec.stator
    s = slot_outline(st)
    pitch = 2 * math.pi / st.slots
    r_bore = st.bore_diameter / 2
    problems = []
    slots = f"stator.slots = {st.slots}"
    bore = f"stator.bore_diameter_mm = {_mm(st.bore_diameter)}"
    tip = f"stator.tip_height_mm = {_mm(st.tip_height)}"
    depth = f"stator.slot_depth_mm = {_mm(st.slot_depth)}"
    if s.half_width_top <= 0 or s.half_width_bottom <= 0:
        # only parallel teeth can do this: the slot side is tooth_width/2 off the tooth's
        # centre line, so the tooth must be narrower than the slot pitch's chord there
        at_top = s.half_width_top <= 0
        x = s.x_top if at_top else s.x_side_end
        where = (f"the body top, radius {bore} / 2 + {tip}" if at_top else
                 f"the end of the straight sides, radius {_mm(x)} mm from {bore}, {depth}")
        problems.append(
            f"{_width_key(st)}: leaves no slot body; the tooth must be narrower than the slot "
            f"pitch chord 2 r sin(180 deg / {slots}) = {_mm(2 * x * math.sin(pitch / 2))} mm "
            f"at {where}"
        )
        return problems
    if s.half_width_top < st.slot_opening / 2 - _TOL:
        problems.append(
            f"stator.slot_opening_mm = {_mm(st.slot_opening)}: wider than the slot body at "
            f"its top ({_mm(2 * s.half_width_top)} mm, from {_width_key(st)}"
            + ("" if st.slot_width is not None else f", {bore}, {tip}, {slots}") + ")"
        )
    chord = 2 * math.sin(pitch / 2)
    places = {  # tooth width at each place, and the keys that set it
        "at the tooth tips": (s.x_top * chord - 2 * s.half_width_top,
                              f"{_width_key(st)}, {bore}, {tip}, {slots}"),
        "at the bore": (r_bore * chord - st.slot_opening,
                        f"stator.slot_opening_mm = {_mm(st.slot_opening)}, {bore}, {slots}"),
        "at the slot bottom": (s.x_side_end * chord - 2 * s.half_width_bottom,
                               f"{_width_key(st)}, {depth}, {bore}, {slots}"),
    }
    where = min(places, key=lambda k: places[k][0])
    worst, keys = places[where]
    if worst < spec.rotor.min_steel:
        problems.append(
            f"{keys}: the teeth get {_mm(worst)} mm thin {where}, less than "
            f"rotor.min_steel_mm = {_mm(spec.rotor.min_steel)} (slot pitch at the bore "
            f"{_mm(r_bore * pitch)} mm)"
        )
    if st.slot_bottom == "round" and s.x_side_end < s.x_top:
        problems.append(
            f"{depth}: too shallow for a round bottom of radius {_mm(s.round_radius)} mm "
            f"(from {_width_key(st)}" + ("" if st.slot_width is not None else f", {slots}")
            + f") after {tip}"
        )
    # gmsh gives a small arc about 12 edges per circle but grades nothing around it:
    # fillets below about 1/1000 of the element size gave degenerate triangles
    # (measured); 1/100 keeps a margin of 10
    least = _FILLET_PER_SIZE * spec.mesh.size
    if st.slot_bottom == "flat" and 0 < st.bottom_fillet < least:
        problems.append(
            f"stator.bottom_fillet_mm = {_mm(st.bottom_fillet)}: too small to mesh with "
            f"mesh.size_mm = {_mm(spec.mesh.size)}; at least {_mm(least)} mm "
            f"(mesh.size_mm / {1 / _FILLET_PER_SIZE:.0f}), or 0 for a sharp corner"
        )
    if st.slot_bottom == "flat" and st.bottom_fillet > min(
        s.half_width_bottom, s.x_bottom - s.x_top
    ) / 1.01:
        problems.append(
            f"stator.bottom_fillet_mm = {_mm(st.bottom_fillet)}: must be less than half the "
            f"slot bottom width ({_mm(s.half_width_bottom)} mm, from {_width_key(st)}) and "
            f"the body depth ({_mm(s.x_bottom - s.x_top)} mm = {depth} - {tip})"
        )
    return problems


def _barrier_problems(spec: MachineSpec) -> list[str]:
    from shapely.geometry import LineString

    rotor, r_rotor = spec.rotor, spec.rotor_radius
    problems: list[str] = []
    half_pole = math.pi / spec.poles
    d_axis = LineString([(0, 0), (3 * r_rotor * math.cos(half_pole),
                                  3 * r_rotor * math.sin(half_pole))])
    shaft = to_shapely(disk(0.0, 0.0, rotor.shaft_diameter / 2))
    shapes, fillets = [], []
    for i, b in enumerate(rotor.barriers):
        key = f"rotor.barriers[{i}]"
        if b.depth - b.width / 2 < rotor.tangential_rib - _TOL:
            problems.append(
                f"{key}.depth_mm = {_mm(b.depth)}: the barrier crosses the air gap on the "
                f"q-axis; must be at least {key}.width_mm / 2 + rotor.tangential_rib_mm = "
                f"{_mm(b.width)} / 2 + {_mm(rotor.tangential_rib)} = "
                f"{_mm(b.width / 2 + rotor.tangential_rib)} mm"
            )
            shapes.append(None)
            continue
        try:
            # end_angle_deg is where the barrier opens under its rib (rotor.py); the
            # placement rejects angles no centre line reaches, U legs that would meet
            # and arcs with too little steel inside, each with its feasible range
            shape = to_shapely(barrier_shape(rotor, r_rotor, b, key))
        except GeometryError as err:
            problems.extend(err.problems)
            shapes.append(None)
            continue
        shapes.append(shape)
        if shape.is_empty or shape.geom_type != "Polygon":
            problems.append(f"{key}: the barrier is not one connected piece; check its values")
            continue
        post = post_shape(r_rotor, b)
        air = to_shapely(cut(barrier_shape(rotor, r_rotor, b, key), post)) if post else shape
        fillets.extend(fillet_problems(rotor, r_rotor, b, key, air))
        clearance = shape.distance(shaft)
        if clearance < rotor.min_steel - _TOL:
            problems.append(
                f"{key}.depth_mm = {_mm(b.depth)} with {key}.width_mm = {_mm(b.width)}: leaves "
                f"{_mm(clearance)} mm of steel to the shaft (rotor.shaft_diameter_mm = "
                f"{_mm(rotor.shaft_diameter)}), less than rotor.min_steel_mm = "
                f"{_mm(rotor.min_steel)}"
            )
        to_d = shape.distance(d_axis)
        if 2 * to_d < rotor.min_steel - _TOL or shape.intersects(d_axis):
            problems.append(
                f"{key}.end_angle_deg = {math.degrees(b.end_angle):.4g} with {key}.width_mm = "
                f"{_mm(b.width)}: the barrier comes {_mm(to_d)} mm from the d-axis (at "
                f"{180 / spec.poles:.4g} deg from the q-axis, machine.poles = {spec.poles}); "
                f"the steel between neighbouring poles ({_mm(2 * to_d)} mm) is less than "
                f"rotor.min_steel_mm = {_mm(rotor.min_steel)}"
            )
    problems.extend(fillets[:1])  # one key: its first misfit (the narrowest barrier) says it
    if 0 < rotor.rib_fillet < _LEAST_RIB_FILLET and rotor.barriers:
        problems.append(
            f"rotor.rib_fillet_mm = {_mm(rotor.rib_fillet)}: must be 0 (sharp corners) or at "
            f"least {_mm(_LEAST_RIB_FILLET)} mm; a smaller corner radius is not punched, and "
            "its stress peak would need elements of micrometres")
    for i in range(len(shapes) - 1):
        a, b = shapes[i], shapes[i + 1]
        key = f"rotor.barriers[{i + 1}]"
        if rotor.barriers[i + 1].depth <= rotor.barriers[i].depth:
            problems.append(
                f"{key}.depth_mm = {_mm(rotor.barriers[i + 1].depth)}: barriers go from the "
                f"surface inwards; must be deeper than rotor.barriers[{i}].depth_mm = "
                f"{_mm(rotor.barriers[i].depth)}"
            )
            continue
        if a is None or b is None:
            continue
        gap = a.distance(b)
        if gap < rotor.min_steel - _TOL or a.intersects(b):
            sizes = ", ".join(
                f"rotor.barriers[{j}] depth_mm = {_mm(rotor.barriers[j].depth)}, width_mm = "
                f"{_mm(rotor.barriers[j].width)}, end_angle_deg = "
                f"{math.degrees(rotor.barriers[j].end_angle):.4g}" for j in (i, i + 1))
            problems.append(
                f"{key}: {_mm(gap)} mm of steel to rotor.barriers[{i}], less than "
                f"rotor.min_steel_mm = {_mm(rotor.min_steel)} (barriers overlap or nearly; "
                f"{sizes})"
            )
    return problems


def _sector_problems(spec: MachineSpec) -> list[str]:
    asked = spec.mesh.sector_poles
    choices = sector_pole_choices(spec.stator.slots, spec.poles)
    if asked is None or asked in choices:
        return []
    return [f"mesh.sector_poles = {asked}: with stator.slots = {spec.stator.slots} and "
            f"machine.poles = {spec.poles} the model sector can span "
            f"{', '.join(map(str, choices))} poles (multiples of the smallest symmetric sector "
            "that divide the machine)"]


def geometry_problems(spec: MachineSpec) -> list[str]:
    """Every geometric problem of a machine, as messages naming key, value and limit."""

    problems = _stator_problems(spec) + _barrier_problems(spec) + _sector_problems(spec)
    sectors, _, _ = machine_symmetry(spec.stator.slots, spec.poles)
    if sectors < 2:
        problems.append(
            f"machine.poles = {spec.poles} with stator.slots = {spec.stator.slots}: the "
            "machine has no rotational symmetry; fluxlab models sectors of at most half the "
            "machine"
        )
    return problems

