"""Solve one operating point and write the field plot and a JSON of the solve."""

from __future__ import annotations

import json
import math
from pathlib import Path

from fluxlab.machine.dq import power_factor
from fluxlab.machine.model import build_model, rotor_step
from fluxlab.report.figures import save_figure
from fluxlab.spec.machine_file import load_machine
from fluxlab.studies.operating_point import solve_point

__all__ = ["add_args", "run", "point_record"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--current-A", type=float, required=True,
                        help="peak phase current, A")
    parser.add_argument("--current-angle-deg", type=float, default=45.0,
                        help="current angle from the d-axis, deg (default 45)")
    parser.add_argument("--position-deg", type=float, default=0.0,
                        help="rotor position, mechanical deg from d-axis on phase-a axis")
    parser.add_argument("--out", required=True, help="output folder")
    parser.add_argument("--linear-solver", choices=("auto", "scipy", "pardiso"), default="auto",
                        help="sparse direct solver: auto (PARDISO when installed), scipy, "
                        "pardiso")


def point_record(model, point) -> dict:
    """JSON-able record of one solved point (SI units, names with units)."""
    sol = point.solution
    return {
        "current_peak_A": point.current_peak_A,
        "current_angle_deg": math.degrees(point.current_angle),
        "position_deg": math.degrees(point.position),
        "rotor_step": point.step,
        "i_d_A": point.i_d,
        "i_q_A": point.i_q,
        "psi_d_Wb": point.psi_d,
        "psi_q_Wb": point.psi_q,
        "torque_maxwell_Nm": point.torque_maxwell_Nm,
        "torque_dq_Nm": point.torque_dq_Nm,
        "power_factor": power_factor(point.psi_d, point.psi_q, point.i_d, point.i_q),
        "energy_J": model.scale * sol.energy_per_m,
        "coenergy_J": model.scale * sol.coenergy_per_m,
        "b_local_peak_T": float(sol.b_norm.max()),
        "newton_iterations": sol.iterations,
        "newton_rtol": model.newton_rtol,
        "newton_relative_residuals": list(sol.history),
        "nodes": int(model.mesh.mesh.p.shape[1]),
        "element_order": model.spec.mesh.element_order,
        "currents": "peak phase amperes; angle from the d-axis",
    }


def run(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from fluxlab.report.plots.field import plot_field

    spec = load_machine(args.machine)
    model = build_model(spec, linear_solver=args.linear_solver)
    step = rotor_step(model, math.radians(args.position_deg))
    point = solve_point(model, args.current_A, math.radians(args.current_angle_deg), step)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    record = point_record(model, point)
    (out / "solve.json").write_text(json.dumps(record, indent=2))
    fig, ax = plt.subplots(figsize=(8, 7.5))
    plot_field(model, point.solution, ax=ax)
    ax.set_title(f"{spec.name}: {args.current_A:g} A peak, γ = {args.current_angle_deg:g} deg, "
                 f"position {math.degrees(point.position):.2f} deg", fontsize=10)
    fig.tight_layout()
    save_figure(fig, out, "field", dpi=170)
    print(f"torque {record['torque_maxwell_Nm']:.3f} N·m (Maxwell), "
          f"{record['torque_dq_Nm']:.3f} N·m (dq); psi_d {record['psi_d_Wb']:.4f} Wb, "
          f"psi_q {record['psi_q_Wb']:.4f} Wb; {record['newton_iterations']} Newton steps")
    print(f"wrote {out / 'solve.json'}, {out / 'field.png'}, {out / 'field.pdf'}")
    return 0
