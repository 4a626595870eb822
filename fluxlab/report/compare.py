"""The comparison sheet: a few candidates side by side on one landscape page each.

Per page, up to :data:`PER_PAGE` candidates: their rotor outlines, a table of key figures,
and their torque curves overlaid (against rotor position and against current angle, when
the evaluation computed them). The same sheet is made from a sweep's best candidates and
from ``fluxlab evaluate`` output folders.
"""

from __future__ import annotations

import csv
import json
import logging
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fluxlab.errors import FluxlabError
from fluxlab.report.figures import caution_line
from fluxlab.report.plots.field import plot_outline
from fluxlab.spec.machine_file import load_machine

__all__ = ["PER_PAGE", "FIGURE_ROWS", "CompareEntry", "load_evaluate_folder",
           "compare_figure", "write_compare_pdf"]

log = logging.getLogger(__name__)

PER_PAGE = 4
# (summary key, table label, scale to the shown unit, format)
FIGURE_ROWS = (
    ("torque_mean_Nm", "mean torque (N·m)", 1.0, "{:.2f}"),
    ("torque_ripple_pct", "torque ripple, p-p (%)", 1.0, "{:.1f}"),
    ("saliency_apparent", "saliency Ld/Lq at the operating point", 1.0, "{:.2f}"),
    ("Ld_apparent_H", "Ld apparent at the operating point (mH)", 1e3, "{:.2f}"),
    ("Lq_apparent_H", "Lq apparent at the operating point (mH)", 1e3, "{:.2f}"),
    ("power_factor", "power factor (end leakage included)", 1.0, "{:.3f}"),
    ("terminal_voltage_peak_V", "terminal voltage at rated speed (V peak)", 1.0, "{:.0f}"),
    ("current_density_rms_A_per_mm2", "slot current density (A/mm² rms)", 1.0, "{:.2f}"),
    ("mtpa_angle_deg", "MTPA angle (deg from d-axis)", 1.0, "{:.1f}"),
    ("current_peak_A", "current (A peak)", 1.0, "{:.1f}"),
    ("current_angle_deg", "current angle (deg from d-axis)", 1.0, "{:.1f}"),
    ("nodes", "mesh nodes", 1.0, "{:.0f}"),
)
_COLOURS = ("#1f77b4", "#d62728", "#2ca02c", "#9467bd", "#ff7f0e", "#8c564b")


@dataclass(frozen=True)
class CompareEntry:
    """One candidate on the sheet.

    ``spec`` (a MachineSpec, None when unknown) is drawn as an outline; curves are tuples of
    arrays: (rotor position, deg; torque, N·m) and (current angle from the d-axis, deg;
    torque, N·m[; current, A peak]), None when not computed; a current-angle curve with
    its currents is drawn as one line per current. ``details`` maps extra table rows (a
    sweep's varied keys, file units) to their values.
    """

    label: str
    spec: object | None
    summary: dict
    torque_vs_position: tuple[np.ndarray, np.ndarray] | None = None
    torque_vs_current_angle: tuple[np.ndarray, ...] | None = None
    details: dict | None = None


def _read_curve(path: Path, x_name: str) -> tuple[np.ndarray, ...] | None:
    """(x, torque) from a CSV, with the currents as a third array when it has them."""
    if not path.exists():
        return None
    with path.open(newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    try:
        x = np.array([float(r[x_name]) for r in rows])
        y = np.array([float(r["torque_Nm"]) for r in rows])
        if rows and "current_peak_A" in rows[0]:
            return x, y, np.array([float(r["current_peak_A"]) for r in rows])
    except (KeyError, ValueError) as err:
        raise FluxlabError(f"{path}: needs numeric columns {x_name},torque_Nm ({err})") from err
    return x, y


def load_evaluate_folder(folder: str | Path, label: str | None = None) -> CompareEntry:
    """Read an evaluate output folder (summary.json, the torque CSVs, machine.toml).

    Raises
    ------
    FluxlabError
        When the folder has no readable ``summary.json`` or a curve file lacks its columns.
    """

    folder = Path(folder)
    try:
        summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError) as err:
        raise FluxlabError(f"{folder}: not an evaluate output folder (summary.json: {err})"
                           ) from err
    spec = None
    if (folder / "machine.toml").exists():
        try:
            spec = load_machine(folder / "machine.toml")
        except FluxlabError as err:  # still compare the numbers, without the outline
            log.warning("%s: machine.toml not drawn: %s", folder, err)
    return CompareEntry(
        label=label or folder.resolve().name,
        spec=spec,
        summary=summary,
        torque_vs_position=_read_curve(folder / "torque_vs_position.csv", "position_deg"),
        torque_vs_current_angle=_read_curve(folder / "torque_vs_current_angle.csv",
                                            "current_angle_deg"),
    )


def _outline(ax, entry: CompareEntry) -> None:
    ax.set_title(entry.label, fontsize=9)
    if entry.spec is None:
        ax.text(0.5, 0.5, "outline not available", ha="center", va="center", fontsize=8,
                color="0.5", transform=ax.transAxes)
        ax.set_axis_off()
        return
    plot_outline(entry.spec, ax=ax)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=6)


def _cell(summary: dict, key: str, scale: float, fmt: str) -> str:
    value = summary.get(key)
    if value is None or not isinstance(value, (int, float)):
        return "–"
    return fmt.format(value * scale)


