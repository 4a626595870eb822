"""The files of an evaluation: summary.json, CSV tables, figures and review.pdf."""

from __future__ import annotations

import json
import shutil
from functools import partial
from pathlib import Path

from fluxlab.report.envelope_files import write_envelope
from fluxlab.report.figures import CAUTION, save_figure
from fluxlab.report.forked import run_jobs
from fluxlab.report.plots.curves import (
    plot_inductances,
    plot_torque_harmonics,
    plot_torque_vs_angle,
    plot_torque_vs_position,
)
from fluxlab.report.plots.field import plot_field
from fluxlab.report.plots.winding import plot_winding_layout
from fluxlab.report.sheet import sheet_summary, write_review_sheet
from fluxlab.report.tables import evaluation_tables, table_comment, write_csv
from fluxlab.studies.averaging import slot_order_electrical
from fluxlab.studies.plausibility import point_warnings

__all__ = ["write_evaluation", "evaluation_warnings"]


def evaluation_warnings(evaluation) -> list[str]:
    """Implausible figures of the rated point (see :mod:`fluxlab.studies.plausibility`)."""

    point = evaluation.rated_point
    return point_warnings(evaluation.model, point.current_peak_A,
                          float(point.solution.b_norm.max()))


def _write_data(evaluation, out: Path, machine_file: Path | None, envelope) -> list[Path]:
    """summary.json (with the envelope's rated iron loss and efficiency when given), a copy
    of the machine file and the CSV tables."""

    summary = {**sheet_summary(evaluation.summary, envelope), "caution": CAUTION,
               "warnings": evaluation_warnings(evaluation)}
    (out / "summary.json").write_text(json.dumps(summary, indent=2, default=float))
    written = [out / "summary.json"]
    if machine_file is not None:
        shutil.copyfile(machine_file, out / "machine.toml")
        written.append(out / "machine.toml")
    for stem, columns in evaluation_tables(evaluation).items():
        written.append(write_csv(out / f"{stem}.csv", columns, table_comment(stem)))
    return written


def _curve_plots(evaluation) -> list[tuple]:
    """(file stem, data or None, plot function) of the torque and inductance curves and the
    torque harmonics."""
    position = plot_torque_vs_position
    return [
        ("torque_vs_position", evaluation.torque_vs_position,
         partial(position, unskewed=evaluation.torque_vs_position_unskewed)),
        ("torque_vs_position_overload", evaluation.torque_vs_position_overload, position),
        ("torque_harmonics", evaluation.ripple_studies() or None,
         partial(plot_torque_harmonics, slot_order=slot_order_electrical(
             evaluation.spec.stator.slots, evaluation.spec.pole_pairs))),
        ("torque_vs_current_angle", evaluation.torque_vs_angle or None, plot_torque_vs_angle),
        ("inductance_vs_current", evaluation.inductances, plot_inductances),
    ]


def _write_curves(plots: list[tuple], out: Path) -> list[Path]:
    """Draw and save the curves of :func:`_curve_plots` that have data."""
    import matplotlib.pyplot as plt

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

    fig, ax = plt.subplots(figsize=(8, 7.5))
    plot_field(evaluation.model, evaluation.rated_point.solution, ax=ax)
    s = evaluation.summary
    ax.set_title(f"Field at the rated point: {s['current_peak_A']:g} A peak, "
                 f"γ = {s['current_angle_deg']:.1f} deg, rotor position 0"
                 + (", the slice nearest mid-stack" if s.get("skew") else ""), fontsize=10)
    fig.tight_layout()
    written = save_figure(fig, out, "field_rated", dpi=170)
    fig, ax = plt.subplots(figsize=(11, 3.2))
    plot_winding_layout(evaluation.model.layout, ax=ax)
    fig.tight_layout()
    return written + save_figure(fig, out, "winding_layout", dpi=170)


def _write_sheet(evaluation, out: Path, envelope) -> list[Path]:
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

    out.mkdir(parents=True, exist_ok=True)
    written = _write_data(evaluation, out, machine_file, envelope)
    # two jobs of about equal drawing time (demo: sheet 1.3 s, five curves 1.2 s, field and
    # winding 1.2 s)
    plots = _curve_plots(evaluation)
    jobs = [lambda: _write_sheet(evaluation, out, envelope) + _write_curves(plots[:2], out),
            lambda: _write_field_and_winding(evaluation, out) + _write_curves(plots[2:], out)]
    if envelope is not None:
        jobs.append(lambda: write_envelope(envelope, out / "envelope"))
    return written + run_jobs(jobs, parallel)
