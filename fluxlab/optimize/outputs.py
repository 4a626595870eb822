"""The figures of a finished optimisation, written next to front.csv and history.csv.

``objectives.png`` (each objective over the generations), ``pareto.png`` and ``pareto.svg``
(the search designs, the verified front and the base machine; two objectives or more) and
``compare.pdf`` (the base machine and the verified front at the machine's own mesh, on the
comparison sheet of :mod:`fluxlab.report.compare`).
"""

from __future__ import annotations

import dataclasses
import logging
from pathlib import Path

from fluxlab.report.compare import write_compare_pdf
from fluxlab.report.figures import save_figure
from fluxlab.report.plots.optimize import plot_front, plot_objectives_over_run
from fluxlab.sweep.outputs import compare_entries
from fluxlab.sweep.store import ResultStore

__all__ = ["write_optimisation_outputs"]

log = logging.getLogger(__name__)


def _compare(result, store_path: Path) -> Path:
    rows = [result.base] + [r for r in result.verified if r in result.front]
    labels = ["base"] + [r["design"] for r in rows[1:]]
    with ResultStore(store_path) as store:
        entries = compare_entries([{**r, "candidate": ""} for r in rows], store,
                                  result.spec.base_dir)
    entries = [dataclasses.replace(e, label=label) for e, label in zip(entries, labels,
                                                                       strict=True)]
    title = (f"{result.spec.name}: the base machine and the verified front "
             f"({len(rows) - 1} designs, machine's own mesh)")
    return write_compare_pdf(entries, result.out_dir / "compare.pdf", title=title)


def write_optimisation_outputs(result, store_path: str | Path | None = None) -> list[Path]:
    """Draw the figures of an :class:`~fluxlab.optimize.run.OptimisationResult` into its
    output folder; ``store_path`` is the result store it used (default the folder's).
    Returns the files written."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from fluxlab.sweep.store import STORE_NAME

    out = result.out_dir
    objectives = [(o.figure, o.goal) for o in result.spec.objectives]
    written = save_figure(plot_objectives_over_run(result.history, objectives), out,
                          "objectives", ("png",))
    if len(objectives) >= 2:
        fig, ax = plt.subplots(figsize=(8.5, 6.0))
        plot_front(result.history, result.verified, result.front, objectives, ax=ax)
        ax.set_title(f"{result.spec.name}: {ax.get_title()}", fontsize=10)
        fig.tight_layout()
        written += save_figure(fig, out, "pareto", ("png", "svg"))
    if result.base.get("status") == "done" or result.front:
        written.append(_compare(result, Path(store_path or out / STORE_NAME)))
    else:
        log.warning("%s: nothing verified, no comparison sheet", result.spec.name)
    return written
