"""Evaluate a candidate: Ld, Lq, saliency, torque ripple, torque vs current angle, sheet."""

from __future__ import annotations

import math
import os
from pathlib import Path

from fluxlab.cli._output import add_overwrite, open_machine_output
from fluxlab.envelope import envelope_study
from fluxlab.report.evaluation_files import evaluation_warnings, write_evaluation
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.studies.evaluate import StudySettings, evaluate
from fluxlab.sweep.progress import Progress

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--out", required=True, help="output folder")
    parser.add_argument("--linear-solver", choices=("auto", "scipy", "pardiso"), default="auto",
                        help="sparse direct solver: auto (PARDISO when installed), scipy, "
                        "pardiso")
    parser.add_argument("--studies", choices=("full", "point"), default="full",
                        help="full evaluation (default) or the rated point only")
    parser.add_argument("--angle-step-deg", type=float, default=22.5,
                        help="grid step of the current-angle study; the MTPA is then searched "
                        "between grid angles (default 22.5)")
    parser.add_argument("--positions", type=int, default=None,
                        help="rotor positions averaged over one torque period for every "
                        "position-averaged figure (default: mesh.averaging_positions, else "
                        "the alias-free rule; the mesh is made for it)")
    parser.add_argument("--inductance-points", type=int, default=6,
                        help="currents on each saturation curve from 1/3 to 2 times rated, "
                        "with the overload current (default 6)")
    parser.add_argument("--full", action="store_true",
                        help="also the operating envelope (flux maps, MTPA, torque-speed, "
                        "losses, rib stress) into DIR/envelope and review.pdf")
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 1,
                        help="processes for independent studies (default: the core count)")
    add_overwrite(parser)


def run(args) -> int:
    spec = load_machine(args.machine)
    output = open_machine_output(args.out, "evaluate", spec, args.overwrite)  # before solves
    if args.positions is not None:
        spec = replace_path(spec, "mesh.averaging_positions", args.positions)
    settings = StudySettings(studies=args.studies, angle_step_deg=args.angle_step_deg,
                             inductance_points=args.inductance_points)
    progress = Progress()
    evaluation = evaluate(spec, settings, progress=progress, workers=args.workers,
                          linear_solver=args.linear_solver)
    envelope = None
    if args.full:
        envelope = envelope_study(spec, model=evaluation.model, workers=args.workers,
                                  progress=progress, operating=evaluation.operating_points())
    progress("writing tables, figures and review.pdf")
    output.clear_stale()
    written = write_evaluation(evaluation, Path(args.out), Path(args.machine), envelope)
    output.finish(written)
    progress.close()
    s = evaluation.summary
    print(f"{spec.name}: apparent Ld {s['Ld_apparent_H'] * 1e3:.2f} mH, Lq "
          f"{s['Lq_apparent_H'] * 1e3:.2f} mH, saliency {s['saliency_apparent']:.2f} "
          f"(at the operating point), torque {s['torque_mean_Nm']:.2f} N·m, "
          + (f"ripple {s['torque_ripple_pct']:.1f} %, " if s["torque_ripple_pct"] else "")
          + (f"MTPA {s['mtpa_angle_deg']:.1f} deg, " if s["mtpa_angle_deg"] else "")
          + f"power factor {s['power_factor']:.3f} at {s['current_peak_A']:g} A peak, "
          f"γ {s['current_angle_deg']:.1f} deg")
    if not math.isfinite(s["saliency_apparent"]):
        print("note: Ld or Lq undefined at a current angle of 0 or 90 deg")
    more = envelope.summary["grid_warnings"] if envelope is not None else []
    for warning in (*evaluation_warnings(evaluation), *more):
        print(f"WARNING: {warning}")
    print(f"wrote {len(written)} files to {args.out}")
    return 0
