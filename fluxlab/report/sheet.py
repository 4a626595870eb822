"""The review sheet of an evaluation (PDF), for a design review: the rated point's terminal
figures, losses and key figures with curves on page one, the torque ripple on page two, the
envelope (when computed) after them."""

from __future__ import annotations

import datetime
import math
from pathlib import Path

from fluxlab.report.figures import caution_line
from fluxlab.report.plots.curves import (
    plot_inductances,
    plot_torque_harmonics,
    plot_torque_vs_angle,
    plot_torque_vs_position,
)
from fluxlab.report.plots.envelope import add_envelope_page
from fluxlab.report.plots.field import plot_field, plot_outline
from fluxlab.studies.averaging import slot_order_electrical
from fluxlab.studies.evaluate import Evaluation

__all__ = ["key_figures", "rated_figures", "sheet_summary", "write_review_sheet"]


def _fmt(value, digits=4) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "n/a"
    return f"{value:.{digits}g}"


def sheet_summary(summary: dict, envelope=None) -> dict:
    """The evaluation's summary with the rated point's iron loss, efficiency and mechanical
    loss of an envelope result (None without one: those need ``evaluate --full``)."""
    rated = envelope.rated_point if envelope is not None else {}
    return {**summary,
            "iron_loss_W": rated.get("iron_loss_W"),
            "mechanical_loss_W": rated.get("mechanical_loss_W"),
            "efficiency": rated.get("efficiency"),
            "voltage_limit_peak_V": (envelope.settings.voltage_limit_peak_V
                                     if envelope is not None else None)}


def rated_figures(summary: dict) -> list[tuple[str, str]]:
    """(quantity with unit, value) rows of the rated point at the rated speed (a summary of
    :func:`sheet_summary`): terminal figures, losses, efficiency, inductances."""
    limit = summary.get("voltage_limit_peak_V")
    full = "n/a (evaluate --full)"
    iron, eff = summary.get("iron_loss_W"), summary.get("efficiency")
    mech = summary.get("mechanical_loss_W")
    return [
        ("current (A peak) / angle γ (deg from d-axis)",
         f"{_fmt(summary['current_peak_A'])} / {_fmt(summary['current_angle_deg'])}"),
        ("current density in the slots (A/mm² rms)",
         _fmt(summary.get("current_density_rms_A_per_mm2"), 3)),
        ("speed (rpm) / mean torque (N·m)",
         f"{_fmt(summary.get('speed_rpm'))} / {_fmt(summary['torque_mean_Nm'])}"),
        ("power T·ω (kW)", _fmt(_kilo(summary.get("power_W")), 3)),
        ("terminal voltage, phase peak (V)" + (" / limit" if limit else ""),
         _fmt(summary.get("terminal_voltage_peak_V"))
         + (f" / {_fmt(limit)}" if limit else "")),
        ("power factor: with end leakage / 2-D",
         f"{_fmt(summary['power_factor'], 3)} / {_fmt(summary.get('power_factor_2d'), 3)}"),
        ("Ld / Lq, 2-D, operating point (mH)",
         f"{_fmt(_milli(summary['Ld_apparent_H']))} / {_fmt(_milli(summary['Lq_apparent_H']))}"),
        ("end-winding leakage L_w (mH)", _fmt(_milli(summary.get("end_leakage_H")), 3)),
        ("Ld / Lq with end leakage (mH)",
         f"{_fmt(_milli(summary.get('Ld_with_end_leakage_H')))} / "
         f"{_fmt(_milli(summary.get('Lq_with_end_leakage_H')))}"),
        ("saliency Ld/Lq, 2-D, operating point", _fmt(summary["saliency_apparent"])),
        (f"phase resistance at {_fmt(summary.get('copper_temperature_C'), 3)} °C (Ω)",
         _fmt(summary.get("phase_resistance_Ohm"))),
        ("copper loss 3/2 R I² (W)", _fmt(summary.get("copper_loss_W"))),
        ("iron loss (W)" + (" / mechanical (W)" if mech else ""),
         (_fmt(iron) if iron is not None else full) + (f" / {_fmt(mech)}" if mech else "")),
        ("efficiency" + (" (mech. loss included)" if mech else " (no mech. loss)"),
         _fmt(eff, 3) if eff is not None else full),
    ]


