"""Compare evaluated machines side by side on one sheet (outlines, key figures, torque).

Each argument is an output folder of an evaluation (summary.json, torque_vs_position.csv,
torque_vs_current_angle.csv, machine.toml).
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    parser.add_argument("folders", nargs="+", help="evaluation output folders")
    parser.add_argument("--out", default="compare.pdf", help="PDF to write (default compare.pdf)")
    parser.add_argument("--title", default="Candidate comparison", help="sheet title")


def run(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    from fluxlab.report.compare import load_evaluate_folder, write_compare_pdf

    entries = [load_evaluate_folder(folder) for folder in args.folders]
    path = write_compare_pdf(entries, Path(args.out), title=args.title)
    print(f"wrote {path}")
    return 0
