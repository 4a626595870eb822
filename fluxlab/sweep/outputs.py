"""The figures of a finished sweep: Pareto plot, parameter grid and comparison sheet.

Written next to ``results.csv``: ``pareto.png`` and ``pareto.svg``, ``parameters.png`` and
``compare.pdf`` (the best few candidates: the Pareto front by descending torque, then the
next highest torques).
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from fluxlab.errors import SpecError
from fluxlab.report.compare import CompareEntry, write_compare_pdf
from fluxlab.report.figures import save_figure
from fluxlab.report.plots.sweep import front_rows, plot_parameters, plot_pareto
from fluxlab.spec.machine_file import machine_from_dict
from fluxlab.sweep.store import STORE_NAME, ResultStore
from fluxlab.sweep.sweepfile import SweepSpec

__all__ = ["best_rows", "compare_entries", "write_sweep_outputs"]

log = logging.getLogger(__name__)


def best_rows(rows: Sequence[dict], count: int = 4) -> list[dict]:
    """Up to ``count`` done rows: the Pareto front by descending torque, then by torque."""

    chosen = front_rows(rows)[:count]
    seen = {r["key"] for r in chosen}
    rest = sorted((r for r in rows if r.get("status") == "done"
                   and r.get("torque_mean_Nm") is not None and r["key"] not in seen),
                  key=lambda r: -r["torque_mean_Nm"])
    for r in rest:
        if len(chosen) >= count:
            break
        if r["key"] not in seen:
            chosen.append(r)
            seen.add(r["key"])
    return chosen


def _curve(curves: dict | None, name: str, x_name: str):
    if not curves or name not in curves:
        return None
    return np.asarray(curves[name][x_name], float), np.asarray(curves[name]["torque_Nm"], float)


def compare_entries(rows: Sequence[dict], store: ResultStore, base_dir: Path) -> list:
    """Comparison-sheet entries of sweep rows, with outlines and curves from the store."""

    entries = []
    for row in rows:
        stored = store.get(row["key"])
        try:
            spec = machine_from_dict(stored.machine, base_dir)
        except SpecError:
            spec = None
        entries.append(CompareEntry(
            label=f"#{row['candidate']}", spec=spec, summary=stored.summary or {},
            details=dict(stored.parameters),
            torque_vs_position=_curve(stored.curves, "torque_vs_position", "position_deg"),
            torque_vs_current_angle=_curve(stored.curves, "torque_vs_current_angle",
                                           "current_angle_deg"),
        ))
    return entries


def write_sweep_outputs(sweep: SweepSpec, rows: Sequence[dict], out_dir: str | Path,
                        best: int = 4) -> list[Path]:
    """Write the sweep's figures into ``out_dir``; returns the files written.

    Nothing is drawn when no candidate was evaluated (the CSV still lists every row).
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    out = Path(out_dir)
    if not any(r.get("status") == "done" for r in rows):
        log.warning("%s: no candidate evaluated, no figures drawn", sweep.name)
        return []
    written = []
    fig, ax = plt.subplots(figsize=(8.5, 6.0))
    plot_pareto(rows, ax=ax)
    ax.set_title(f"{sweep.name}: {ax.get_title()}", fontsize=10)
    fig.tight_layout()
    written += save_figure(fig, out, "pareto", ("png", "svg"))
    written += save_figure(plot_parameters(rows, [p.path for p in sweep.parameters]), out,
                           "parameters", ("png",))
    with ResultStore(out / STORE_NAME) as store:
        entries = compare_entries(best_rows(rows, best), store, sweep.base_dir)
    written.append(write_compare_pdf(entries, out / "compare.pdf",
                                     title=f"{sweep.name}: best {len(entries)} candidates "
                                           f"({sweep.studies} studies)"))
    return written
