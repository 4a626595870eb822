"""Reading the project's TOML files (machine and sweep files) with one kind of error."""

from __future__ import annotations

import re
import sys
from pathlib import Path

from fluxlab.errors import SpecError

if sys.version_info >= (3, 11):
    import tomllib
else:  # Python 3.10
    import tomli as tomllib

__all__ = ["read_toml"]


def _duplicate_hint(path: Path, err: Exception) -> str:
    """The key a "Cannot overwrite"/"Cannot declare" error is about (the parser gives only
    the line and column)."""
    match = re.search(r"at line (\d+)", str(err))
    if not match or not str(err).startswith("Cannot"):
        return ""
    try:
        line = path.read_text(encoding="utf-8").splitlines()[int(match.group(1)) - 1]
    except (OSError, UnicodeDecodeError, IndexError):
        return ""
    return f" (key {line.split('=', 1)[0].split('#', 1)[0].strip()} given twice)"


def read_toml(path: str | Path, what: str) -> dict:
    """The parsed TOML file at ``path``.

    Raises
    ------
    SpecError
        ``"<path>: no such <what>"``, ``"<path>: not valid TOML: <reason>"``, or another
        line naming the path: a folder, unreadable, or not UTF-8 text.
    """
    path = Path(path)
    try:
        with path.open("rb") as f:
            return tomllib.load(f)
    except FileNotFoundError as err:
        raise SpecError(f"{path}: no such {what}") from err
    except IsADirectoryError as err:
        raise SpecError(f"{path}: is a folder, not a {what}") from err
    except PermissionError as err:
        raise SpecError(f"{path}: cannot read the {what} (permission denied)") from err
    except UnicodeDecodeError as err:  # TOML is UTF-8; tomllib decodes before parsing
        raise SpecError(f"{path}: not UTF-8 text (byte 0x{err.object[err.start]:02x} at "
                        f"offset {err.start}); save the {what} as UTF-8") from err
    except tomllib.TOMLDecodeError as err:
        raise SpecError(f"{path}: not valid TOML: {err}{_duplicate_hint(path, err)}") from err
    except OSError as err:
        raise SpecError(f"{path}: cannot read the {what} ({err.strerror or err})") from err
