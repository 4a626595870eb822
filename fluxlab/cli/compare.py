"""Compare evaluated machines side by side on one sheet (outlines, key figures, torque).

Each argument is an output folder of an evaluation (summary.json, torque_vs_position.csv,
torque_vs_current_angle.csv, machine.toml).
"""

from __future__ import annotations

from pathlib import Path

from fluxlab.report.compare import load_evaluate_folder, write_compare_pdf
from fluxlab.report.manifest import MANIFEST_NAME, OutputFolderError, check_writable, read_manifest

__all__ = ["add_args", "run", "check_folder_consistent", "check_pdf_path"]

# the files of an evaluate folder the sheet reads
_READ = ("summary.json", "torque_vs_position.csv", "torque_vs_current_angle.csv", "machine.toml")


def add_args(parser) -> None:
    parser.add_argument("folders", nargs="+", help="evaluation output folders")
    parser.add_argument("--out", default="compare.pdf", help="PDF to write (default compare.pdf)")
    parser.add_argument("--title", default="Candidate comparison", help="sheet title")


def check_folder_consistent(folder: str | Path) -> None:
    """Refuse a folder whose files do not come from one evaluation of one machine.

    With a manifest: it must be ``evaluate``'s, list every file the sheet reads that is
    present, and every manifest further down the folder must be of the same machine. A
    folder without any manifest (written before manifests existed) is taken as it is.

    Raises
    ------
    OutputFolderError
        Naming the folder or file that does not belong.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise OutputFolderError(f"{folder}: no such folder (an evaluate output folder)")
    top = read_manifest(folder)
    if top is not None:
        if top.get("command") != "evaluate":
            raise OutputFolderError(f"{folder}: holds the output of `fluxlab "
                                    f"{top.get('command')}`, not of `fluxlab evaluate`")
        listed = set(top["files"])
        for name in _READ:
            if (folder / name).exists() and name not in listed:
                raise OutputFolderError(
                    f"{folder / name}: not listed in {folder / MANIFEST_NAME}; it does not "
                    "belong to this folder's evaluation (remove it or evaluate again)")
    identities = {} if top is None else {top["identity"]: folder / MANIFEST_NAME}
    for path in sorted(folder.rglob(MANIFEST_NAME)):
        other = read_manifest(path.parent)
        if other is not None:
            identities.setdefault(other["identity"], path)
    if len(identities) > 1:
        first, second = list(identities.values())[:2]
        raise OutputFolderError(f"{folder}: holds manifests of different machines ({first} and "
                                f"{second}); its files do not belong together")


def check_pdf_path(out: str | Path) -> Path:
    """Refuse an ``--out`` that is a folder or whose folder cannot be written."""

    out = Path(out)
    if out.is_dir():
        raise OutputFolderError(f"--out {out}: is a folder; name the PDF file to write")
    check_writable(out.parent, "--out folder")
    return out


def run(args) -> int:
    out = check_pdf_path(args.out)
    for folder in args.folders:
        check_folder_consistent(folder)
    import matplotlib

    matplotlib.use("Agg")

    entries = [load_evaluate_folder(folder) for folder in args.folders]
    path = write_compare_pdf(entries, out, title=args.title)
    print(f"wrote {path}")
    return 0
