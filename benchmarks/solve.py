"""Cost of the field solve on the demo machine at its default mesh.

Prints the mesh size, library versions, the time of one Jacobian assembly, of one
factorisation and solve, and of one warm-started nonlinear rotor-position solve (median
over consecutive positions of the ripple study, each started from the previous one).
Last line: ``limit ratio: X`` with X = (time per warm-started position) / (one assembly +
one factorisation and solve).

"One factorisation and solve" is what the backend costs for a matrix it has not seen:
fill-reducing ordering, symbolic analysis, numeric factorisation and one solve.  That is
how the project's speed target was counted: a warm position of 3 Newton steps
(0.12-0.15 s) against 4 ms assembly plus a PARDISO factorisation of 6 ms with 34 ms
analysis per pattern is a ratio of about 3, the limit the target of 4 leaves room above;
counted against the 6 ms numeric factorisation alone, that reference would stand at 13.
Every rotor step has a new pattern (the sliding tie), so each position pays one such
factorisation and then numeric refactorisations of it.  The ratio against one assembly and
a numeric refactorisation alone is printed as well: it is about 1.4 times the Newton
steps a warm position needs.

    OPENBLAS_NUM_THREADS=1 python benchmarks/solve.py [--linear-solver auto|scipy|pardiso]
        [--positions 9]

Wall times on a shared machine vary by 10-30 %; the load average is printed.
"""

from __future__ import annotations

import argparse
import math
import os
import platform
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy loads (DEVELOPERS.md)

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import skfem  # noqa: E402

from fluxlab.fem import (
    assembly,  # noqa: E402
    linsolve,
)
from fluxlab.fem.solver import _prepared, linear_backend, solve_field  # noqa: E402
from fluxlab.machine.model import build_model, current_density, phase_currents  # noqa: E402
from fluxlab.spec.machine_file import load_machine  # noqa: E402
from fluxlab.studies.curves import ripple_steps  # noqa: E402

DEMO = Path(__file__).resolve().parents[1] / "geometries" / "demo_fan_drive.toml"


def _median_time(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return float(np.median(times))


def versions() -> str:
    out = [f"python {platform.python_version()}", f"numpy {np.__version__}",
           f"scipy {scipy.__version__}", f"scikit-fem {skfem.__version__}"]
    try:
        from importlib.metadata import version

        out += [f"pypardiso {version('pypardiso')}", f"mkl {version('mkl')}"]
    except Exception:  # not installed
        out.append("pypardiso not installed")
    return ", ".join(out)


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--linear-solver", default="auto", choices=linsolve.BACKENDS)
    parser.add_argument("--positions", type=int, default=9)
    args = parser.parse_args(argv)
    print(versions())
    print(f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores; "
          f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS')}")
    spec = load_machine(DEMO)
    t = time.perf_counter()
    model = build_model(spec)
    problem = model.problem
    print(f"model: {model.mesh.mesh.p.shape[1]} nodes, {problem.n_elements} elements, "
          f"P{problem.order}, {problem.n_dofs} dofs, built in {time.perf_counter() - t:.2f} s")
    backend = linear_backend(problem, args.linear_solver)
    print(f"linear solver: {backend.describe()}")
    kw = {"linear_solver": args.linear_solver, "rtol": model.newton_rtol}  # as the studies
    p = spec.pole_pairs
    angle = spec.operating.current_angle or math.pi / 4

    def current(step):
        theta_e = p * (step - model.axis_step) * model.step_angle
        return current_density(model, phase_currents(spec.operating.current_peak_A, angle,
                                                     theta_e))

    steps = [int(s) for s in ripple_steps(model)[: args.positions + 1]]
    t = time.perf_counter()
    previous = solve_field(problem, current(steps[0]), steps[0], **kw)
    print(f"cold solve: {time.perf_counter() - t:.3f} s, {previous.iterations} iterations")
    # one assembly and one factorisation at the saturated field of the cold solve
    data = problem.data
    state = assembly.evaluate(data, problem.materials, previous.a)
    t_asm = _median_time(lambda: assembly.jacobian_values(data, state), 10)
    tie, pattern = _prepared(problem, steps[1])
    matrix = pattern.matrix(assembly.jacobian_values(data, state))
    rhs = np.ones(matrix.shape[0])
    fresh = linsolve.choose(backend.name)
    t_first = _median_time(lambda: linsolve.choose(backend.name)(matrix)(rhs), 3)
    fresh(matrix)
    t_fact = _median_time(lambda: fresh(matrix)(rhs), 5)
    print(f"reduced system: {matrix.shape[0]} unknowns, {matrix.nnz} non-zeros")
    t_red = _median_time(lambda: pattern.matrix(assembly.jacobian_values(data, state)), 10)
    print(f"jacobian assembly: {1e3 * t_asm:.1f} ms (values and reduction P^T K P: "
          f"{1e3 * t_red:.1f} ms)")
    print(f"factorisation and solve of a new pattern (ordering, analysis, numeric, solve): "
          f"{1e3 * t_first:.1f} ms; numeric refactorisation and solve of an analysed "
          f"pattern: {1e3 * t_fact:.1f} ms")
    times, iterations, first_residuals = [], [], []
    for step in steps[1:]:
        t = time.perf_counter()
        previous = solve_field(problem, current(step), step, initial=previous.a, **kw)
        times.append(time.perf_counter() - t)
        iterations.append(previous.iterations)
        first_residuals.append(previous.history[0])
    t_pos = float(np.median(times))
    print(f"warm-started position (steps {steps[1] - steps[0]} apart, {len(times)} "
          f"positions): median {1e3 * t_pos:.0f} ms, min {1e3 * min(times):.0f}, "
          f"max {1e3 * max(times):.0f}; iterations {np.mean(iterations):.1f}, first "
          f"relative residual {np.median(first_residuals):.3g}")
    print(f"ratio against one assembly and a numeric refactorisation alone: "
          f"{t_pos / (t_asm + t_fact):.2f}")
    print(f"limit ratio: {t_pos / (t_asm + t_first):.2f}")


if __name__ == "__main__":
    main()
