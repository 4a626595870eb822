"""Evaluate a candidate: Ld, Lq, saliency, torque ripple, torque vs current angle, sheet."""

from __future__ import annotations

import json
import math
import os
import shutil
from pathlib import Path

from fluxlab.report.figures import save_figure
from fluxlab.spec.machine_file import load_machine, replace_path
from fluxlab.studies.evaluate import StudySettings, evaluate
from fluxlab.sweep.progress import Progress

__all__ = ["add_args", "run", "write_evaluation"]


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


def _write_data(evaluation, out: Path, machine_file: Path | None) -> list[Path]:
    """summary.json, a copy of the machine file and the CSV tables."""
    from fluxlab.report.figures import CAUTION
    from fluxlab.report.tables import HARMONICS_CONVENTION, evaluation_tables, write_csv

    summary = {**evaluation.summary, "caution": CAUTION}
    (out / "summary.json").write_text(json.dumps(summary, indent=2, default=float))
    written = [out / "summary.json"]
    if machine_file is not None:
        shutil.copyfile(machine_file, out / "machine.toml")
        written.append(out / "machine.toml")
    for stem, columns in evaluation_tables(evaluation).items():
        comment = HARMONICS_CONVENTION if stem == "torque_harmonics" else None
        written.append(write_csv(out / f"{stem}.csv", columns, comment))
    return written


def _write_curves(evaluation, out: Path) -> list[Path]:
    """The torque and inductance curves."""
    import matplotlib.pyplot as plt

    from fluxlab.report.plots.curves import (
        plot_inductances,
        plot_torque_vs_angle,
        plot_torque_vs_position,
    )

    plots = [
        ("torque_vs_position", evaluation.torque_vs_position, plot_torque_vs_position),
        ("torque_vs_current_angle", evaluation.torque_vs_angle or None, plot_torque_vs_angle),
        ("inductance_vs_current", evaluation.inductances, plot_inductances),
    ]
    written = []
    for stem, data, plot in plots:
        if data is not None:
            fig, ax = plt.subplots(figsize=(7, 4.3))
            plot(data, ax=ax)
            fig.tight_layout()
            written += save_figure(fig, out, stem, dpi=170)
    return written


def _write_field_and_winding(evaluation, out: Path) -> list[Path]:
    """The field at the rated point and the winding layout."""
    import matplotlib.pyplot as plt

    from fluxlab.report.plots.field import plot_field
    from fluxlab.report.plots.winding import plot_winding_layout

    fig, ax = plt.subplots(figsize=(8, 7.5))
    plot_field(evaluation.model, evaluation.rated_point.solution, ax=ax)
    s = evaluation.summary
    ax.set_title(f"Field at the rated point: {s['current_peak_A']:g} A peak, "
                 f"γ = {s['current_angle_deg']:.1f} deg, rotor position 0", fontsize=10)
    fig.tight_layout()
    written = save_figure(fig, out, "field_rated", dpi=170)
    fig, ax = plt.subplots(figsize=(11, 3.2))
    plot_winding_layout(evaluation.model.layout, ax=ax)
    fig.tight_layout()
    return written + save_figure(fig, out, "winding_layout", dpi=170)


def _write_sheet(evaluation, out: Path, envelope) -> list[Path]:
    from fluxlab.report.sheet import write_review_sheet

    return [write_review_sheet(evaluation, out / "review.pdf",
                               evaluation.rated_point.solution, envelope)]


def write_evaluation(evaluation, out: Path, machine_file: Path | None = None,
                     envelope=None, parallel: bool = True) -> list[Path]:
    """Write summary.json, the CSV tables, the figures and review.pdf; returns the paths.

    With an ``envelope`` result its files go to ``out/envelope`` and its page into the sheet.
    ``parallel``: draw in two processes (see :mod:`fluxlab.report.forked`); the tables and the
    summary are written first, so a failing figure never costs them.
    """
    import matplotlib

    matplotlib.use("Agg")
    from fluxlab.report.forked import run_jobs

    out.mkdir(parents=True, exist_ok=True)
    written = _write_data(evaluation, out, machine_file)
    jobs = [lambda: _write_sheet(evaluation, out, envelope) + _write_curves(evaluation, out),
            lambda: _write_field_and_winding(evaluation, out)]
    if envelope is not None:
        from fluxlab.cli.envelope import write_envelope

        jobs.append(lambda: write_envelope(envelope, out / "envelope"))
    return written + run_jobs(jobs, parallel)


def run(args) -> int:
    spec = load_machine(args.machine)
    if args.positions is not None:
        spec = replace_path(spec, "mesh.averaging_positions", args.positions)
    settings = StudySettings(studies=args.studies, angle_step_deg=args.angle_step_deg,
                             inductance_points=args.inductance_points)
    progress = Progress()
    evaluation = evaluate(spec, settings, progress=progress, workers=args.workers,
                          linear_solver=args.linear_solver)
    envelope = None
    if args.full:
        from fluxlab.envelope import envelope_study

        envelope = envelope_study(spec, model=evaluation.model, workers=args.workers,
                                  progress=progress, operating=evaluation.operating_points())
    progress("writing tables, figures and review.pdf")
    written = write_evaluation(evaluation, Path(args.out), Path(args.machine), envelope)
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
    print(f"wrote {len(written)} files to {args.out}")
    return 0