def key_figures(summary: dict) -> list[tuple[str, str]]:
    """(quantity with unit, value) rows of the magnetic key figures and the ripple."""
    avg = summary.get("averaging", {})
    rows = [
        ("ψd / ψq, position mean (Wb)",
         f"{_fmt(summary['psi_d_Wb'])} / {_fmt(summary['psi_q_Wb'])}"),
        ("Ld / Lq one axis at a time, 2-D (mH)",
         f"{_fmt(_milli(summary['Ld_one_axis_H']))} / {_fmt(_milli(summary['Lq_one_axis_H']))}"),
        (f"mean torque, {avg.get('positions', '?')} positions (N·m)",
         _fmt(summary["torque_mean_Nm"])),
        ("air-gap torque, ripple mean (N·m)", _fmt(summary["torque_maxwell_mean_Nm"])),
        ("torque ripple at rated, peak to peak (%)", _fmt(summary["torque_ripple_pct"], 3)),
        ("MTPA at rated current (deg; N·m)",
         f"{_fmt(summary['mtpa_angle_deg'], 3)}; {_fmt(summary['mtpa_torque_Nm'])}"),
    ]
    if summary.get("overload_current_peak_A"):
        rows.append((f"MTPA at {summary['overload_current_peak_A']:g} A (deg; N·m)",
                     f"{_fmt(summary['overload_mtpa_angle_deg'], 3)}; "
                     f"{_fmt(summary['overload_mtpa_torque_Nm'])}"))
        rows.append((f"torque ripple at {summary['overload_current_peak_A']:g} A MTPA, p-p (%)",
                     _fmt(summary.get("overload_torque_ripple_pct"), 3)))
    if summary.get("skew"):
        rows.insert(5, ("without skew: torque (N·m); ripple (%)",
                        f"{_fmt(summary['torque_mean_unskewed_Nm'])}; "
                        f"{_fmt(summary['torque_ripple_unskewed_pct'], 3)}"))
    rows += _flux_density_rows(summary.get("flux_density"))
    rows.append(("mesh: nodes / order", f"{summary['nodes']} / P{summary['element_order']}"))
    return rows


def _kilo(value):
    return None if value is None else value * 1e-3


def _milli(value):
    return None if value is None else value * 1e3


def _flux_density_rows(densities: dict | None) -> list[tuple[str, str]]:
    """Rows of the per-region flux densities at the rated point, position 0."""
    if not densities:
        return []
    rows = []
    for region, label in (("stator_teeth", "teeth"), ("stator_yoke", "yoke")):
        if region in densities:
            d = densities[region]
            rows.append((f"|B| stator {label}: mean / 99 % (T)",
                         f"{_fmt(d['mean_T'], 3)} / {_fmt(d['p99_T'], 3)}"))
    rotor = [f"{_fmt(densities[r]['p99_T'], 3)}" for r in ("rotor_flux_guides", "rotor_ribs")
             if r in densities]
    if rotor:
        rows.append(("|B| rotor guides / ribs: 99 % (T)", " / ".join(rotor)))
    return rows


def _table(ax, rows, title: str) -> None:
    """A two-column table filling ``ax`` exactly (no row runs outside it)."""
    ax.axis("off")
    ax.set_title(title)
    table = ax.table(cellText=[list(r) for r in rows], colLabels=["quantity", "value"],
                     colWidths=[0.66, 0.34], cellLoc="left", bbox=[0.0, 0.0, 1.0, 1.0])
    table.auto_set_font_size(False)
    table.set_fontsize(6.5)


def _finish_page(fig, left: float) -> None:
    """The sheet's font sizes on every axes, and the caution at the foot of the page."""
    for a in fig.axes:
        a.title.set_fontsize(9)
        a.tick_params(labelsize=7)
        a.xaxis.label.set_fontsize(8)
        a.yaxis.label.set_fontsize(8)
    fig.text(left, 0.03, caution_line(), fontsize=7.5, wrap=True, va="bottom")


