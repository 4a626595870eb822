"""The machine file: schema, loading and validation into an immutable spec in SI units.

A machine file is TOML with the sections ``machine``, ``stator``, ``winding``, ``rotor``
(with an array of ``rotor.barriers`` tables), ``materials``, ``mesh``, ``operating`` and the
optional ``drive`` (inverter limits and operating-envelope settings).
Lengths are in mm and angles in degrees, the unit in each key name; the spec holds metres
and radians. Every problem found in a file is reported together in one :class:`SpecError`.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from fluxlab.errors import SpecError
from fluxlab.spec.schema import (
    BARRIER_KEYS,
    DRIVE_KEYS,
    MACHINE_KEYS,
    MATERIAL_REGIONS,
    MAX_BARRIERS,
    MESH_KEYS,
    MM,
    OPERATING_KEYS,
    ROTOR_KEYS,
    SECTIONS,
    STATOR_KEYS,
    WINDING_KEYS,
    read_section,
)
from fluxlab.spec.tomlfile import read_toml
from fluxlab.spec.types import (
    BarrierSpec,
    DriveSpec,
    MachineSpec,
    MeshSpec,
    OperatingSpec,
    RegionMaterials,
    RotorSpec,
    StatorSpec,
    WindingSpec,
)

__all__ = [
    "load_machine",
    "machine_from_dict",
    "replace_path",
]

def _read_barriers(data: Any, problems: list[str]) -> tuple[BarrierSpec, ...]:
    if data is None:
        return ()  # a round rotor: no barriers
    if not isinstance(data, list) or not data:
        problems.append(f"rotor.barriers = {data!r}: must be an array of 1 to {MAX_BARRIERS} "
                        "tables (leave it out for a round rotor)")
        return ()
    if len(data) > MAX_BARRIERS:
        problems.append(f"rotor.barriers: {len(data)} barriers, at most {MAX_BARRIERS} allowed")
    barriers = []
    for i, item in enumerate(data):
        values = read_section(item, f"rotor.barriers[{i}]", BARRIER_KEYS, problems)
        if len(values) == len(BARRIER_KEYS):
            barriers.append(
                BarrierSpec(values["depth"], values["end_angle"], values["width"], values["post"])
            )
    return tuple(barriers) if len(barriers) == len(data) else ()


def _read_materials(data: Any, base_dir: Path, problems: list[str]) -> dict:
    from fluxlab.errors import MaterialError
    from fluxlab.materials.files import resolve_material

    if not isinstance(data, dict):
        problems.append(f"materials: must be a table, got {data!r}")
        return {}
    for name in data:
        if name not in MATERIAL_REGIONS:
            problems.append(
                f"materials.{name}: unknown region (known: {', '.join(MATERIAL_REGIONS)})"
            )
    out = {}
    for region in MATERIAL_REGIONS:
        value = data.get(region, "air" if region == "shaft" else None)
        if value is None:
            problems.append(f"materials.{region}: required key is missing")
            continue
        try:
            out[region] = resolve_material(value, base_dir, f"materials.{region}")
        except MaterialError as err:
            problems.append(str(err))
    return out


def _cross_checks(spec: MachineSpec, problems: list[str]) -> None:
    """Checks that relate several keys; geometry overlaps are checked in fluxlab.geometry."""
    st = spec.stator
    if (st.tooth_width is None) == (st.slot_width is None):
        problems.append(
            "stator: give exactly one of tooth_width_mm and slot_width_mm "
            f"(got tooth_width_mm={_mm(st.tooth_width)}, slot_width_mm={_mm(st.slot_width)})"
        )
    if spec.poles % 2:
        problems.append(f"machine.poles = {spec.poles}: must be even")
    if st.bore_diameter >= st.outer_diameter:
        problems.append(
            f"stator.bore_diameter_mm = {_mm(st.bore_diameter)}: must be less than "
            f"stator.outer_diameter_mm = {_mm(st.outer_diameter)}"
        )
    yoke = (st.outer_diameter - st.bore_diameter) / 2 - st.slot_depth
    if yoke <= spec.rotor.min_steel:
        problems.append(
            f"stator.slot_depth_mm = {_mm(st.slot_depth)}: leaves a yoke of {_mm(yoke)} mm; "
            f"the slot must be less deep than {_mm((st.outer_diameter - st.bore_diameter) / 2)}"
            " mm minus the minimum steel"
        )
    if st.tip_height >= st.slot_depth:
        problems.append(
            f"stator.tip_height_mm = {_mm(st.tip_height)}: must be less than "
            f"stator.slot_depth_mm = {_mm(st.slot_depth)}"
        )
    if spec.rotor.shaft_diameter / 2 >= spec.rotor_radius:
        problems.append(
            f"rotor.shaft_diameter_mm = {_mm(spec.rotor.shaft_diameter)}: must be less than "
            f"the rotor diameter {_mm(2 * spec.rotor_radius)} mm"
        )
    if spec.rotor.tangential_rib < spec.rotor.min_rib:
        problems.append(
            f"rotor.tangential_rib_mm = {_mm(spec.rotor.tangential_rib)}: thinner than "
            f"rotor.min_rib_mm = {_mm(spec.rotor.min_rib)}"
        )
    for i, b in enumerate(spec.rotor.barriers):
        if 0 < b.post_width < spec.rotor.min_rib:
            problems.append(
                f"rotor.barriers[{i}].post_mm = {_mm(b.post_width)}: thinner than "
                f"rotor.min_rib_mm = {_mm(spec.rotor.min_rib)} (use 0 for no post)"
            )
    op = spec.operating
    if op.overload_current_peak_A is not None and op.overload_current_peak_A <= op.current_peak_A:
        problems.append(
            f"operating.overload_current_peak_A = {op.overload_current_peak_A}: must exceed "
            f"operating.current_peak_A = {op.current_peak_A}"
        )
    dr = spec.drive
    limit = dr.current_limit_peak_A or op.overload_current_peak_A or op.current_peak_A
    if dr.flux_map_max_current_peak_A is not None and dr.flux_map_max_current_peak_A < limit:
        problems.append(
            f"drive.flux_map_max_current_peak_A = {dr.flux_map_max_current_peak_A}: must be at "
            f"least the current limit {limit} A (the maps must cover the current circle)"
        )


def _plain(value: Any) -> Any:
    """JSON for what a table built in code may hold besides TOML's types (numpy scalars)."""
    if hasattr(value, "item"):
        return value.item()
    raise TypeError(f"machine table value {value!r}: not a number, string, table or array")


