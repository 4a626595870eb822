"""Materials as a machine file names them: ``"air"``, a built-in grade, a linear
permeability, or a sheet-steel B-H table in a CSV file (see :func:`resolve_material`).

The curves themselves are checked and tabulated by :mod:`fluxlab.materials.material`.
"""

from __future__ import annotations

import csv
import pathlib
from collections.abc import Mapping

from fluxlab.errors import MaterialError
from fluxlab.materials.material import (
    AIR,
    Material,
    _bh_material,
    _check_fraction,
    _number,
    _positive_number,
    builtin_material,
    linear_material,
)

__all__ = ["material_from_csv", "resolve_material"]


def _read_bh_csv(path: pathlib.Path) -> tuple[list[float], list[float]]:
    """(H, B) columns of a two-column CSV; '#' comments and one header line allowed."""
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise MaterialError(f"{path}: cannot read B-H file ({err})") from err
    h: list[float] = []
    b: list[float] = []
    header_seen = False
    for lineno, row in enumerate(csv.reader(text.splitlines()), start=1):
        if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
            continue
        try:
            values = [float(cell) for cell in row]
        except ValueError as err:
            if not h and not header_seen:
                header_seen = True
                continue
            raise MaterialError(
                f"{path} line {lineno}: {','.join(row)!r} is not two numbers H (A/m), B (T)"
            ) from err
        if len(values) != 2:
            raise MaterialError(
                f"{path} line {lineno}: {len(values)} columns; expected 2, H (A/m) and B (T)"
            )
        h.append(values[0])
        b.append(values[1])
    return h, b


def material_from_csv(
    path: str | pathlib.Path,
    name: str | None = None,
    stacking_factor: float = 1.0,
    *,
    density_kg_m3: float = 7650.0,
    yield_strength_Pa: float = 0.0,
    youngs_modulus_Pa: float = 0.0,
    poisson_ratio: float = 0.0,
) -> Material:
    """A nonlinear material from a comma-separated file of sheet-steel H (A/m), B (T) pairs.

    One header line and ``#`` comment lines are allowed; the name defaults to the file stem.
    The data are checked as in :func:`bh_material`, with the file named in every error.
    Mechanical values left at 0 are unknown (a stress run refuses them, naming the key).
    """
    path = pathlib.Path(path)
    h, b = _read_bh_csv(path)
    return _bh_material(
        name or path.stem, h, b, str(path), stacking_factor, density_kg_m3, yield_strength_Pa,
        youngs_modulus_Pa=youngs_modulus_Pa, poisson_ratio=poisson_ratio,
    )


_FORMS = {
    "linear_mu_r": {"linear_mu_r", "name"},
    "bh_csv": {"bh_csv", "name", "stacking_factor", "density_kg_m3", "yield_strength_MPa",
               "youngs_modulus_GPa", "poisson_ratio"},
    "grade": {"grade", "stacking_factor"},
}


def resolve_material(value: str | Mapping, base_dir: pathlib.Path, key: str) -> Material:
    """The material a machine file gives for a region.

    Parameters
    ----------
    value
        ``"air"``; a built-in grade name such as ``"M400-50A"``; or a table with exactly one
        of ``linear_mu_r`` (number), ``bh_csv`` (path, relative to ``base_dir``; optional
        ``stacking_factor``, ``name``, ``density_kg_m3``, ``yield_strength_MPa``,
        ``youngs_modulus_GPa``, ``poisson_ratio``) or
        ``grade`` (optional ``stacking_factor``).
    base_dir
        Directory of the machine file.
    key
        Where the value sits in the machine file, e.g. ``"materials.rotor"``.

    Raises
    ------
    MaterialError
        Whose message starts with ``key = value``.
    """
    where = f"{key} = {value!r}"
    try:
        if isinstance(value, str):
            return AIR if value.strip().lower() == "air" else builtin_material(value)
        if not isinstance(value, Mapping):
            raise MaterialError("expected a grade name, 'air' or a table")
        return _resolve_table(value, pathlib.Path(base_dir), key)
    except MaterialError as err:
        raise MaterialError(f"{where}: {err}") from err


def _resolve_table(value: Mapping, base_dir: pathlib.Path, key: str) -> Material:
    forms = [f for f in _FORMS if f in value]
    if len(forms) != 1:
        raise MaterialError(f"needs exactly one of {', '.join(_FORMS)}; found {forms or 'none'}")
    form = forms[0]
    unknown = sorted(set(value) - _FORMS[form])
    if unknown:
        allowed = ", ".join(sorted(_FORMS[form]))
        raise MaterialError(f"unknown key {key}.{unknown[0]} with {form}; allowed: {allowed}")
    name = value.get("name")
    if name is not None and not isinstance(name, str):
        raise MaterialError(f"{key}.name = {name!r} must be text")
    k = _check_fraction(value.get("stacking_factor", 1.0), f"{key}.stacking_factor")
    if form == "linear_mu_r":
        mu_r = _positive_number(value["linear_mu_r"], f"{key}.linear_mu_r")
        return linear_material(mu_r, name)
    if form == "grade":
        return builtin_material(value["grade"], k)
    if not isinstance(value["bh_csv"], str):
        raise MaterialError(f"{key}.bh_csv = {value['bh_csv']!r} must be a file path")
    yield_MPa = value.get("yield_strength_MPa", 0.0)
    return material_from_csv(
        base_dir / value["bh_csv"],
        name,
        k,
        density_kg_m3=_positive_number(value.get("density_kg_m3", 7650.0), f"{key}.density_kg_m3"),
        yield_strength_Pa=1e6 * _number(yield_MPa, f"{key}.yield_strength_MPa"),
        youngs_modulus_Pa=1e9 * _number(value.get("youngs_modulus_GPa", 0.0),
                                        f"{key}.youngs_modulus_GPa"),
        poisson_ratio=_number(value.get("poisson_ratio", 0.0), f"{key}.poisson_ratio"),
    )