def _table(ax, entries: Sequence[CompareEntry]) -> None:
    ax.set_axis_off()
    rows = [r for r in FIGURE_ROWS if any(e.summary.get(r[0]) is not None for e in entries)]
    text = [[_cell(e.summary, key, scale, fmt) for e in entries] for key, _, scale, fmt in rows]
    labels = [r[1] for r in rows]
    extra = list(dict.fromkeys(k for e in entries for k in (e.details or {})))
    text = [[_cell(e.details or {}, k, 1.0, "{:g}") for e in entries] for k in extra] + text
    labels = extra + labels
    # the table fills its axes (bbox), so many rows (a sweep's varied keys) shrink to fit
    # instead of running over the outlines and curves
    table = ax.table(cellText=text, rowLabels=labels, colLabels=[e.label for e in entries],
                     cellLoc="center", bbox=[0.0, 0.0, 1.0, 1.0])
    table.auto_set_font_size(False)
    # a row's height in points, less a margin of a fifth above and below the text
    row_pt = ax.get_position().height * ax.figure.get_figheight() * 72 / (len(labels) + 1)
    table.set_fontsize(min(8.0, 0.6 * row_pt))
    for j in range(len(entries)):
        table[0, j].get_text().set_color(_COLOURS[j % len(_COLOURS)])


_STYLES = ("-", "--", ":", "-.")


def _lines(curve: tuple[np.ndarray, ...]) -> list[tuple[str, np.ndarray, np.ndarray]]:
    """(current label, x, y) per current of a curve, sorted by x; one line without currents."""
    if len(curve) < 3:
        return [("", curve[0], curve[1])]
    out = []
    for current in dict.fromkeys(curve[2].tolist()):
        mask = curve[2] == current
        order = np.argsort(curve[0][mask], kind="stable")
        out.append((f", {current:g} A", curve[0][mask][order], curve[1][mask][order]))
    return out


def _curves(ax, entries: Sequence[CompareEntry], attr: str, xlabel: str, title: str) -> None:
    drawn = False
    for j, e in enumerate(entries):
        curve = getattr(e, attr)
        if curve is None:
            continue
        for k, (current, x, y) in enumerate(_lines(curve)):
            ax.plot(x, y, _STYLES[k % len(_STYLES)], marker="o", ms=2.5, lw=1.2,
                    color=_COLOURS[j % len(_COLOURS)], label=f"{e.label}{current}")
            drawn = True
    ax.set_title(title, fontsize=9)
    ax.set_xlabel(xlabel, fontsize=8)
    ax.set_ylabel("torque (N·m)", fontsize=8)
    ax.tick_params(labelsize=7)
    if drawn:
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=7, loc="best")
    else:
        ax.text(0.5, 0.5, "not computed (operating-point studies)", ha="center", va="center",
                fontsize=8, color="0.5", transform=ax.transAxes)
        ax.set_xticks([])
        ax.set_yticks([])


def compare_figure(entries: Sequence[CompareEntry], title: str = "Candidate comparison"):
    """One landscape A4 page comparing up to :data:`PER_PAGE` entries; returns the figure."""
    import matplotlib.pyplot as plt

    entries = list(entries)[:PER_PAGE]
    fig = plt.figure(figsize=(11.69, 8.27))
    curves = any(e.torque_vs_position is not None or e.torque_vs_current_angle is not None
                 for e in entries)
    # without curves (operating-point studies) outlines and table share the page
    ratios = (1.15, 1.0, 1.25) if curves else (1.6, 1.2)
    grid = fig.add_gridspec(len(ratios), 2 * len(entries), height_ratios=ratios,
                            left=0.24, right=0.97, top=0.92, bottom=0.1, hspace=0.45,
                            wspace=0.6)
    for j, e in enumerate(entries):
        _outline(fig.add_subplot(grid[0, 2 * j: 2 * j + 2]), e)
    _table(fig.add_subplot(grid[1, :]), entries)
    if curves:
        half = len(entries)
        _curves(fig.add_subplot(grid[2, :half]), entries, "torque_vs_position",
                "rotor position (mechanical deg)", "Torque against rotor position")
        _curves(fig.add_subplot(grid[2, half:]), entries, "torque_vs_current_angle",
                "current angle from the d-axis (electrical deg)",
                "Torque against current angle (line per current, A peak)")
    fig.suptitle(title, fontsize=12)
    fig.text(0.5, 0.025, caution_line(), ha="center", va="bottom", fontsize=7, wrap=True,
             style="italic")
    return fig


def write_compare_pdf(entries: Sequence[CompareEntry], path: str | Path,
                      title: str = "Candidate comparison") -> Path:
    """Write the comparison sheet, :data:`PER_PAGE` entries a page; returns the path."""
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_pdf import PdfPages

    path = Path(path)
    entries = list(entries)
    if not entries:
        raise FluxlabError(f"{path}: nothing to compare (no evaluated candidate)")
    pages = max(1, -(-len(entries) // PER_PAGE))
    with PdfPages(path) as pdf:
        for k in range(pages):
            chunk = entries[k * PER_PAGE:(k + 1) * PER_PAGE]
            page_title = title if pages == 1 else f"{title} ({k + 1}/{pages})"
            fig = compare_figure(chunk, page_title)
            pdf.savefig(fig)
            plt.close(fig)
    return path
