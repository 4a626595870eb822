"""Solve one operating point and write the field plot and a JSON of the solve.

``--ripple`` adds torque versus rotor position at that current and angle over one torque
period (the evaluation's ripple study: its positions, CSV tables and figures).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from fluxlab.cli._output import add_overwrite, open_machine_output
from fluxlab.machine.model import build_model, rotor_step
from fluxlab.report.figures import save_figure
from fluxlab.report.plots.field import plot_field
from fluxlab.report.point_files import point_record, write_position_study
from fluxlab.spec.machine_file import load_machine
from fluxlab.studies.curves import torque_vs_position
from fluxlab.studies.operating_point import solve_point

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--current-A", type=float, required=True,
                        help="peak phase current, A")
    parser.add_argument("--current-angle-deg", type=float, default=45.0,
                        help="current angle from the d-axis, deg (default 45)")
    parser.add_argument("--position-deg", type=float, default=0.0,
                        help="rotor position, mechanical deg from d-axis on phase-a axis")
    parser.add_argument("--ripple", action="store_true",
                        help="also torque vs rotor position over one torque period at this "
                        "current and angle: torque_vs_position.csv/.png, "
                        "torque_harmonics.csv/.png, ripple figures in solve.json")
    parser.add_argument("--out", required=True, help="output folder")
    parser.add_argument("--linear-solver", choices=("auto", "scipy", "pardiso"), default="auto",
                        help="sparse direct solver: auto (PARDISO when installed), scipy, "
                        "pardiso")
    add_overwrite(parser)


def run(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    spec = load_machine(args.machine)
    out = Path(args.out)
    output = open_machine_output(out, "solve", spec, args.overwrite)
    model = build_model(spec, linear_solver=args.linear_solver)
    step = rotor_step(model, math.radians(args.position_deg))
    point = solve_point(model, args.current_A, math.radians(args.current_angle_deg), step)
    record = point_record(model, point)
    ripple = None
    if args.ripple:
        ripple, _ = torque_vs_position(model, args.current_A, math.radians(args.current_angle_deg))
        record.update(torque_maxwell_mean_Nm=ripple.torque_maxwell_mean_Nm,
                      torque_ripple_pct=ripple.ripple_pct, ripple_positions=len(ripple.torque_Nm))
    output.clear_stale()
    (out / "solve.json").write_text(json.dumps(record, indent=2))
    written = [out / "solve.json"]
    if ripple is not None:
        written += write_position_study(ripple, model.spec, out)
    fig, ax = plt.subplots(figsize=(8, 7.5))
    plot_field(model, point.solution, ax=ax)
    ax.set_title(f"{spec.name}: {args.current_A:g} A peak, γ = {args.current_angle_deg:g} deg, "
                 f"position {math.degrees(point.position):.2f} deg", fontsize=10)
    fig.tight_layout()
    written += save_figure(fig, out, "field", dpi=170)
    output.finish(written)
    for warning in record["warnings"]:
        print(f"WARNING: {warning}")
    print(f"torque {record['torque_maxwell_Nm']:.3f} N·m (Maxwell), "
          f"{record['torque_dq_Nm']:.3f} N·m (dq); psi_d {record['psi_d_Wb']:.4f} Wb, "
          f"psi_q {record['psi_q_Wb']:.4f} Wb; {record['newton_iterations']} Newton steps")
    if ripple is not None:
        print(f"over {len(ripple.torque_Nm)} positions: mean {ripple.torque_maxwell_mean_Nm:.3f} "
              f"N·m (Maxwell), ripple {ripple.ripple_pct:.1f} % peak to peak")
    print("wrote " + ", ".join(str(p) for p in written))
    return 0
