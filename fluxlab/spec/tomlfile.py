"""Reading the project's TOML files (machine and sweep files) with one kind of error."""

from __future__ import annotations

import sys
from pathlib import Path

from fluxlab.errors import SpecError

if sys.version_info >= (3, 11):
    import tomllib
else:  # Python 3.10
    import tomli as tomllib

__all__ = ["read_toml"]


def read_toml(path: str | Path, what: str) -> dict:
    """The parsed TOML file at ``path``.

    Raises
    ------
    SpecError
        ``"<path>: no such <what>"`` or ``"<path>: not valid TOML: <reason>"``.
    """
    path = Path(path)
    try:
        with path.open("rb") as f:
            return tomllib.load(f)
    except FileNotFoundError as err:
        raise SpecError(f"{path}: no such {what}") from err
    except tomllib.TOMLDecodeError as err:
        raise SpecError(f"{path}: not valid TOML: {err}") from err
