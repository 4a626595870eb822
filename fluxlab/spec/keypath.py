"""Key paths into a machine table: ``"rotor.barriers[1].end_angle_deg"`` read and written.

A sweep changes the parsed machine table (file units) before it is validated once, so a
candidate that moves two keys together is never checked half-changed. The schema of the
machine file tells whether a key is numeric and whether it is an integer.
"""

from __future__ import annotations

import re
from typing import Any

from fluxlab.errors import SpecError
from fluxlab.spec import schema

__all__ = ["parse_path", "path_prefix", "key_kind", "get_path", "set_path"]

_PART = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)(?:\[(\d+)\])?")


def parse_path(path: str) -> list[str | int]:
    """Split a key path into table names and list indices.

    ``"rotor.barriers[1].end_angle_deg"`` gives ``["rotor", "barriers", 1, "end_angle_deg"]``.

    Raises
    ------
    SpecError
        When ``path`` is not a string of dotted names with optional ``[index]`` parts.
    """
    if not isinstance(path, str) or not path:
        raise SpecError(f"path = {path!r}: must be a key path such as rotor.barriers[1].width_mm")
    steps: list[str | int] = []
    for part in path.split("."):
        match = _PART.fullmatch(part)
        if not match:
            raise SpecError(
                f"path = {path!r}: {part!r} is not a key name "
                "(use names like rotor.barriers[1].width_mm)"
            )
        steps.append(match.group(1))
        if match.group(2) is not None:
            steps.append(int(match.group(2)))
    return steps


def _schema() -> dict[str, tuple]:
    # The key tables of the machine file, to know a key's type even when the base file
    # leaves it at its default (rotor.barriers[0].post_mm, for instance).
    return {
        "machine": schema.MACHINE_KEYS,
        "stator": schema.STATOR_KEYS,
        "winding": schema.WINDING_KEYS,
        "rotor": schema.ROTOR_KEYS,
        "rotor.barriers": schema.BARRIER_KEYS,
        "mesh": schema.MESH_KEYS,
        "operating": schema.OPERATING_KEYS,
    }


def key_kind(path: str) -> type | None:
    """The schema type (``int``, ``float``, ``str``) of the key at ``path``, None if unknown."""
    steps = parse_path(path)
    if not isinstance(steps[-1], str):
        return None
    table = ".".join(str(s) for s in steps[:-1] if isinstance(s, str))
    for key in _schema().get(table, ()):
        if key.name == steps[-1]:
            return key.kind
    return None


def _walk(raw: dict, path: str, steps: list[str | int]) -> tuple[Any, str | int]:
    node: Any = raw
    for depth, step in enumerate(steps[:-1]):
        where = path_prefix(steps[: depth + 1])
        if isinstance(step, int):
            if not isinstance(node, list) or step >= len(node):
                size = len(node) if isinstance(node, list) else 0
                raise SpecError(
                    f"path = {path!r}: index {step} out of range, the base machine has "
                    f"{size} entries in {path_prefix(steps[:depth])}"
                )
        elif not isinstance(node, dict) or step not in node:
            raise SpecError(f"path = {path!r}: the base machine has no {where}")
        node = node[step]
    return node, steps[-1]


def path_prefix(steps: list[str | int]) -> str:
    """The text form of a list of path steps."""
    out = ""
    for step in steps:
        out += f"[{step}]" if isinstance(step, int) else (f".{step}" if out else step)
    return out


def get_path(raw: dict, path: str, default: Any = None) -> Any:
    """The value at ``path`` in a machine table, ``default`` when the last key is absent."""
    node, last = _walk(raw, path, parse_path(path))
    if isinstance(last, int):
        return node[last] if isinstance(node, list) and last < len(node) else default
    return node.get(last, default) if isinstance(node, dict) else default


def set_path(raw: dict, path: str, value: Any) -> None:
    """Set the key at ``path`` in a machine table in place.

    Every table and list entry on the way must exist already; the last key may be new
    (it is then checked by the machine-file validation like any other key).
    """
    node, last = _walk(raw, path, parse_path(path))
    if isinstance(last, int):
        if not isinstance(node, list) or last >= len(node):
            raise SpecError(f"path = {path!r}: index {last} out of range")
        node[last] = value
    elif isinstance(node, dict):
        node[last] = value
    else:
        raise SpecError(f"path = {path!r}: the base machine has no table there")