def _mm(value: float | None) -> float | None:
    return None if value is None else round(value / MM, 6)


def machine_from_dict(raw: dict, base_dir: Path | str = ".") -> MachineSpec:
    """Validate a machine table (as parsed from TOML) into a :class:`MachineSpec`.

    Raises
    ------
    SpecError
        With every problem found: unknown keys, wrong types, values out of range, dimensions
        that do not fit together, an impossible winding, overlapping or too thin geometry.
    """
    base_dir = Path(base_dir)
    problems: list[str] = []
    if not isinstance(raw, dict):
        raise SpecError(f"machine file: must be a table, got {type(raw).__name__}")
    for name in raw:
        if name not in SECTIONS:
            problems.append(f"{name}: unknown section (known: {', '.join(SECTIONS)})")
    sections = {}
    for name, keys in (
        ("machine", MACHINE_KEYS),
        ("stator", STATOR_KEYS),
        ("winding", WINDING_KEYS),
        ("mesh", MESH_KEYS),
        ("operating", OPERATING_KEYS),
        ("drive", DRIVE_KEYS),
    ):
        sections[name] = read_section(raw.get(name, {}), name, keys, problems)
    rotor_raw = raw.get("rotor", {})
    rotor_plain = (
        {k: v for k, v in rotor_raw.items() if k != "barriers"}
        if isinstance(rotor_raw, dict)
        else rotor_raw
    )
    rotor_values = read_section(rotor_plain, "rotor", ROTOR_KEYS, problems)
    barriers = _read_barriers(rotor_raw.get("barriers") if isinstance(rotor_raw, dict) else None,
                              problems)
    materials = _read_materials(raw.get("materials", {}), base_dir, problems)
    if problems:
        raise SpecError(problems)
    sections["mesh"]["rib_size"] = sections["mesh"].get("rib_size")
    spec = MachineSpec(
        name=sections["machine"]["name"],
        poles=sections["machine"]["poles"],
        stack_length=sections["machine"]["stack_length"],
        stator=StatorSpec(**sections["stator"]),
        winding=WindingSpec(**sections["winding"]),
        rotor=RotorSpec(**rotor_values, barriers=barriers),
        materials=RegionMaterials(**materials),
        mesh=MeshSpec(**sections["mesh"]),
        operating=OperatingSpec(**sections["operating"]),
        raw_json=json.dumps(raw, default=_plain),
        base_dir=base_dir,
        drive=DriveSpec(**sections["drive"]),
    )
    _cross_checks(spec, problems)
    problems.extend(_winding_problems(spec))
    if not problems:
        from fluxlab.geometry import geometry_problems

        problems.extend(geometry_problems(spec))
    if problems:
        raise SpecError(problems)
    return spec


def _winding_problems(spec: MachineSpec) -> list[str]:
    from fluxlab.errors import WindingError
    from fluxlab.machine.winding import check_parallel_paths, winding_layout

    try:
        layout = winding_layout(
            spec.stator.slots, spec.poles, spec.winding.layers, spec.winding.coil_pitch_slots
        )
        check_parallel_paths(layout, spec.winding.parallel_paths)
    except WindingError as err:
        return list(err.problems)
    return []


def load_machine(path: str | Path) -> MachineSpec:
    """Read and validate a machine file (TOML, mm and degrees) into a :class:`MachineSpec`."""
    path = Path(path)
    return machine_from_dict(read_toml(path, "machine file"), base_dir=path.parent)


def replace_path(spec: MachineSpec, path: str, value: Any) -> MachineSpec:
    """A copy of ``spec`` with the file-level key at ``path`` set to ``value``, re-validated.

    ``path`` uses the file's own names and units, for example
    ``"rotor.barriers[1].end_angle_deg"`` (see :mod:`fluxlab.spec.keypath`).
    """
    from fluxlab.spec.keypath import set_path

    raw = spec.raw
    set_path(raw, path, value)
    return machine_from_dict(raw, spec.base_dir)
