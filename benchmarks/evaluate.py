"""Wall time of the full demo evaluation (the work of `make demo`), with a breakdown.

Prints meshing, model set-up, the studies (solve count and Newton iterations), the
post-processing into files and plotting, the peak resident memory, and last
`evaluate wall s: X`. Run: .venv/bin/python benchmarks/evaluate.py [--workers N]
"""

from __future__ import annotations

import argparse
import resource
import tempfile
import time
from pathlib import Path

import numpy as np

MACHINE = Path(__file__).resolve().parents[1] / "geometries" / "demo_fan_drive.toml"


def _peak_rss_mib() -> float:
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return max(own, children) / 1024  # ru_maxrss is in KiB on Linux


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--linear-solver", default="auto")
    args = parser.parse_args()

    from threadpoolctl import threadpool_limits

    import fluxlab
    from fluxlab.fem.solver import linear_backend
    from fluxlab.report.evaluation_files import write_evaluation

    start = time.perf_counter()
    with threadpool_limits(limits=1):
        spec = fluxlab.load_machine(MACHINE)
        # the same call as `fluxlab evaluate`: the study workers start while this meshes
        evaluation = fluxlab.evaluate(spec, workers=args.workers,
                                      linear_solver=args.linear_solver)
        t0 = time.perf_counter()
        with tempfile.TemporaryDirectory() as out:
            write_evaluation(evaluation, Path(out), MACHINE)
        t_write = time.perf_counter() - t0
    wall = time.perf_counter() - start
    model = evaluation.model
    t_mesh, t_model, t_studies = (evaluation.timings_s[k] for k in ("mesh", "model", "studies"))
    ripples = [r for r in (evaluation.torque_vs_position, evaluation.torque_vs_position_overload)
               if r is not None]
    solves = sum(len(r.iterations) for r in ripples)
    iterations = int(sum(np.sum(r.iterations) for r in ripples))
    angle_solves = sum(len(s.points) * s.positions for s in evaluation.torque_vs_angle)
    inductance_solves = 2 * len(evaluation.inductances.current_peak_A) * \
        evaluation.inductances.positions
    s = evaluation.summary
    print(f"fluxlab {fluxlab.__version__}, numpy {np.__version__}")
    print(f"mesh: {s['nodes']} nodes, {s['elements']} elements, P{s['element_order']}")
    print(f"linear solver: {linear_backend(model.problem, model.linear_solver).describe()}")
    print(f"workers: {args.workers}")
    print(f"meshing            {t_mesh:7.2f} s")
    print(f"model set-up       {t_model:7.2f} s")
    print(f"studies            {t_studies:7.2f} s  ({solves} ripple solves at rated and overload, "
          f"{iterations} Newton steps; {angle_solves} current-angle and {inductance_solves} "
          "inductance solves)")
    print(f"tables, figures, review.pdf {t_write:7.2f} s")
    print(f"peak resident memory {_peak_rss_mib():.0f} MiB (largest of this process and a worker)")
    print("summary: " + ", ".join(f"{k} {s[k]:.6g}" for k in (
        "Ld_apparent_H", "Lq_apparent_H", "saliency_apparent", "torque_mean_Nm",
        "torque_maxwell_mean_Nm", "torque_ripple_pct", "mtpa_angle_deg", "mtpa_torque_Nm",
        "overload_mtpa_angle_deg", "overload_mtpa_torque_Nm", "power_factor")))
    print(f"evaluate wall s: {wall:.1f}")


if __name__ == "__main__":
    main()
