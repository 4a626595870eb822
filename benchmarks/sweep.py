"""Speed-up of a sweep with two local workers against one (a measurement, not a test).

Runs the same 8 candidates (end angle of barrier 2 of the demo fan-drive machine, coarse
mesh, operating-point studies) into a fresh output folder with 1 and then 2 worker
processes, and prints the wall times and the speed-up. Pool start-up is included: it is
part of what a user waits for.

    python benchmarks/sweep.py           # the real evaluation (some minutes on 2 cores)
    python benchmarks/sweep.py --fake    # the fake evaluator with CPU work, seconds

Run it on an otherwise idle machine; other load on the cores shows up as a lower speed-up.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy, for this process too

from fluxlab.sweep import run_sweep, sweep_from_dict  # noqa: E402

GEOMETRIES = Path(__file__).resolve().parents[1] / "geometries"


def _sweep(studies: str):
    return sweep_from_dict({
        "name": "benchmark: 8 end angles",
        "base": "demo_fan_drive.toml",
        "studies": studies,
        "plan": {"kind": "grid"},
        "fixed": {"mesh.size_mm": 8.0, "mesh.airgap_layers": 1, "mesh.steps_per_slot": 4},
        "parameters": [{"path": "rotor.barriers[1].end_angle_deg",
                        "values": [20.0, 21.0, 22.0, 23.0, 24.0, 25.0, 26.0, 27.0]}],
    }, GEOMETRIES)


def _timed(sweep, workers: int, evaluator: str | None) -> tuple[float, list[dict]]:
    with tempfile.TemporaryDirectory() as out:
        start = time.perf_counter()
        rows = run_sweep(sweep, out, workers=workers, evaluator=evaluator)
        return time.perf_counter() - start, rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--fake", action="store_true",
                        help="fake evaluator with CPU work (FLUXLAB_FAKE_EVAL_WORK)")
    parser.add_argument("--studies", default="point", choices=("point", "full"))
    args = parser.parse_args()
    evaluator = None
    if args.fake:  # the tests' double; spawned workers inherit this sys.path
        sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
        evaluator = "fake_evaluator:fake_evaluate"
        os.environ.setdefault("FLUXLAB_FAKE_EVAL_WORK", "6")
    sweep = _sweep(args.studies)
    print(f"8 candidates, {args.studies} studies, "
          f"{'fake evaluator' if args.fake else 'real evaluation'}, {os.cpu_count()} cores")
    times = {}
    for workers in (1, 2):
        times[workers], rows = _timed(sweep, workers, evaluator)
        done = sum(r["status"] == "done" for r in rows)
        print(f"  {workers} worker(s): {times[workers]:7.1f} s  ({done} of {len(rows)} done)")
    print(f"speed-up with 2 workers: {times[1] / times[2]:.2f}x")
    # other processes on the cores spoil the comparison: say how busy the machine was
    print("load average (1, 5, 15 min) at the end: "
          + ", ".join(f"{x:.2f}" for x in os.getloadavg()))


if __name__ == "__main__":
    main()
