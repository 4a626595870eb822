"""The machine file: schema, loading and validation into an immutable spec in SI units.

A machine file is TOML with the sections ``machine``, ``stator``, ``winding``, ``rotor``
(with an array of ``rotor.barriers`` tables), ``materials``, ``mesh``, ``operating`` and the
optional ``drive`` (inverter limits and operating-envelope settings).
Lengths are in mm and angles in degrees, the unit in each key name; the spec holds metres
and radians. Every problem found in a file is reported together in one :class:`SpecError`.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

from fluxlab.errors import MaterialError, SpecError, WindingError
from fluxlab.geometry import geometry_problems
from fluxlab.geometry.barrier_ends import (
    SLOTS_KEY,
    mixing_problems,
    resolve_end_angles,
    tag_end_angle_problems,
)
from fluxlab.machine.winding import check_parallel_paths, winding_layout
from fluxlab.materials.files import resolve_material
from fluxlab.mesh.machine_mesh import mesh_size_problems
from fluxlab.spec.keypath import set_path
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
    SKEW_KEYS,
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
    SkewSpec,
    StatorSpec,
    WindingSpec,
)

__all__ = [
    "load_machine",
    "machine_from_dict",
    "replace_path",
    "without_skew",
]

_END_KEYS = tuple(k for k in BARRIER_KEYS if k.name != "end_angle_deg")


def _read_barriers(data: Any, problems: list[str], n_r: Any = None
                   ) -> tuple[BarrierSpec, ...]:
    """The barriers; ``n_r``: rotor.rotor_slots_per_pole_pair as written, when given no
    barrier may give end_angle_deg (its end angle is nan here, set by resolve_end_angles)."""
    by_pitch = n_r is not None
    if data is None:
        return ()  # a round rotor: no barriers
    if not isinstance(data, list) or not data:
        problems.append(f"rotor.barriers = {data!r}: must be an array of 1 to {MAX_BARRIERS} "
                        "tables (leave it out for a round rotor)")
        return ()
    if len(data) > MAX_BARRIERS:
        problems.append(f"rotor.barriers: {len(data)} barriers, at most {MAX_BARRIERS} allowed")
    barriers, keys = [], _END_KEYS if by_pitch else BARRIER_KEYS
    problems.extend(mixing_problems(data, n_r) if by_pitch else [])
    for i, item in enumerate(data):
        if by_pitch and isinstance(item, dict):
            item = {k: v for k, v in item.items() if k != "end_angle_deg"}
        values = read_section(item, f"rotor.barriers[{i}]", keys, problems)
        missing = f"rotor.barriers[{i}].end_angle_deg: required key is missing"
        if missing in problems:
            problems[problems.index(missing)] += f" (or give {SLOTS_KEY} instead of every one)"
        if len(values) == len(keys):
            barriers.append(BarrierSpec(values["depth"], values.get("end_angle", math.nan),
                                        values["width"], values["post"]))
    return tuple(barriers) if len(barriers) == len(data) else ()


def _read_materials(data: Any, base_dir: Path, problems: list[str]) -> dict:
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


#: Smallest air gap, mm: below the running clearance any rotor keeps (small motors use
#: 0.2 mm and more); common practice, no source.
AIRGAP_MIN_MM = 0.05
#: Largest air gap per bore diameter: radial-flux machines have gaps of a few per cent of
#: the bore at most; 10 % leaves a wide margin (common practice, no source).
AIRGAP_MAX_PER_BORE = 0.1
#: Longest stack per outer diameter: long two-pole machines reach about 5 (common
#: practice, no source).
STACK_MAX_PER_OUTER = 10.0
#: Longest coil end per outer diameter: a full-pitch coil of a two-pole winding spans half
#: the bore circumference, pi/2 bore diameters (geometry); 2 leaves a margin.
END_WINDING_MAX_PER_OUTER = 2.0

_STATOR_LENGTHS = ("bore_diameter", "airgap", "slot_opening", "tip_height", "tooth_width",
                   "slot_width", "slot_depth", "bottom_fillet")
_ROTOR_LENGTHS = ("shaft_diameter", "tangential_rib", "min_rib", "min_steel")
_BARRIER_LENGTHS = (("depth", "depth_mm"), ("width", "width_mm"), ("post_width", "post_mm"))


def _plausibility(spec: MachineSpec) -> list[str]:
    """Every length against the machine's size, before any check that computes with them.

    Each length of the cross-section lies inside the stator's outer circle, each rotor
    length inside the bore (geometry); the air gap and the axial lengths are bounded by the
    constants above. A failed bound names every key that enters it.
    """
    st, rotor = spec.stator, spec.rotor
    outer, bore = _mm(st.outer_diameter), _mm(st.bore_diameter)
    problems = []
    for name in _STATOR_LENGTHS:
        value = getattr(st, name)
        if value is not None and value >= st.outer_diameter:
            problems.append(
                f"stator.{name}_mm = {_mm(value)}: must be less than "
                f"stator.outer_diameter_mm = {outer} (the cross-section lies inside the "
                "stator's outer circle)"
            )
    if problems:  # the bore is the reference of the checks below
        return problems
    rotor_lengths = [(f"rotor.{n}_mm", getattr(rotor, n)) for n in _ROTOR_LENGTHS]
    rotor_lengths += [(f"rotor.barriers[{i}].{key}", getattr(b, attr))
                      for i, b in enumerate(rotor.barriers) for attr, key in _BARRIER_LENGTHS]
    for path, value in rotor_lengths:
        if value >= st.bore_diameter:
            problems.append(
                f"{path} = {_mm(value)}: must be less than stator.bore_diameter_mm = {bore} "
                "(the rotor lies inside the bore)"
            )
    gap = _mm(st.airgap)
    if gap < AIRGAP_MIN_MM:
        problems.append(f"stator.airgap_mm = {gap}: must be at least {AIRGAP_MIN_MM} mm "
                        "(smallest running clearance, common practice)")
    if st.airgap > AIRGAP_MAX_PER_BORE * st.bore_diameter:
        problems.append(
            f"stator.airgap_mm = {gap}: must be at most {AIRGAP_MAX_PER_BORE:g} x "
            f"stator.bore_diameter_mm = {bore}, that is "
            f"{_mm(AIRGAP_MAX_PER_BORE * st.bore_diameter)} mm (common practice)"
        )
    if spec.stack_length > STACK_MAX_PER_OUTER * st.outer_diameter:
        problems.append(
            f"machine.stack_length_mm = {_mm(spec.stack_length)}: must be at most "
            f"{STACK_MAX_PER_OUTER:g} x stator.outer_diameter_mm = {outer}, that is "
            f"{_mm(STACK_MAX_PER_OUTER * st.outer_diameter)} mm (common practice)"
        )
    end = spec.drive.end_winding_length
    if end is not None and end > END_WINDING_MAX_PER_OUTER * st.outer_diameter:
        problems.append(
            f"drive.end_winding_length_mm = {_mm(end)}: must be at most "
            f"{END_WINDING_MAX_PER_OUTER:g} x stator.outer_diameter_mm = {outer}, that is "
            f"{_mm(END_WINDING_MAX_PER_OUTER * st.outer_diameter)} mm"
        )
    return problems


def _cross_checks(spec: MachineSpec, problems: list[str], lengths: bool = True) -> None:
    """Checks that relate several keys; geometry overlaps are checked in fluxlab.geometry.

    ``lengths`` False leaves out the checks between lengths (after a failed plausibility
    check, where they would blame a key that is not the wrong one).
    """
    st = spec.stator
    if (st.tooth_width is None) == (st.slot_width is None):
        problems.append(
            "stator: give exactly one of tooth_width_mm and slot_width_mm "
            f"(got tooth_width_mm={_mm(st.tooth_width)}, slot_width_mm={_mm(st.slot_width)})"
        )
    if spec.poles % 2:
        problems.append(f"machine.poles = {spec.poles}: must be even")
    _operating_checks(spec, problems)
    if lengths:
        _length_checks(spec, problems)


def _length_checks(spec: MachineSpec, problems: list[str]) -> None:
    # every length is already below its reference (_plausibility): the bore below the
    # outer diameter, each rotor length below the bore
    st = spec.stator
    yoke = (st.outer_diameter - st.bore_diameter) / 2 - st.slot_depth
    if yoke <= spec.rotor.min_steel:
        problems.append(
            f"stator.slot_depth_mm = {_mm(st.slot_depth)}: leaves a yoke of {_mm(yoke)} mm, "
            f"not more than rotor.min_steel_mm = {_mm(spec.rotor.min_steel)}; the slot must be "
            f"less deep than (stator.outer_diameter_mm {_mm(st.outer_diameter)} - "
            f"stator.bore_diameter_mm {_mm(st.bore_diameter)}) / 2 - rotor.min_steel_mm = "
            f"{_mm((st.outer_diameter - st.bore_diameter) / 2 - spec.rotor.min_steel)} mm"
        )
    if st.tip_height >= st.slot_depth:
        problems.append(
            f"stator.tip_height_mm = {_mm(st.tip_height)}: must be less than "
            f"stator.slot_depth_mm = {_mm(st.slot_depth)}"
        )
    if spec.rotor.shaft_diameter / 2 >= spec.rotor_radius:
        problems.append(
            f"rotor.shaft_diameter_mm = {_mm(spec.rotor.shaft_diameter)}: must be less than "
            f"the rotor diameter {_mm(2 * spec.rotor_radius)} mm = stator.bore_diameter_mm "
            f"{_mm(st.bore_diameter)} - 2 x stator.airgap_mm {_mm(st.airgap)}"
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


def _operating_checks(spec: MachineSpec, problems: list[str]) -> None:
    op = spec.operating
    if op.overload_current_peak_A is not None and op.overload_current_peak_A <= op.current_peak_A:
        problems.append(
            f"operating.overload_current_peak_A = {op.overload_current_peak_A}: must exceed "
            f"operating.current_peak_A = {op.current_peak_A}"
        )
    dr = spec.drive
    limit, source = next((value, key) for value, key in (
        (dr.current_limit_peak_A, "drive.current_limit_peak_A"),
        (op.overload_current_peak_A, "operating.overload_current_peak_A"),
        (op.current_peak_A, "operating.current_peak_A")) if value)
    if dr.flux_map_max_current_peak_A is not None and dr.flux_map_max_current_peak_A < limit:
        problems.append(
            f"drive.flux_map_max_current_peak_A = {dr.flux_map_max_current_peak_A}: must be at "
            f"least the current limit {source} = {limit} (the maps must cover the current "
            "circle)"
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
    barrier_data = rotor_raw.get("barriers") if isinstance(rotor_raw, dict) else None
    n_r = rotor_raw.get("rotor_slots_per_pole_pair") if isinstance(rotor_raw, dict) else None
    barriers = resolve_end_angles(
        _read_barriers(barrier_data, problems, n_r), barrier_data,
        rotor_values.get("rotor_slots_per_pole_pair"), sections["machine"].get("poles"), problems)
    materials = _read_materials(raw.get("materials", {}), base_dir, problems)
    skew = (read_section(raw["skew"], "skew", SKEW_KEYS, problems)
            if raw.get("skew") is not None else None)
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
        skew=SkewSpec(**skew) if skew else None,
    )
    problems.extend(_plausibility(spec))
    _cross_checks(spec, problems, lengths=not problems)
    problems.extend(_winding_problems(spec))
    if not problems:
        problems.extend(tag_end_angle_problems(geometry_problems(spec), spec.poles,
                                               spec.rotor.rotor_slots_per_pole_pair))
    if not problems:
        problems.extend(mesh_size_problems(spec))
    if problems:
        raise SpecError(list(dict.fromkeys(problems)))  # one message per problem
    return spec


def _winding_problems(spec: MachineSpec) -> list[str]:
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

    raw = spec.raw
    set_path(raw, path, value)
    return machine_from_dict(raw, spec.base_dir)


def without_skew(spec: MachineSpec) -> MachineSpec:
    """The same machine with a straight rotor (``[skew]`` left out), re-validated."""
    raw = spec.raw
    raw.pop("skew", None)
    return machine_from_dict(raw, spec.base_dir)
