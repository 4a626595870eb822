"""Run a sweep of candidate rotors: results.csv, Pareto and parameter plots, compare.pdf.

Candidates already in the output folder's result store are skipped, so running the same
command again resumes a stopped sweep.
"""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    parser.add_argument("sweep", help="sweep file (TOML)")
    parser.add_argument("--out", required=True, help="output folder (holds the result store)")
    parser.add_argument("--workers", type=int, default=None,
                        help="local worker processes (default: the number of cores)")
    parser.add_argument("--scheduler", default=None, metavar="ADDRESS",
                        help="run on a Dask distributed scheduler (tcp://host:8786) instead")
    parser.add_argument("--retry-failed", action="store_true",
                        help="evaluate candidates stored as failed again")
    parser.add_argument("--best", type=int, default=4,
                        help="candidates on the comparison sheet (default 4)")
    parser.add_argument("--no-progress", action="store_true", help="no progress bar")


def _stored(path: Path) -> str:
    from fluxlab.sweep import ResultStore

    if not path.exists():
        return "nothing was stored yet"
    with ResultStore(path) as store:
        counts = store.counts()
    return (f"{sum(counts.values())} candidates are stored in {path} ("
            + ", ".join(f"{v} {k}" for k, v in counts.items()) + ")")


def run(args) -> int:
    from fluxlab.sweep import STORE_NAME, load_sweep, run_sweep
    from fluxlab.sweep.outputs import write_sweep_outputs

    for option, value in (("--workers", args.workers), ("--best", args.best)):
        if value is not None and value < 1:
            print(f"fluxlab sweep: error: {option} {value}: must be at least 1", file=sys.stderr)
            return 2
    sweep = load_sweep(args.sweep)
    out = Path(args.out)
    try:
        rows = run_sweep(sweep, out, workers=args.workers, scheduler=args.scheduler,
                         retry_failed=args.retry_failed, progress=not args.no_progress)
    except KeyboardInterrupt:
        print(f"fluxlab sweep: interrupted; {_stored(out / STORE_NAME)}. Run the same command "
              "again to resume.", file=sys.stderr)
        return 130
    counts = {s: sum(r["status"] == s for r in rows) for s in ("done", "rejected", "failed")}
    print(f"{sweep.name}: {len(rows)} candidates: "
          + ", ".join(f"{v} {k}" for k, v in counts.items()))
    written = [out / "results.csv", *write_sweep_outputs(sweep, rows, out, best=args.best)]
    for path in written:
        print(f"wrote {path}")
    if counts["failed"]:
        print(f"{counts['failed']} failed (messages in results.csv); rerun with --retry-failed "
              "to try them again")
    return 0
