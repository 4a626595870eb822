"""The machine as data: frozen dataclasses in SI units, made by :mod:`fluxlab.spec.machine_file`.

Every layer reads these; none of them reads a file. Lengths in m, angles in rad, currents
in peak phase amperes (the file's units are in :mod:`fluxlab.spec.schema`).
"""

from __future__ import annotations

import json
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path

from fluxlab.materials.material import Material
from fluxlab.spec.schema import MATERIAL_REGIONS, MAX_ELEMENTS_DEFAULT

__all__ = [
    "BarrierSpec",
    "StatorSpec",
    "WindingSpec",
    "RotorSpec",
    "MeshSpec",
    "OperatingSpec",
    "DriveSpec",
    "SkewSpec",
    "RegionMaterials",
    "MachineSpec",
]


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
    """Distributed three-phase winding.

    ``end_leakage_mH``: the end-winding leakage inductance of a phase, mH, as the file gives
    it (None: estimated, see :mod:`fluxlab.machine.end_winding`).
    """

    layers: int
    coil_pitch_slots: int
    turns_per_coil: int
    parallel_paths: int
    fill_factor: float
    end_leakage_mH: float | None = None


@dataclass(frozen=True)
class RotorSpec:
    """Flux-barrier rotor, SI units; barriers ordered from the surface inwards.

    ``rotor_slots_per_pole_pair``: n_r when the file places the barrier ends at the rotor
    slot pitch (their ``end_angle`` resolved from it at load time), else None.
    ``rib_fillet``: corner radius, m, where a barrier meets its rib and post (0: sharp).
    """

    shaft_diameter: float
    barrier_shape: str
    tangential_rib: float
    min_rib: float
    min_steel: float
    barriers: tuple[BarrierSpec, ...]
    rotor_slots_per_pole_pair: int | None = None
    rib_fillet: float = 0.5e-3


@dataclass(frozen=True)
class MeshSpec:
    """Mesh controls, SI units. ``rib_size`` None means a third of the thinnest rib.

    ``averaging_positions``: rotor positions over one torque period averaged for every
    position-averaged figure (None: the rule of
    :func:`fluxlab.studies.averaging.default_positions`); the sliding circle is divided so
    that they are equally spaced. ``sector_poles``: poles in the modelled sector (None: the
    smallest sector the symmetry allows; see :func:`fluxlab.geometry.sector.model_sector`).
    """

    size: float
    rib_size: float | None
    airgap_layers: int
    steps_per_slot: int
    element_order: int
    averaging_positions: int | None = None
    max_elements: int = MAX_ELEMENTS_DEFAULT
    sector_poles: int | None = None


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
    averaging count, see :mod:`fluxlab.studies.averaging`); ``rib_safety_factor`` on the
    rotor steel's yield strength; ``mechanical_loss_at_max_speed_W``: friction and windage
    at ``max_speed_rpm``, W (see :mod:`fluxlab.envelope.efficiency`); ``overspeed_rpm``: a
    speed above the top speed at which the rotor stress is checked too (None: not checked).
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
    mechanical_loss_at_max_speed_W: float = 0.0
    overspeed_rpm: float | None = None


@dataclass(frozen=True)
class SkewSpec:
    """A skewed rotor (section ``skew``): ``angle``, rad mechanical over the stack, modelled
    by ``slices`` axial slices whose rotor positions are offset equally, spacing
    angle / slices, centred on zero (the midpoint rule of a continuous skew, and exactly a
    step skew of ``slices`` segments)."""

    angle: float
    slices: int


@dataclass(frozen=True)
class RegionMaterials(Mapping):
    """The material of each region kind, a read-only mapping (``materials["rotor"]``)."""

    stator: Material
    rotor: Material
    shaft: Material

    def __getitem__(self, region: str) -> Material:
        if region not in MATERIAL_REGIONS:
            raise KeyError(region)
        return getattr(self, region)

    def __iter__(self) -> Iterator[str]:
        return iter(MATERIAL_REGIONS)

    def __len__(self) -> int:
        return len(MATERIAL_REGIONS)


@dataclass(frozen=True)
class MachineSpec:
    """A validated machine, SI units; immutable and hashable (equal when every SI field is).

    ``raw`` gives the file's own table (mm, deg) as a fresh copy: editing it changes nothing
    here (:func:`fluxlab.spec.machine_file.replace_path` makes a changed, re-validated copy).
    """

    name: str
    poles: int
    stack_length: float
    stator: StatorSpec
    winding: WindingSpec
    rotor: RotorSpec
    materials: RegionMaterials
    mesh: MeshSpec
    operating: OperatingSpec
    raw_json: str = field(repr=False, compare=False)
    base_dir: Path = field(default=Path("."), repr=False, compare=False)
    drive: DriveSpec = field(default_factory=DriveSpec)
    skew: SkewSpec | None = None

    @property
    def raw(self) -> dict:
        """The machine table as written (file units), a new copy at every call."""
        return json.loads(self.raw_json)

    @property
    def pole_pairs(self) -> int:
        """p, the number of pole pairs."""
        return self.poles // 2

    @property
    def top_speed_rpm(self) -> float:
        """The drive's top speed, rpm: ``drive.max_speed_rpm``, else twice the rated speed."""
        return self.drive.max_speed_rpm or 2 * self.operating.speed_rpm

    @property
    def rotor_radius(self) -> float:
        """Rotor outer radius, m."""
        return self.stator.bore_diameter / 2 - self.stator.airgap
