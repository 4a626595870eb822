"""A small declarative schema for the machine file: keys, types, units and limits.

Each section of a machine file is a table of :class:`Key` entries. Reading a section
converts file units (mm, deg) to SI and collects every problem found instead of stopping at
the first, so a designer sees all mistakes of a file at once.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = [
    "Key",
    "read_section",
    "MM",
    "DEG",
    "MACHINE_KEYS",
    "STATOR_KEYS",
    "WINDING_KEYS",
    "ROTOR_KEYS",
    "BARRIER_KEYS",
    "MESH_KEYS",
    "OPERATING_KEYS",
    "DRIVE_KEYS",
    "MATERIAL_REGIONS",
    "SECTIONS",
    "SKEW_KEYS",
    "MAX_BARRIERS",
    "LENGTH_FLOOR_MM",
    "MAX_ELEMENTS_DEFAULT",
]

MM = 1e-3  # m per mm
DEG = math.pi / 180.0  # rad per degree

_MISSING = object()


@dataclass(frozen=True)
class Key:
    """One key of a machine-file section.

    Parameters
    ----------
    name
        Key as written in the file, unit in the name (``bore_diameter_mm``).
    kind
        ``int``, ``float``, ``str`` or ``bool``; an int is accepted where a float is asked.
    default
        Value used when the key is absent; no default means the key is required.
    scale
        Factor from file unit to SI (``MM`` for millimetres, ``DEG`` for degrees).
    low, high
        Inclusive limits in file units; ``low_open`` makes the lower limit exclusive.
    choices
        Allowed values of a string key.
    """

    name: str
    kind: type
    default: Any = _MISSING
    scale: float = 1.0
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    choices: tuple[str, ...] = ()

    @property
    def attr(self) -> str:
        """Attribute name in the SI spec: the file name without a unit suffix that the
        conversion to SI changes (mm -> m, deg -> rad); other units stay in the name."""
        for suffix in ("_mm", "_deg"):
            if self.name.endswith(suffix):
                return self.name[: -len(suffix)]
        return self.name


def _plain(value: Any) -> Any:
    """A numpy scalar (from a sweep plan built with numpy) as the Python value it holds."""
    return value.item() if isinstance(value, np.generic) else value


def _type_ok(value: Any, kind: type) -> bool:
    if isinstance(value, bool):
        return kind is bool
    if kind is float:
        return isinstance(value, (int, float))  # finiteness: _number_problem
    return isinstance(value, kind)


#: Smallest non-zero length a machine file may give, mm: 1 um. Laminations are cut to
#: hundredths of a millimetre, so a shorter length is a typing or unit error (common
#: practice, no source); it also keeps every length far above float underflow.
LENGTH_FLOOR_MM = 1e-3


def _finite_problem(path: str, value: float) -> str | None:
    """NaN, infinity or an int beyond the float range (a table built in code)."""
    try:
        number = float(value)
    except OverflowError:
        digits = str(value)
        return (f"{path} = {digits[:8]}... ({len(digits)} digits): must be a finite number, "
                f"got an integer beyond {sys.float_info.max:.3g}")
    if not math.isfinite(number):
        return f"{path} = {value!r}: must be a finite number, got {number!r}"
    return None


def _scale_problem(path: str, key: Key, value: float) -> str | None:
    """A non-zero value that vanishes in SI units, or a length below the floor."""
    si = float(value) * key.scale
    zero = "0 or " if key.low == 0 and not key.low_open else ""
    if key.scale == MM:
        unit, least = "mm", LENGTH_FLOOR_MM
    else:
        unit = key.name.rsplit("_", 1)[-1]
        unit = unit if unit in ("deg", "A", "V", "rpm", "C") else ""
        least = sys.float_info.min / key.scale
    if value != 0 and abs(si) < sys.float_info.min:
        # zero or subnormal after the unit conversion: it would silently change class
        # (a post of 5e-324 mm becomes 0 m, "no post")
        return (f"{path} = {value!r}: vanishes when converted to SI units ({value!r} x "
                f"{key.scale:.6g} = {si!r}); must be {zero}at least {least:.3g} {unit}".rstrip())
    if key.scale == MM and value != 0 and abs(value) < LENGTH_FLOOR_MM:
        return f"{path} = {value!r}: must be {zero}at least {LENGTH_FLOOR_MM} mm (1 um)"
    return None


def _limit_problem(path: str, key: Key, value: float) -> str | None:
    if key.low is not None:
        if key.low_open and not value > key.low:
            return f"{path} = {value!r}: must be greater than {key.low}"
        if not key.low_open and value < key.low:
            return f"{path} = {value!r}: must be at least {key.low}"
    if key.high is not None and value > key.high:
        return f"{path} = {value!r}: must be at most {key.high}"
    return None


def read_section(
    data: Any, section: str, keys: tuple[Key, ...], problems: list[str]
) -> dict[str, Any]:
    """Validate one section and return its values in SI units, keyed by ``Key.attr``.

    Problems are appended to ``problems``; a key with a problem is left out of the result.

    Parameters
    ----------
    data
        The section as parsed from TOML (should be a table).
    section
        Dotted path of the section, used in messages (``"rotor.barriers[2]"``).
    keys
        The schema of the section.
    problems
        List that collects one message per problem.
    """
    if not isinstance(data, Mapping):
        problems.append(f"{section}: must be a table, got {type(data).__name__} {data!r}")
        return {}
    known = {k.name for k in keys}
    for name in data:
        if name not in known:
            problems.append(
                f"{section}.{name}: unknown key (known keys: {', '.join(sorted(known))})"
            )
    out: dict[str, Any] = {}
    for key in keys:
        path = f"{section}.{key.name}"
        value = _plain(data.get(key.name))
        if value is None:  # absent (TOML has no null; None comes from dicts built in code)
            value = key.default
        if value is _MISSING:
            problems.append(f"{path}: required key is missing")
            continue
        if value is None:
            out[key.attr] = None
            continue
        if not _type_ok(value, key.kind):
            problems.append(
                f"{path} = {value!r}: must be {key.kind.__name__}, got {type(value).__name__}"
            )
            continue
        if key.choices and value not in key.choices:
            problems.append(f"{path} = {value!r}: must be one of {', '.join(key.choices)}")
            continue
        if key.kind in (int, float):
            if key.kind is float:
                problem = (_finite_problem(path, value) or _limit_problem(path, key, value)
                           or _scale_problem(path, key, value))
            else:
                problem = _limit_problem(path, key, value)
            if problem:
                problems.append(problem)
                continue
            value = float(value) * key.scale if key.kind is float else value
        out[key.attr] = value
    return out


# --- the machine file: one table of keys per section ---------------------------------

MACHINE_KEYS = (
    Key("name", str, default="unnamed machine"),
    Key("poles", int, low=2, high=64),
    Key("stack_length_mm", float, scale=MM, low=0, low_open=True, high=5000),
)
STATOR_KEYS = (
    Key("slots", int, low=6, high=480),
    # 20 m: about the largest stator cross-sections built (large hydro generators); common
    # practice, no source. Every other length is bounded by this one (machine_file.py).
    Key("outer_diameter_mm", float, scale=MM, low=0, low_open=True, high=20000),
    Key("bore_diameter_mm", float, scale=MM, low=0, low_open=True),
    Key("airgap_mm", float, scale=MM, low=0, low_open=True),  # plausible range: machine_file
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
    # 10000: far above the few hundred turns of a low-voltage machine's coil (common
    # practice, no source)
    Key("turns_per_coil", int, low=1, high=10_000),
    Key("parallel_paths", int, default=1, low=1),
    Key("fill_factor", float, default=0.45, low=0, low_open=True, high=0.8),
    # the end-winding leakage inductance of a phase, replacing the estimate of
    # fluxlab.machine.end_winding; 0 leaves it out
    Key("end_leakage_mH", float, default=None, low=0, high=1e6),
)
ROTOR_KEYS = (
    Key("shaft_diameter_mm", float, scale=MM, low=0, low_open=True),
    Key("barrier_shape", str, default="arc", choices=("arc", "u")),
    Key("tangential_rib_mm", float, scale=MM, low=0, low_open=True),
    Key("min_rib_mm", float, default=0.3, scale=MM, low=0, low_open=True),
    Key("min_steel_mm", float, default=1.5, scale=MM, low=0, low_open=True),
    # n_r: barrier ends at the rotor slot pitch, instead of every end_angle_deg
    # (fluxlab.geometry.barrier_ends); at most stator.slots' limit, as n_r is compared
    # with the stator's slots per pole pair
    Key("rotor_slots_per_pole_pair", int, default=None, low=1, high=480),
    # corner radius where a barrier meets its rib and post (fluxlab.geometry.fillets); 0.5 mm
    # is a usual punching-die corner for 0.35-0.65 mm sheet (common practice, no source)
    Key("rib_fillet_mm", float, default=0.5, scale=MM, low=0, high=20),
)
BARRIER_KEYS = (
    Key("depth_mm", float, scale=MM, low=0, low_open=True),
    Key("end_angle_deg", float, scale=DEG, low=0, low_open=True, high=90),
    Key("width_mm", float, scale=MM, low=0, low_open=True),
    Key("post_mm", float, default=0.0, scale=MM, low=0),
)
#: Default of ``mesh.max_elements``: estimated triangles of a sector. Measured on this
#: project's 2-core machine (gmsh 4, demo machine with finer sizes): 2-4 s per 100k
#: triangles up to 200k, 6.3 s per 100k at 450k (28 s, 370 MB), 9 s per 100k for a mesh
#: graded from 50 mm to a 0.035 mm gap element (222k, other jobs running); the estimate
#: runs 1-1.4 times gmsh's count. 500k estimated triangles mesh in 20-45 s, before any
#: solve.
MAX_ELEMENTS_DEFAULT = 500_000
#: Highest ``mesh.max_elements`` a file may set: 20M triangles need several GB in gmsh
#: alone (extrapolated from 370 MB at 450k) and hours to mesh; common practice, no source.
MAX_ELEMENTS_HIGH = 20_000_000

MESH_KEYS = (
    Key("size_mm", float, default=4.0, scale=MM, low=0.05, high=50),
    Key("rib_size_mm", float, default=None, scale=MM, low=0.01, high=20),
    Key("airgap_layers", int, default=2, low=1, high=8),
    Key("steps_per_slot", int, default=24, low=4, high=400),
    Key("element_order", int, default=1, low=1, high=2),
    Key("averaging_positions", int, default=None, low=1, high=72),
    # the estimate of fluxlab.mesh.machine_mesh.estimated_elements a sector may reach
    Key("max_elements", int, default=MAX_ELEMENTS_DEFAULT, low=1000, high=MAX_ELEMENTS_HIGH),
    # poles in the modelled sector; checked against the symmetry in fluxlab.spec.machine_file
    Key("sector_poles", int, default=None, low=1, high=64),
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
    # friction and windage at the top speed, scaled by (n / n_max)^2 below it
    # (fluxlab.envelope.efficiency); 0 leaves them out
    Key("mechanical_loss_at_max_speed_W", float, default=0.0, low=0, high=1e9),
    # the rotor stress is also checked here when given (an overspeed test speed, for example)
    Key("overspeed_rpm", float, default=None, low=0, low_open=True, high=500000),
)
MATERIAL_REGIONS = ("stator", "rotor", "shaft")
#: ``[skew]`` (optional): the rotor's skew over the stack, modelled by slices.
SKEW_KEYS = (
    Key("angle_deg", float, scale=DEG, low=0, low_open=True, high=180),
    Key("slices", int, low=2, high=64),
)
SECTIONS = ("machine", "stator", "winding", "rotor", "materials", "mesh", "operating", "drive",
            "skew")
MAX_BARRIERS = 5
