"""The sweep file: a base machine, the keys to vary, a sampling plan and the studies to run.

A sweep file is TOML::

    name = "barrier end angles"          # optional
    base = "demo_fan_drive.toml"         # machine file, relative to the sweep file
    studies = "point"                    # "point" (rated operating point) or "full"

    [plan]
    kind = "lhs"                         # "grid", "random" or "lhs" (Latin hypercube)
    samples = 20                         # random and lhs only
    seed = 1                             # random and lhs, default 0

    [fixed]                              # optional: keys set in every candidate
    "mesh.size_mm" = 6.0

    [[parameters]]
    path = "rotor.barriers[1].end_angle_deg"
    low = 20.0
    high = 28.0
    steps = 5                            # grid only
    [[parameters]]
    path = "rotor.barriers[0].width_mm"
    values = [2.5, 3.0, 3.5]

Values are in the machine file's own units (the unit is in the key name). A sweep file
names no code: what evaluates the candidates is chosen from Python only
(``run_sweep(..., evaluator=...)``, default the real evaluation).
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from fluxlab.errors import SpecError
from fluxlab.spec.keypath import get_path, key_kind, parse_path, set_path
from fluxlab.spec.machine_file import machine_from_dict
from fluxlab.spec.tomlfile import read_toml

__all__ = [
    "PLAN_KINDS",
    "STUDIES",
    "MAX_CANDIDATES",
    "is_number",
    "read_parameter",
    "read_parameters",
    "apply_fixed",
    "ParameterSpec",
    "PlanSpec",
    "SweepSpec",
    "load_sweep",
    "sweep_from_dict",
]

PLAN_KINDS = ("grid", "random", "lhs")
STUDIES = ("point", "full")
MAX_CANDIDATES = 1_000_000  # past this a grid is a typing mistake, not a sweep
_TOP_KEYS = ("name", "base", "studies", "plan", "fixed", "parameters")
_PLAN_KEYS = ("kind", "samples", "seed")
_PARAMETER_KEYS = ("path", "values", "low", "high", "steps")


@dataclass(frozen=True)
class ParameterSpec:
    """One varied key, file units.

    Either ``values`` (an explicit list) or the range ``low`` .. ``high``; a grid plan also
    gives ``steps`` (evenly spaced values, ends included). ``kind`` is ``int`` or ``float``,
    from the machine-file schema.
    """

    path: str
    kind: type
    values: tuple[float, ...] | None
    low: float | None
    high: float | None
    steps: int | None


@dataclass(frozen=True)
class PlanSpec:
    """How candidates are drawn: ``kind`` in :data:`PLAN_KINDS`, sample count and seed."""

    kind: str
    samples: int | None
    seed: int


@dataclass(frozen=True)
class SweepSpec:
    """A validated sweep.

    ``base_raw`` is the base machine table with the ``fixed`` keys applied (file units);
    ``base_dir`` is where the base machine's relative file references point.
    """

    name: str
    base_path: Path
    base_raw: dict
    base_dir: Path
    studies: str
    plan: PlanSpec
    parameters: tuple[ParameterSpec, ...]
    fixed: dict


def is_number(value: Any) -> bool:
    """Whether ``value`` is a finite int or float (not a bool)."""
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _numeric_kind(raw: dict, path: str) -> type | None:
    kind = key_kind(path)
    if kind is None:  # not a schema key (a material table entry, say): go by the base value
        value = get_path(raw, path)
        kind = type(value) if is_number(value) else (None if value is None else str)
    return kind


def _read_plan(data: Any, problems: list[str]) -> PlanSpec:
    if not isinstance(data, dict):
        problems.append(f"plan = {data!r}: must be a table with kind = one of "
                        + ", ".join(PLAN_KINDS))
        return PlanSpec("grid", None, 0)
    for name in data:
        if name not in _PLAN_KEYS:
            problems.append(f"plan.{name}: unknown key (known keys: {', '.join(_PLAN_KEYS)})")
    kind = data.get("kind", "grid")
    if kind not in PLAN_KINDS:
        problems.append(f"plan.kind = {kind!r}: unknown plan kind (known: {', '.join(PLAN_KINDS)})")
        kind = "grid"
    samples = data.get("samples")
    if kind == "grid" and samples is not None:
        problems.append(f"plan.samples = {samples!r}: a grid plan takes every combination; "
                        "samples is for random and lhs plans")
        samples = None
    elif kind != "grid":
        if samples is None:
            problems.append(f"plan.samples: required for a {kind} plan")
        elif not isinstance(samples, int) or isinstance(samples, bool) or not (
            1 <= samples <= MAX_CANDIDATES
        ):
            problems.append(f"plan.samples = {samples!r}: must be an integer from 1 to "
                            f"{MAX_CANDIDATES}")
            samples = None
    seed = data.get("seed", 0)
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        problems.append(f"plan.seed = {seed!r}: must be an integer of at least 0")
        seed = 0
    return PlanSpec(kind, samples, seed)


def _read_values(where: str, values: Any, kind: type, problems: list[str]) -> tuple | None:
    if not isinstance(values, list) or not values:
        problems.append(f"{where}.values = {values!r}: must be a non-empty list of numbers")
        return None
    bad = [v for v in values if not is_number(v)]
    if bad:
        problems.append(f"{where}.values: {bad[0]!r} is not a number")
        return None
    if kind is int and any(float(v) != int(v) for v in values):
        problems.append(f"{where}.values = {values!r}: the key takes whole numbers")
        return None
    return tuple(int(v) if kind is int else float(v) for v in values)


def _read_range(where: str, item: dict, kind: type, plan: PlanSpec, problems: list[str]):
    low, high, steps = item.get("low"), item.get("high"), item.get("steps")
    ok = True
    for name, value in (("low", low), ("high", high)):
        if not is_number(value):
            problems.append(f"{where}.{name} = {value!r}: must be a number (or give values = "
                            "[...] instead of a range)")
            ok = False
    if ok and not low < high:
        problems.append(f"{where}: low = {low!r} must be less than high = {high!r}")
        ok = False
    if plan.kind == "grid":
        if not isinstance(steps, int) or isinstance(steps, bool) or steps < 2:
            problems.append(f"{where}.steps = {steps!r}: a grid range needs an integer "
                            "number of steps of at least 2 (ends included)")
            ok = False
    elif steps is not None:
        problems.append(f"{where}.steps = {steps!r}: only for grid plans (a {plan.kind} plan "
                        "draws from the whole range)")
        ok = False
    if ok and kind is int and math.ceil(low) > math.floor(high):
        problems.append(f"{where}: no whole number between low = {low!r} and high = {high!r}")
        ok = False
    return (float(low), float(high), steps) if ok else None


def read_parameter(i: int, item: Any, raw: dict, plan: PlanSpec,
                   problems: list[str]) -> ParameterSpec | None:
    """The ``parameters[i]`` table checked against the machine table ``raw`` (a numeric key,
    values or a range fitting ``plan``); problems are appended, None when it is unusable.
    Also read by optimisation files."""
    where = f"parameters[{i}]"
    if not isinstance(item, dict):
        problems.append(f"{where} = {item!r}: must be a table with path and values or a range")
        return None
    for name in item:
        if name not in _PARAMETER_KEYS:
            problems.append(f"{where}.{name}: unknown key (known keys: "
                            f"{', '.join(_PARAMETER_KEYS)})")
    path = item.get("path")
    try:
        parse_path(path)
        get_path(raw, path)
    except SpecError as err:
        problems.append(f"{where}.{err.problems[0]}")
        return None
    kind = _numeric_kind(raw, path)
    if kind is None:
        problems.append(f"{where}.path = {path!r}: no such key in the machine file")
        return None
    if kind not in (int, float):
        problems.append(f"{where}.path = {path!r}: not a numeric key (its value "
                        f"{get_path(raw, path)!r} is {kind.__name__}); only numbers can be varied")
        return None
    has_values = "values" in item
    has_range = any(k in item for k in ("low", "high", "steps"))
    if has_values == has_range:
        problems.append(f"{where} ({path}): give either values = [...] or low, high"
                        + (" and steps" if plan.kind == "grid" else ""))
        return None
    if has_values:
        values = _read_values(where, item["values"], kind, problems)
        return None if values is None else ParameterSpec(path, kind, values, None, None, None)
    rng = _read_range(where, item, kind, plan, problems)
    return None if rng is None else ParameterSpec(path, kind, None, *rng)


def read_parameters(items: Any, raw: dict, plan: PlanSpec, fixed: dict,
                    problems: list[str]) -> list[ParameterSpec | None]:
    """The ``[[parameters]]`` array (see :func:`read_parameter`), each key varied once and
    none of them also ``fixed``; problems are appended."""
    if not isinstance(items, list) or not items:
        problems.append("parameters: required, an array of [[parameters]] tables")
        items = []
    parameters = [read_parameter(i, item, raw, plan, problems) for i, item in enumerate(items)]
    paths = [p.path for p in parameters if p is not None]
    for path in sorted({p for p in paths if paths.count(p) > 1}):
        problems.append(f"parameters: {path} is varied more than once")
    for path in fixed:
        if path in paths:
            problems.append(f"fixed.{path}: also varied under [[parameters]]")
    return parameters


def apply_fixed(data: Any, raw: dict, problems: list[str], where: str = "fixed") -> dict:
    """Set each ``"key.path" = value`` of the table ``data`` in ``raw``; problems are
    appended, named under ``where``. Returns the table."""
    if not isinstance(data, dict):
        problems.append(f"{where} = {data!r}: must be a table of \"key.path\" = value")
        return {}
    for path, value in data.items():
        try:
            set_path(raw, path, value)
        except SpecError as err:
            problems.append(f"{where}.{err.problems[0]}")
    return dict(data)


def _grid_size(parameters: tuple[ParameterSpec, ...]) -> int:
    return math.prod(len(p.values) if p.values is not None else p.steps for p in parameters)


def sweep_from_dict(data: dict, base_dir: Path | str = ".") -> SweepSpec:
    """Validate a parsed sweep table; ``base_dir`` is where ``base`` is looked up.

    Raises
    ------
    SpecError
        With every problem found: unknown keys, a missing or invalid base machine, a path
        that names no numeric key, an empty value list, ``low >= high``, an unknown plan.
    """

    base_dir = Path(base_dir)
    if not isinstance(data, dict):
        raise SpecError(f"sweep file: must be a table, got {type(data).__name__}")
    problems: list[str] = []
    for name in data:
        if name not in _TOP_KEYS:
            problems.append(f"{name}: unknown key (known keys: {', '.join(_TOP_KEYS)})")
    base = data.get("base")
    if not isinstance(base, str):
        raise SpecError(problems + [f"base = {base!r}: required, the machine file to start from"])
    base_path = (base_dir / base).resolve()
    try:
        base_raw = read_toml(base_path, "file")
    except SpecError as err:
        raise SpecError(problems + [f"base = {base!r}: {err}"]) from err
    raw = copy.deepcopy(base_raw)
    fixed = apply_fixed(data.get("fixed", {}), raw, problems)
    studies = data.get("studies", "point")
    if studies not in STUDIES:
        problems.append(f"studies = {studies!r}: must be one of {', '.join(STUDIES)}")
    plan = _read_plan(data.get("plan", {}), problems)
    parameters = read_parameters(data.get("parameters"), raw, plan, fixed, problems)
    if problems:
        raise SpecError(problems)
    parameters = tuple(parameters)
    if plan.kind == "grid" and _grid_size(parameters) > MAX_CANDIDATES:
        raise SpecError(f"plan: the grid has {_grid_size(parameters)} candidates, "
                        f"more than {MAX_CANDIDATES}; use a random or lhs plan")
    try:
        machine_from_dict(raw, base_path.parent)
    except SpecError as err:
        raise SpecError([f"base = {base!r} (with the fixed keys): {p}" for p in err.problems]
                        ) from err
    return SweepSpec(
        name=str(data.get("name", base_path.stem)),
        base_path=base_path,
        base_raw=raw,
        base_dir=base_path.parent,
        studies=studies,
        plan=plan,
        parameters=parameters,
        fixed=fixed,
    )


def load_sweep(path: str | Path) -> SweepSpec:
    """Read and validate a sweep file (TOML); ``base`` is relative to the sweep file."""
    path = Path(path)
    return sweep_from_dict(read_toml(path, "sweep file"), path.parent)
