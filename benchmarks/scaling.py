"""Time per warm-started rotor position against mesh size on the demo machine.

Three meshes of about 5k, 20k and 80k nodes (``mesh.size_mm``, ``mesh.airgap_layers``
and ``mesh.rib_size_mm`` changed with ``replace_path``); at each, the median time of
consecutive ripple-study positions, each started from the previous one and solved to the
studies' Newton tolerance (``MachineModel.newton_rtol``).  Prints the
fitted exponent of time against node count, overall and between the two finest meshes;
last line ``exponent: X`` (the 20k-80k one).

    OPENBLAS_NUM_THREADS=1 python benchmarks/scaling.py [--linear-solver auto] [--positions 4]
"""

from __future__ import annotations

import argparse
import math
import os
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy loads (DEVELOPERS.md)

import numpy as np  # noqa: E402

from fluxlab.fem import linsolve  # noqa: E402
from fluxlab.fem.solver import linear_backend, solve_field  # noqa: E402
from fluxlab.machine.model import build_model, current_density, phase_currents  # noqa: E402
from fluxlab.spec.machine_file import load_machine, replace_path  # noqa: E402
from fluxlab.studies.curves import ripple_steps  # noqa: E402

DEMO = Path(__file__).resolve().parents[1] / "geometries" / "demo_fan_drive.toml"

#: (size_mm, airgap_layers, rib_size_mm or None) giving about 5k, 20k and 80k nodes.
MESHES = ((8.0, 1, 1.0), (2.0, 3, None), (0.9, 8, 0.1))


def time_per_position(spec, linear_solver: str, positions: int) -> tuple[int, float, float]:
    """Nodes, median seconds per warm-started position, mean Newton iterations."""
    model = build_model(spec)
    p = spec.pole_pairs
    angle = spec.operating.current_angle or math.pi / 4

    def current(step):
        theta_e = p * (step - model.axis_step) * model.step_angle
        return current_density(model, phase_currents(spec.operating.current_peak_A, angle,
                                                     theta_e))

    steps = [int(s) for s in ripple_steps(model)[: positions + 1]]
    previous = solve_field(model.problem, current(steps[0]), steps[0],
                           linear_solver=linear_solver, rtol=model.newton_rtol)
    times, iterations = [], []
    for step in steps[1:]:
        t = time.perf_counter()
        previous = solve_field(model.problem, current(step), step, initial=previous.a,
                               linear_solver=linear_solver, rtol=model.newton_rtol)
        times.append(time.perf_counter() - t)
        iterations.append(previous.iterations)
    return model.mesh.mesh.p.shape[1], float(np.median(times)), float(np.mean(iterations))


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--linear-solver", default="auto", choices=linsolve.BACKENDS)
    parser.add_argument("--positions", type=int, default=4)
    args = parser.parse_args(argv)
    base = load_machine(DEMO)
    print(f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    nodes, seconds = [], []
    for size, layers, rib in MESHES:
        spec = replace_path(replace_path(base, "mesh.size_mm", size), "mesh.airgap_layers", layers)
        if rib is not None:
            spec = replace_path(spec, "mesh.rib_size_mm", rib)
        n, t, its = time_per_position(spec, args.linear_solver, args.positions)
        nodes.append(n)
        seconds.append(t)
        print(f"size_mm {size}, airgap_layers {layers}, rib_size_mm {rib}: {n} nodes, "
              f"{1e3 * t:.0f} ms per position, {its:.1f} Newton iterations", flush=True)
    probe = build_model(replace_path(base, "mesh.size_mm", 8.0)).problem
    print(f"linear solver: {linear_backend(probe, args.linear_solver).describe()}")
    slope_all = np.polyfit(np.log(nodes), np.log(seconds), 1)[0]
    slope_fine = math.log(seconds[2] / seconds[1]) / math.log(nodes[2] / nodes[1])
    print(f"exponent over all three meshes: {slope_all:.2f}")
    print(f"exponent: {slope_fine:.2f}")


if __name__ == "__main__":
    main()
