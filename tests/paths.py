"""Paths the tests share, as plain constants: usable at import time (parametrize lists,
module constants) and by helper modules, where fixtures are out of reach.

pytest discourages importing ``conftest.py``; the fixtures built on these live there.
"""

from __future__ import annotations

import copy
import sys
from functools import cache
from pathlib import Path

if sys.version_info >= (3, 11):
    import tomllib
else:  # Python 3.10
    import tomli as tomllib

#: The repository root (the folder holding pyproject.toml, README.md, fluxlab/).
REPO_ROOT = Path(__file__).resolve().parents[1]
#: The bundled machine files.
GEOMETRIES = REPO_ROOT / "geometries"
#: The demo machine file.
DEMO = GEOMETRIES / "demo_fan_drive.toml"


@cache
def _parsed(path: Path) -> dict:
    with path.open("rb") as f:
        return tomllib.load(f)


def demo_table() -> dict:
    """A fresh deep copy of the demo machine file's TOML table (file units: mm, deg)."""
    return copy.deepcopy(_parsed(DEMO))
