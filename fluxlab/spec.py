"""The machine file: schema, loading and validation into an immutable spec in SI units.

A machine file is TOML with the sections ``machine``, ``stator``, ``winding``, ``rotor``
(with an array of ``rotor.barriers`` tables), ``materials``, ``mesh``, ``operating`` and the
optional ``drive`` (inverter limits and operating-envelope settings).
Lengths are in mm and angles in degrees, the unit in each key name; the spec holds metres
and radians. Every problem found in a file is reported together in one :class:`SpecError`.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import SpecError
from .schema import DEG, MM, Key, read_section
from .tomlfile import read_toml

__all__ = [
    "BarrierSpec",
    "StatorSpec",
    "WindingSpec",
    "RotorSpec",
    "MeshSpec",
    "OperatingSpec",
    "DriveSpec",
    "MachineSpec",
    "load_machine",
    "machine_from_dict",
    "replace_path",
]

MACHINE_KEYS = (
    Key("name", str, default="unnamed machine"),
    Key("poles", int, low=2, high=64),
    Key("stack_length_mm", float, scale=MM, low=0, low_open=True, high=5000),
)
STATOR_KEYS = (
    Key("slots", int, low=6, high=480),
    Key("outer_diameter_mm", float, scale=MM, low=0, low_open=True),
    Key("bore_diameter_mm", float, scale=MM, low=0, low_open=True),
    Key("airgap_mm", float, scale=MM, low=0, low_open=True),
    Key("slot_opening_mm", float, scale=MM, low=0, low_open=True),
    Key("tip_height_mm", float, scale=MM, low=0, low_open=True),
    Key("tooth_width_mm", float, default=None, scale=MM, low=0, low_open=True),
    Key("slot_width_mm", float, default=None, scale=MM, low=0, low_open=True),
    Key("slot_depth_mm", float, scale=MM, low=0, low_open=True),
    Key("slot_bottom", str, default="round", choices=("round", "flat")),
    Key("bottom_fillet_mm", float, default=0.0, scale=MM, low=0),
)
WINDING_KEYS = (
    Key("layers", int, default=2, low=1, high=2),
    Key("coil_pitch_slots", int, low=1),
    Key("turns_per_coil", int, low=1),
    Key("parallel_paths", int, default=1, low=1),
    Key("fill_factor", float, default=0.45, low=0, low_open=True, high=0.8),
)
ROTOR_KEYS = (
    Key("shaft_diameter_mm", float, scale=MM, low=0, low_open=True),
    Key("barrier_shape", str, default="arc", choices=("arc", "u")),
    Key("tangential_rib_mm", float, scale=MM, low=0, low_open=True),
    Key("min_rib_mm", float, default=0.3, scale=MM, low=0, low_open=True),
    Key("min_steel_mm", float, default=1.5, scale=MM, low=0, low_open=True),
)
BARRIER_KEYS = (
    Key("depth_mm", float, scale=MM, low=0, low_open=True),
    Key("end_angle_deg", float, scale=DEG, low=0, low_open=True, high=90),
    Key("width_mm", float, scale=MM, low=0, low_open=True),
    Key("post_mm", float, default=0.0, scale=MM, low=0),
)
MESH_KEYS = (
    Key("size_mm", float, default=4.0, scale=MM, low=0.05, high=50),
    Key("rib_size_mm", float, default=None, scale=MM, low=0.01, high=20),
    Key("airgap_layers", int, default=2, low=1, high=8),
    Key("steps_per_slot", int, default=24, low=4, high=400),
    Key("element_order", int, default=1, low=1, high=2),
    Key("averaging_positions", int, default=None, low=1, high=72),
)
OPERATING_KEYS = (
    Key("current_peak_A", float, low=0, low_open=True),
    Key("current_angle_deg", float, default=None, scale=DEG, low=0, high=90),
    Key("overload_current_peak_A", float, default=None, low=0, low_open=True),
    Key("speed_rpm", float, default=1500.0, low=0, low_open=True),
)
DRIVE_KEYS = (
    Key("dc_link_voltage_V", float, default=565.0, low=0, low_open=True, high=100000),
    Key("modulation_limit", float, default=1.0, low=0, low_open=True, high=1.0),
    Key("max_speed_rpm", float, default=None, low=0, low_open=True, high=500000),
    Key("current_limit_peak_A", float, default=None, low=0, low_open=True),
    Key("copper_temperature_C", float, default=115.0, low=-60, high=250),
    Key("end_winding_length_mm", float, default=None, scale=MM, low=0, low_open=True),
    Key("flux_map_points", int, default=9, low=2, high=101),
    Key("flux_map_max_current_peak_A", float, default=None, low=0, low_open=True),
    Key("flux_map_positions", int, default=None, low=1, high=72),
    Key("rib_safety_factor", float, default=1.5, low=1.0, high=20),
)
MATERIAL_REGIONS = ("stator", "rotor", "shaft")
SECTIONS = ("machine", "stator", "winding", "rotor", "materials", "mesh", "operating", "drive")
MAX_BARRIERS = 5


@dataclass(frozen=True)
class BarrierSpec:
    """One flux barrier of a pole, SI units.

    ``depth``: where its centre line crosses the q-axis, m below the rotor surface.
    ``end_angle``: middle of its opening under the tangential rib, rad from the q-axis.
    ``width``: m, across the barrier. ``post_width``: radial rib on the q-axis, m (0: none).
    """

    depth: float
    end_angle: float
    width: float
    post_width: float


@dataclass(frozen=True)
class StatorSpec:
    """Slotted stator, SI units. Exactly one of ``tooth_width`` and ``slot_width`` is set."""

    slots: int
    outer_diameter: float
    bore_diameter: float
    airgap: float
    slot_opening: float
    tip_height: float
    tooth_width: float | None
    slot_width: float | None
    slot_depth: float
    slot_bottom: str
    bottom_fillet: float


@dataclass(frozen=True)
class WindingSpec:
    """Distributed three-phase winding."""

    layers: int
    coil_pitch_slots: int
    turns_per_coil: int
    parallel_paths: int
    fill_factor: float


@dataclass(frozen=True)
class RotorSpec:
    """Flux-barrier rotor, SI units; barriers ordered from the surface inwards."""

    shaft_diameter: float
    barrier_shape: str
    tangential_rib: float
    min_rib: float
    min_steel: float
    barriers: tuple[BarrierSpec, ...]


@dataclass(frozen=True)
class MeshSpec:
    """Mesh controls, SI units. ``rib_size`` None means a third of the thinnest rib.

    ``averaging_positions``: rotor positions over one torque period averaged for every
    position-averaged figure (None: the rule of :func:`fluxlab.averaging.default_positions`);
    the sliding circle is divided so that they are equally spaced.
    """

    size: float
    rib_size: float | None
    airgap_layers: int
    steps_per_slot: int
    element_order: int
    averaging_positions: int | None = None


@dataclass(frozen=True)
class OperatingSpec:
    """The rated operating point. Currents are peak phase amperes."""

    current_peak_A: float
    current_angle: float | None
    overload_current_peak_A: float | None
    speed_rpm: float


@dataclass(frozen=True)
class DriveSpec:
    """Inverter limits and operating-envelope settings (section ``drive``, optional).

    ``dc_link_voltage_V``, V; ``modulation_limit`` m in (0, 1]: peak phase voltage
    m V_dc / sqrt(3) (space-vector modulation); ``max_speed_rpm`` (None: twice the rated
    speed); ``current_limit_peak_A``, peak phase A (None: the overload current, else the
    rated); ``copper_temperature_C``; ``end_winding_length``, m per coil end (None: estimated);
    ``flux_map_points`` per axis, from 0 to ``flux_map_max_current_peak_A`` (None: the current
    limit), averaged over ``flux_map_positions`` rotor positions (None: the machine's
    averaging count, see :mod:`fluxlab.averaging`); ``rib_safety_factor`` on the
    rotor steel's yield strength.
    """

    dc_link_voltage_V: float = 565.0
    modulation_limit: float = 1.0
    max_speed_rpm: float | None = None
    current_limit_peak_A: float | None = None
    copper_temperature_C: float = 115.0
    end_winding_length: float | None = None
    flux_map_points: int = 9
    flux_map_max_current_peak_A: float | None = None
    flux_map_positions: int | None = None
    rib_safety_factor: float = 1.5


@dataclass(frozen=True)
class MachineSpec:
    """A validated machine, SI units. ``raw`` keeps the file's own table (mm, deg)."""

    name: str
    poles: int
    stack_length: float
    stator: StatorSpec
    winding: WindingSpec
    rotor: RotorSpec
    materials: dict
    mesh: MeshSpec
    operating: OperatingSpec
    raw: dict = field(repr=False, compare=False)
    base_dir: Path = field(default=Path("."), repr=False, compare=False)
    drive: DriveSpec = field(default_factory=DriveSpec)

    @property
    def pole_pairs(self) -> int:
        """p, the number of pole pairs."""
        return self.poles // 2

    @property
    def rotor_radius(self) -> float:
        """Rotor outer radius, m."""
        return self.stator.bore_diameter / 2 - self.stator.airgap

    def replace_path(self, path: str, value: Any) -> MachineSpec:
        """A copy with one file-level key changed, re-validated (see :func:`replace_path`)."""
        return replace_path(self, path, value)


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
    from .errors import MaterialError
    from .material_files import resolve_material

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
        materials=materials,
        mesh=MeshSpec(**sections["mesh"]),
        operating=OperatingSpec(
            current_peak_A=sections["operating"]["current_peak_A"],
            current_angle=sections["operating"]["current_angle"],
            overload_current_peak_A=sections["operating"]["overload_current_peak_A"],
            speed_rpm=sections["operating"]["speed"],
        ),
        raw=copy.deepcopy(raw),
        base_dir=base_dir,
        drive=DriveSpec(**{("max_speed_rpm" if k == "max_speed" else k): v
                           for k, v in sections["drive"].items()}),
    )
    _cross_checks(spec, problems)
    problems.extend(_winding_problems(spec))
    if not problems:
        from .geometry import geometry_problems

        problems.extend(geometry_problems(spec))
    if problems:
        raise SpecError(problems)
    return spec


def _winding_problems(spec: MachineSpec) -> list[str]:
    from .errors import WindingError
    from .winding import check_parallel_paths, winding_layout

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
    ``"rotor.barriers[1].end_angle_deg"`` (see :mod:`fluxlab.keypath`).
    """
    from .keypath import set_path

    raw = copy.deepcopy(spec.raw)
    set_path(raw, path, value)
    return machine_from_dict(raw, spec.base_dir)
