"""Optimise a rotor: a multi-objective search, then its best designs verified at full mesh.

Writes history.csv (every evaluation), front.csv (the verified non-dominated designs),
objectives.png, pareto.png/.svg and compare.pdf. Evaluations already in the result store are
not repeated, so running the same command again resumes a stopped optimisation.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import sys
from pathlib import Path

from fluxlab.cli._output import add_overwrite, open_output
from fluxlab.cli.sweep import check_scheduler
from fluxlab.optimize import FRONT_CSV, HISTORY_CSV, load_optimisation, run_optimisation
from fluxlab.optimize.outputs import write_optimisation_outputs
from fluxlab.report.manifest import machine_hash
from fluxlab.sweep import STORE_NAME

__all__ = ["add_args", "run", "optimisation_identity"]


def add_args(parser) -> None:
    parser.add_argument("optimisation", help="optimisation file (TOML)")
    parser.add_argument("--out", required=True, help="output folder (holds the result store)")
    parser.add_argument("--workers", type=int, default=None,
                        help="local worker processes (default: the number of cores)")
    parser.add_argument("--scheduler", default=None, metavar="ADDRESS",
                        help="run on a Dask distributed scheduler (tcp://host:8786) instead")
    parser.add_argument("--store", default=None, metavar="FILE",
                        help="result store to use instead of OUT/results.sqlite (a sweep's, "
                        "say: its evaluations of the same machines are not repeated)")
    parser.add_argument("--retry-failed", action="store_true",
                        help="evaluate designs stored as failed again")
    parser.add_argument("--no-progress", action="store_true", help="no progress bar")
    add_overwrite(parser)


def optimisation_identity(opt) -> str:
    """SHA-256 (hex) of an optimisation: base machine (with its B-H files) and settings."""
    settings = json.loads(json.dumps(
        {f.name: getattr(opt, f.name) for f in dataclasses.fields(opt)
         if f.name not in ("base_raw", "base_path", "base_dir", "name")},
        default=lambda v: dataclasses.asdict(v) if dataclasses.is_dataclass(v) else str(v)))
    content = {"base": machine_hash(opt.base_raw, opt.base_dir), "settings": settings}
    return hashlib.sha256(json.dumps(content, sort_keys=True).encode()).hexdigest()


def _line(row: dict, figures) -> str:
    return ", ".join(f"{f} {row[f]:.4g}" for f in figures if isinstance(row.get(f), float))


def run(args) -> int:
    opt = load_optimisation(args.optimisation)
    out = Path(args.out)
    output = open_output(out, "optimize", optimisation_identity(opt), opt.name,
                         args.overwrite)
    if args.scheduler is not None:
        check_scheduler(args.scheduler)
    try:
        result = run_optimisation(opt, out, workers=args.workers, scheduler=args.scheduler,
                                  progress=not args.no_progress, store=args.store,
                                  retry_failed=args.retry_failed)
    except KeyboardInterrupt:
        print("fluxlab optimize: interrupted; every finished evaluation is stored. Run the "
              "same command again to resume.", file=sys.stderr)
        return 130
    store_files = (STORE_NAME, STORE_NAME + "-wal", STORE_NAME + "-shm")
    output.clear_stale(keep=(HISTORY_CSV, FRONT_CSV, *store_files))
    written = [out / HISTORY_CSV, out / FRONT_CSV, *write_optimisation_outputs(result,
                                                                                 args.store)]
    output.finish([*written] + ([] if args.store else [out / STORE_NAME]))
    print(f"{opt.name}: {len(result.history)} evaluations in {result.generations} "
          f"generations ({result.evaluated} run now, {result.reused} read from the store); "
          f"{len(result.front)} designs on the verified front")
    print(f"base machine: {_line(result.base, opt.figures)}")
    for row in result.front:
        mark = "  (dominates the base)" if row["dominates_base"] else ""
        print(f"{row['design']}: {_line(row, opt.figures)}{mark}")
    for path in written:
        print(f"wrote {path}")
    return 0
