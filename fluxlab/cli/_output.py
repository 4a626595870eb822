"""The output folder of a command: checked before any work, its manifest written after.

:func:`open_output` runs at the start of a command (creates the folder, probes that it is
writable, refuses a folder holding another machine's or sweep's output unless
``--overwrite``); :meth:`Output.clear_stale` runs when the results are computed, just before
they are written (so a failed solve leaves the earlier run's files in place);
:meth:`Output.finish` writes ``fluxlab_manifest.json``.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

from fluxlab.report import manifest

__all__ = ["Output", "add_machine_and_out", "add_overwrite", "open_output", "open_machine_output"]


def add_machine_and_out(parser) -> None:
    """The arguments of a command that reads a machine file and writes a folder."""
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--out", required=True, help="output folder")
    add_overwrite(parser)


def add_overwrite(parser) -> None:
    parser.add_argument("--overwrite", action="store_true",
                        help="write into a folder holding another machine's (or sweep's) "
                        "output, replacing the files its fluxlab_manifest.json lists")


@dataclass
class Output:
    """An output folder checked for one command and one machine or sweep."""

    folder: Path
    command: str
    identity: str
    name: str | None
    old: dict | None

    def clear_stale(self, keep: Iterable[str] = ()) -> None:
        """Remove the files the folder's earlier manifest lists (except ``keep``)."""
        manifest.remove_stale(self.folder, self.old, keep)
        self.old = None

    def finish(self, files: Iterable[Path], extra: dict | None = None) -> Path:
        """Write the manifest listing ``files``."""
        return manifest.write_manifest(self.folder, self.command, self.identity, files,
                                       machine=self.name, extra=extra)


def open_output(out: str | Path, command: str, identity: str, name: str | None,
                overwrite: bool) -> Output:
    """Check the ``--out`` folder before any work (see :func:`manifest.check_folder`)."""
    folder = Path(out)
    old = manifest.check_folder(folder, command, identity, overwrite)
    return Output(folder, command, identity, name, old)


def open_machine_output(out: str | Path, command: str, spec, overwrite: bool) -> Output:
    """:func:`open_output` for a machine as read from its file."""
    return open_output(out, command, manifest.machine_hash(spec.raw, spec.base_dir),
                       spec.name, overwrite)