def _ripple_page(pdf, evaluation: Evaluation) -> None:
    """The torque ripple: position curves at rated and at the overload MTPA, harmonics."""
    import matplotlib.pyplot as plt

    spec = evaluation.spec
    fig = plt.figure(figsize=(11.69, 8.27))
    grid = fig.add_gridspec(2, 2, left=0.07, right=0.96, top=0.9, bottom=0.15, wspace=0.22,
                            hspace=0.42)
    fig.suptitle(f"Torque ripple: {spec.name}", fontsize=14, x=0.07, ha="left")
    plot_torque_vs_position(evaluation.torque_vs_position, ax=fig.add_subplot(grid[0, 0]),
                            unskewed=evaluation.torque_vs_position_unskewed)
    overload = evaluation.torque_vs_position_overload
    if overload is not None:
        plot_torque_vs_position(overload, ax=fig.add_subplot(grid[0, 1]))
    plot_torque_harmonics(evaluation.ripple_studies(),
                          slot_order_electrical(spec.stator.slots, spec.pole_pairs),
                          ax=fig.add_subplot(grid[1, :]))
    _finish_page(fig, 0.07)
    pdf.savefig(fig)
    plt.close(fig)


def write_review_sheet(evaluation: Evaluation, path: Path, field_solution=None,
                       envelope=None) -> Path:
    """Write the A4 landscape review sheet of ``evaluation`` to ``path`` (PDF).

    Page one: the rated point's terminal figures and losses, the magnetic key figures,
    torque against current angle, saturation, the field; page two: the torque ripple at
    rated and overload (when computed). With an ``envelope`` result
    (:func:`fluxlab.envelope.envelope_study`) its page follows, and the rated point's iron
    loss and efficiency fill their rows.
    """
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_pdf import PdfPages

    spec = evaluation.spec
    summary = sheet_summary(evaluation.summary, envelope)
    fig = plt.figure(figsize=(11.69, 8.27))
    grid = fig.add_gridspec(2, 3, left=0.05, right=0.97, top=0.84, bottom=0.12,
                            wspace=0.25, hspace=0.34, width_ratios=[0.85, 1.25, 1.25],
                            height_ratios=[1.1, 1.0])
    fig.suptitle(f"fluxlab review sheet: {spec.name}", fontsize=14, x=0.05, ha="left")
    fig.text(0.05, 0.89,
             f"{spec.poles} poles, {spec.stator.slots} slots, {len(spec.rotor.barriers)} "
             f"{spec.rotor.barrier_shape} barrier(s) per pole, stack {spec.stack_length * 1e3:g} "
             f"mm, rotor steel {spec.materials['rotor'].name}"
             + (f", skew {summary['skew']['angle_deg']:.3g} deg in {summary['skew']['slices']} "
                "slices" if summary.get("skew") else "") + ".   fluxlab "
             f"{summary['fluxlab_version']}, {datetime.date.today().isoformat()}\n"
             "Conventions: currents and voltages are peak phase values; current angle from the "
             "d-axis (least reluctance); saliency ratio = Ld/Lq; amplitude-invariant Park "
             "transform;\ncounter-clockwise positive; 2-D figures leave out the end winding, "
             "terminal figures (voltage, power factor) include its leakage.", fontsize=7.5,
             va="bottom")
    ax = fig.add_subplot(grid[0, 0])
    plot_outline(spec, ax=ax, full=True)
    ax.set_title("cross-section (mm)", fontsize=9)
    _table(fig.add_subplot(grid[0, 1]), rated_figures(summary),
           f"Rated point at {_fmt(summary.get('speed_rpm'))} rpm")
    _table(fig.add_subplot(grid[0, 2]), key_figures(summary),
           "Magnetic figures, ripple, flux density")
    curves = [
        (evaluation.torque_vs_angle or None, plot_torque_vs_angle, grid[1, 0],
         "Torque vs current angle (position means)"),
        (evaluation.inductances, plot_inductances, grid[1, 1],
         "Saturation, current on one axis at a time"),
    ]
    for data, plot, cell, title in curves:
        if data is not None:
            plot(data, ax=fig.add_subplot(cell)).set_title(title)
    if field_solution is not None:
        plot_field(evaluation.model, field_solution, ax=fig.add_subplot(grid[1, 2])).set_title(
            "Field at the rated point, position 0"
            + (" (mid-stack slice)" if summary.get("skew") else ""))
    _finish_page(fig, 0.05)
    with PdfPages(path) as pdf:
        pdf.savefig(fig)
        plt.close(fig)
        if evaluation.torque_vs_position is not None:
            _ripple_page(pdf, evaluation)
        if envelope is not None:
            add_envelope_page(pdf, envelope)
    return path
