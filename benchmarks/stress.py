"""Mesh size, time and memory of the demo's rotor stress run (the work of `fluxlab stress`).

Prints the mesh (nodes, triangles, P2 dofs), the time to mesh, to assemble and solve, to
read the figures, to write stress.json and stress.png, the peak resident memory, and last
`stress run s: X` (rotor_stress plus the files, what the command does after loading the
machine; the pieces are timed apart first). Run: .venv/bin/python benchmarks/stress.py [--full]
"""

from __future__ import annotations

import argparse
import resource
import tempfile
import time
from pathlib import Path

MACHINE = Path(__file__).resolve().parents[1] / "geometries" / "demo_fan_drive.toml"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--full", action="store_true",
                        help="the whole lamination instead of one pole pitch")
    args = parser.parse_args()

    from threadpoolctl import threadpool_limits

    from fluxlab.report.stress_files import write_stress
    from fluxlab.spec.machine_file import load_machine
    from fluxlab.stress.elasticity import solve_unit_speed
    from fluxlab.stress.mesh import stress_mesh
    from fluxlab.stress.study import rotor_mechanics, rotor_stress, stress_summary

    with threadpool_limits(limits=1):
        spec = load_machine(MACHINE)
        m = rotor_mechanics(spec)
        t0 = time.perf_counter()
        sm = stress_mesh(spec, full=args.full)
        t_mesh = time.perf_counter() - t0
        t0 = time.perf_counter()
        field = solve_unit_speed(sm, m.density_kg_m3, m.youngs_modulus_Pa, m.poisson_ratio)
        t_solve = time.perf_counter() - t0
        t0 = time.perf_counter()
        result = rotor_stress(spec, full=args.full)  # the same pieces, end to end
        t_total = time.perf_counter() - t0
        speed = spec.drive.max_speed_rpm
        t0 = time.perf_counter()
        with tempfile.TemporaryDirectory() as out:
            write_stress(result, speed, Path(out))
        t_write = time.perf_counter() - t0
    s = stress_summary(result, speed)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"mesh: {sm.mesh.p.shape[1]} nodes, {sm.mesh.t.shape[1]} triangles, "
          f"{field.basis.N} P2 dofs, local size {sm.local_size * 1e3:.3g} mm "
          f"({'whole lamination' if args.full else 'one pole pitch'})")
    print(f"mesh s: {t_mesh:.2f}   assemble + solve s: {t_solve:.2f}   "
          f"rotor_stress (mesh, solve, read) s: {t_total:.2f}   files s: {t_write:.2f}")
    print(f"peak {s['von_mises_max_MPa']:.2f} MPa at {speed:g} rpm, safety factor "
          f"{s['safety_factor']:.2f}")
    print(f"peak resident memory MiB: {rss:.0f}")
    print(f"stress run s: {t_total + t_write:.2f}")


if __name__ == "__main__":
    main()
