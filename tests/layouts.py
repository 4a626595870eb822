"""Five invented slot/pole layouts on coarse meshes, for the position-averaging checks.

Every layout keeps the demo machine's frame (diameters, stack, steel, 25 A rated) and
changes the slots, poles, winding pitch and barriers: 4 poles / 36 slots (q = 3, the demo),
2 / 24 (q = 4), 4 / 48 (q = 4), 8 / 48 (q = 2) and the fractional-slot 4 / 30 (q = 5/2).
The mesh is coarse (a single element layer each side of the sliding circle) to keep the
checks fast; the averaging question does not depend on the mesh.
"""

from __future__ import annotations

from paths import GEOMETRIES, demo_table

from fluxlab.spec.machine_file import machine_from_dict

#: name -> (poles, slots, coil pitch in slots, tooth width mm, slot opening mm, barriers or
#: None for the demo's, steps per slot: the ripple count, which is also the dense reference)
LAYOUTS = {
    "4p36s": (4, 36, 8, 6.2, 2.8, None, 16),
    "2p24s": (2, 24, 10, 9.0, 3.0, [
        {"depth_mm": 10.0, "end_angle_deg": 22.0, "width_mm": 4.0},
        {"depth_mm": 20.0, "end_angle_deg": 38.0, "width_mm": 5.0, "post_mm": 1.0}], 12),
    "4p48s": (4, 48, 10, 4.6, 2.2, None, 12),
    "8p48s": (8, 48, 5, 4.6, 2.2, [
        {"depth_mm": 5.0, "end_angle_deg": 7.0, "width_mm": 2.0},
        {"depth_mm": 10.0, "end_angle_deg": 13.0, "width_mm": 2.5, "post_mm": 1.0}], 24),
    "4p30s": (4, 30, 7, 7.4, 2.8, None, 16),
}


def layout_table(name: str) -> dict:
    """The machine table (file units) of one layout."""
    poles, slots, pitch, tooth, opening, barriers, per_slot = LAYOUTS[name]
    table = demo_table()
    table.pop("drive", None)
    table["machine"].update(name=f"layout {name}", poles=poles)
    table["stator"].update(slots=slots, tooth_width_mm=tooth, slot_opening_mm=opening)
    table["winding"]["coil_pitch_slots"] = pitch
    if barriers is not None:
        table["rotor"]["barriers"] = barriers
    table["mesh"].update(size_mm=6.0, airgap_layers=1, steps_per_slot=per_slot)
    return table


def layout_spec(name: str):
    """The validated spec of one layout."""
    return machine_from_dict(layout_table(name), GEOMETRIES)
