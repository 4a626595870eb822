"""The manifest of an output folder: which command wrote which files, for which machine.

Every command that writes a folder leaves ``fluxlab_manifest.json`` in it::

    {"command": "evaluate", "fluxlab_version": "...", "identity": "<64 hex>",
     "machine": "<name>", "files": ["summary.json", "envelope/mtpa.csv", ...]}

``identity`` is the content hash of what the folder belongs to: for a machine, the SHA-256
of the canonical JSON of the machine table (``spec.raw``) and of the B-H files it names
(:func:`machine_hash`); for a sweep, of the sweep's resolved content (:func:`sweep_hash`).
Both use the sweep's own canonical JSON and B-H file digests
(:mod:`fluxlab.sweep.candidates`), without the code version: a rerun after an update is
the same machine. ``files`` are paths relative to the folder, POSIX style.

The rules (see :func:`check_folder`, :func:`remove_stale`): a folder whose manifest was
written by another command or for another machine or sweep is refused unless overwriting
is asked for; files an earlier run listed are removed before the new ones are written;
files the manifest does not list are never touched.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

from fluxlab.errors import FluxlabError
from fluxlab.sweep.candidates import _file_digests, canonical_json
from fluxlab.version import __version__

__all__ = ["MANIFEST_NAME", "OutputFolderError", "machine_hash", "sweep_hash", "read_manifest",
           "check_writable", "check_folder", "remove_stale", "write_manifest",
           "relative_files"]

MANIFEST_NAME = "fluxlab_manifest.json"


class OutputFolderError(FluxlabError):
    """An output folder cannot be used: not a folder, not writable, or holding another
    machine's or sweep's results."""


def _content_hash(content: dict) -> str:
    return hashlib.sha256(canonical_json(content).encode("ascii")).hexdigest()


def machine_hash(raw: dict, base_dir: Path | None) -> str:
    """SHA-256 (hex) of a machine table and the contents of the B-H files it names."""

    return _content_hash({"machine": raw, "files": _file_digests(raw, base_dir)})


def sweep_hash(sweep) -> str:
    """SHA-256 (hex) of a sweep: base machine (with its B-H files), studies, plan, parameters."""
    plan = json.loads(json.dumps(dataclasses.asdict(sweep.plan), default=str))
    parameters = json.loads(json.dumps([dataclasses.asdict(p) for p in sweep.parameters],
                                       default=str))
    return _content_hash({"base": machine_hash(sweep.base_raw, sweep.base_dir),
                          "studies": sweep.studies, "plan": plan, "parameters": parameters})


def read_manifest(folder: Path) -> dict | None:
    """The folder's manifest, or None when it has none.

    Raises
    ------
    OutputFolderError
        The manifest exists but is not a manifest (not JSON, or lacking its keys).
    """
    path = Path(folder) / MANIFEST_NAME
    if not path.is_file():
        return None
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError) as err:
        raise OutputFolderError(f"{path}: unreadable manifest ({err})") from err
    if not (isinstance(data, dict) and isinstance(data.get("files"), list)
            and isinstance(data.get("identity"), str)):
        raise OutputFolderError(f"{path}: not a fluxlab manifest (needs 'identity' and 'files')")
    return data


def check_writable(folder: Path, option: str = "--out") -> Path:
    """Create ``folder`` (with parents) and prove it writable by writing a temporary file.

    Done before any solve, so a bad folder costs seconds, not the evaluation.

    Raises
    ------
    OutputFolderError
        ``"<option> <folder>: ..."``: an existing file, or a folder that cannot be
        created or written.
    """
    folder = Path(folder)
    where = f"{option} {folder}"
    if folder.exists() and not folder.is_dir():
        raise OutputFolderError(f"{where}: exists and is not a folder")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, probe = tempfile.mkstemp(prefix=".fluxlab-probe-", dir=folder)
        os.close(fd)
        os.unlink(probe)
    except FileExistsError as err:  # a parent is a file
        raise OutputFolderError(f"{where}: cannot create the folder ({err.filename} "
                                "exists and is not a folder)") from err
    except PermissionError as err:
        raise OutputFolderError(f"{where}: not writable (permission denied)") from err
    except OSError as err:
        raise OutputFolderError(f"{where}: cannot write there ({err.strerror or err})") from err
    return folder


def check_folder(folder: Path, command: str, identity: str, overwrite: bool,
                 option: str = "--out") -> dict | None:
    """Check that ``folder`` is writable and may take ``command``'s output for ``identity``.

    Returns the old manifest (None when there is none).

    Raises
    ------
    OutputFolderError
        See :func:`check_writable`; or the folder's manifest names another command or
        another machine/sweep and ``overwrite`` is false.
    """
    check_writable(folder, option)
    old = read_manifest(folder)
    if old is None or overwrite:
        return old
    if old.get("command") != command or old["identity"] != identity:
        what = ("another sweep" if command == "sweep" else "another machine") \
            if old.get("command") == command else f"`fluxlab {old.get('command')}`"
        name = f" ({old['machine']})" if old.get("machine") else ""
        raise OutputFolderError(
            f"{option} {folder}: holds the output of {what}{name} (see "
            f"{Path(folder) / MANIFEST_NAME}); choose another folder or pass --overwrite "
            "to replace the files that manifest lists")
    return old


def remove_stale(folder: Path, old: dict | None, keep: Iterable[str] = ()) -> list[Path]:
    """Remove the files ``old`` (the folder's earlier manifest) lists, except ``keep``.

    Only listed files inside ``folder`` are removed; emptied sub-folders the manifest's
    files lived in are removed too. Returns the removed paths.
    """
    if not old:
        return []
    folder = Path(folder).resolve()
    keep = set(keep)
    removed = []
    for name in old.get("files", []):
        if not isinstance(name, str) or name in keep:
            continue
        path = (folder / name).resolve()
        if folder not in path.parents or not path.is_file():
            continue  # never outside the folder, never a folder
        path.unlink()
        removed.append(path)
        parent = path.parent
        while parent != folder:
            try:
                parent.rmdir()  # only when empty
            except OSError:
                break
            parent = parent.parent
    (folder / MANIFEST_NAME).unlink(missing_ok=True)
    return removed


def relative_files(folder: Path, paths: Iterable[Path]) -> list[str]:
    """``paths`` relative to ``folder`` (POSIX style, sorted, no duplicates)."""
    folder = Path(folder).resolve()
    return sorted({Path(p).resolve().relative_to(folder).as_posix() for p in paths})


def write_manifest(folder: Path, command: str, identity: str, files: Iterable[Path],
                   machine: str | None = None, extra: dict | None = None) -> Path:
    """Write ``fluxlab_manifest.json`` into ``folder``, listing ``files``; returns its path."""

    folder = Path(folder)
    data = {"command": command, "fluxlab_version": __version__, "identity": identity,
            "machine": machine, "files": relative_files(folder, files), **(extra or {})}
    path = folder / MANIFEST_NAME
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(json.dumps(data, indent=1) + "\n", encoding="utf-8")
    os.replace(tmp, path)  # never a half-written manifest
    return path
