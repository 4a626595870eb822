"""Run a sweep of candidate rotors: results.csv, Pareto and parameter plots, compare.pdf.

Candidates already in the output folder's result store are skipped, so running the same
command again resumes a stopped sweep.
"""

from __future__ import annotations

import sys
from pathlib import Path

from fluxlab.cli._output import add_overwrite, open_output
from fluxlab.errors import FluxlabError
from fluxlab.report.manifest import sweep_hash
from fluxlab.sweep import RESULTS_CSV, STORE_NAME, ResultStore, load_sweep, run_sweep
from fluxlab.sweep.outputs import write_sweep_outputs

__all__ = ["add_args", "run", "check_scheduler"]

# Common practice, no source: a reachable scheduler answers a TCP connect in milliseconds;
# 5 s leaves room for a slow network and fails long before Dask's own 30 s connect timeout.
SCHEDULER_CONNECT_TIMEOUT_S = 5.0


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
    add_overwrite(parser)


def check_scheduler(address: str, timeout_s: float = SCHEDULER_CONNECT_TIMEOUT_S) -> None:
    """Refuse, quickly, a ``--scheduler`` address nothing answers on (a TCP connect).

    Raises
    ------
    FluxlabError
        Naming the address: not ``[tcp://]host:port``, or no answer.
    """
    import socket
    from urllib.parse import urlsplit

    where = f"--scheduler {address}"
    parts = urlsplit(address if "://" in address else f"tcp://{address}")
    try:
        host, port = parts.hostname, parts.port
    except ValueError:
        host = port = None
    if parts.scheme not in ("tcp", "tls") or not host or port is None:
        raise FluxlabError(f"{where}: not a scheduler address (tcp://host:port)")
    try:
        with socket.create_connection((host, port), timeout=timeout_s):
            pass
    except OSError as err:
        reason = "no answer" if isinstance(err, TimeoutError) else (err.strerror or str(err))
        raise FluxlabError(f"{where}: cannot connect ({reason}) within {timeout_s:g} s; "
                                "is the scheduler running?") from err


def _stored(path: Path) -> str:
    if not path.exists():
        return "nothing was stored yet"
    with ResultStore(path) as store:
        counts = store.counts()
    return (f"{sum(counts.values())} candidates are stored in {path} ("
            + ", ".join(f"{v} {k}" for k, v in counts.items()) + ")")


def run(args) -> int:
    sweep = load_sweep(args.sweep)
    out = Path(args.out)
    output = open_output(out, "sweep", sweep_hash(sweep), sweep.name, args.overwrite)
    if args.scheduler is not None:
        check_scheduler(args.scheduler)
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
    # the store is kept (content-keyed: other sweeps' rows are never reported), the table
    # was just rewritten; any other file of an earlier run is stale
    store_files = (STORE_NAME, STORE_NAME + "-wal", STORE_NAME + "-shm")
    output.clear_stale(keep=(RESULTS_CSV, *store_files))
    written = [out / RESULTS_CSV, *write_sweep_outputs(sweep, rows, out, best=args.best)]
    output.finish([*written, out / STORE_NAME])
    for path in written:
        print(f"wrote {path}")
    if counts["failed"]:
        print(f"{counts['failed']} failed (messages in results.csv); rerun with --retry-failed "
              "to try them again")
    return 0
