"""A small declarative schema for the machine file: keys, types, units and limits.

Each section of a machine file is a table of :class:`Key` entries. Reading a section
converts file units (mm, deg) to SI and collects every problem found instead of stopping at
the first, so a designer sees all mistakes of a file at once.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["Key", "read_section", "MM", "DEG"]

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
        """Attribute name in the SI spec: the file name without its unit suffix."""
        for suffix in ("_mm", "_deg", "_rpm"):
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
        return isinstance(value, (int, float)) and math.isfinite(value)
    return isinstance(value, kind)


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
            problem = _limit_problem(path, key, value)
            if problem:
                problems.append(problem)
                continue
            value = value * key.scale if key.kind is float else value
        out[key.attr] = value
    return out
