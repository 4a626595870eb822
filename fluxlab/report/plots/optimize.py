"""Figures of an optimisation: the objectives over the run, and the front with the base.

Both take the tables of :func:`fluxlab.optimize.run_optimisation` (lists of dicts: the
history, the verified designs) and the objectives as ``(figure, goal)`` pairs.
"""

from __future__ import annotations

import textwrap
from collections.abc import Sequence

import numpy as np

from fluxlab.report.plots.sweep import OBJECTIVE_LABELS, label_points

__all__ = ["objective_label", "plot_objectives_over_run", "plot_front"]

_SEARCH, _FRONT, _VERIFIED, _BASE = "0.62", "#e67e22", "#1f4e9c", "black"


def objective_label(figure: str, goal: str, width: int | None = None) -> str:
    """The axis label of an objective: its name and unit, and which way is better; wrapped
    at ``width`` characters when given."""
    better = "higher is better" if goal == "max" else "lower is better"
    text = f"{OBJECTIVE_LABELS.get(figure, figure)}, {better}"
    return text if width is None else "\n".join(textwrap.wrap(text, width))


def _values(rows: Sequence[dict], figure: str) -> np.ndarray:
    return np.array([np.nan if r.get(figure) is None else r[figure] for r in rows], float)


def plot_objectives_over_run(history: Sequence[dict], objectives: Sequence[tuple[str, str]]):
    """One panel per objective against the generation: every feasible design of the search
    (dots), the best feasible so far (line) and the base machine at the search fidelity
    (dashed). Returns the figure."""
    import matplotlib.pyplot as plt

    search = [r for r in history if r["phase"] == "search"]
    base = [r for r in history if r["phase"] == "base"]
    fig, axes = plt.subplots(len(objectives), 1, figsize=(7.5, 2.6 * len(objectives) + 1.0),
                             sharex=True, squeeze=False)
    gens = np.array([r["generation"] for r in search], int)
    feasible = np.array([bool(r["feasible"]) for r in search])
    last = int(gens.max()) if gens.size else 1
    for ax, (figure, goal) in zip(axes[:, 0], objectives, strict=True):
        values = _values(search, figure)
        ax.scatter(gens[feasible], values[feasible], s=12, color=_SEARCH, alpha=0.7,
                   label="feasible design (search mesh)")
        pick = np.fmax if goal == "max" else np.fmin
        best = [pick.reduce(values[feasible & (gens <= g)]) if (feasible & (gens <= g)).any()
                else np.nan for g in range(1, last + 1)]
        ax.plot(range(1, last + 1), best, "-o", ms=4, color=_FRONT, lw=1.8,
                label="best feasible so far (end of generation)")
        if base and base[0].get(figure) is not None:
            ax.axhline(base[0][figure], color=_BASE, ls="--", lw=1.0,
                       label="base machine (search mesh)")
        ax.set_ylabel(objective_label(figure, goal, width=28), fontsize=8)
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=7, loc="best")
    axes[-1, 0].set_xlabel("generation")
    axes[-1, 0].xaxis.get_major_locator().set_params(integer=True)
    infeasible = int((~feasible).sum())
    fig.suptitle(f"Objectives over the run: {len(search)} search evaluations, "
                 f"{infeasible} infeasible (invalid geometry, failed or outside a "
                 "constraint)", fontsize=9)
    fig.tight_layout()
    return fig


def plot_front(history: Sequence[dict], verified: Sequence[dict], front: Sequence[dict],
               objectives: Sequence[tuple[str, str]], ax=None):
    """The first objective (y) against the second (x): the search's feasible designs and
    its non-dominated ones (search mesh), the verified designs at the machine's own mesh
    (the verified front joined and labelled), and the base machine at both meshes (stars).
    Returns the axes."""
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(8, 6))
    (fy, gy), (fx, gx) = objectives[0], objectives[1]
    search = [r for r in history if r["phase"] == "search"]
    ok = [r for r in search if r["feasible"]]
    bad = [r for r in search if not r["feasible"] and r.get(fx) is not None]
    ax.scatter(_values(ok, fx), _values(ok, fy), s=14, color=_SEARCH,
               label=f"feasible search design ({len(ok)}, search mesh)")
    if bad:
        ax.scatter(_values(bad, fx), _values(bad, fy), s=16, marker="x", color="#c0392b",
                   alpha=0.6, label=f"outside a constraint ({len(bad)}, search mesh)")
    designs = [r for r in verified if r["design"] != "base" and None not in
               (r.get(fx), r.get(fy), r.get(f"search_{fx}"), r.get(f"search_{fy}"))]
    for r in designs:  # from the search mesh to the machine's own
        ax.annotate("", (r[fx], r[fy]), (r[f"search_{fx}"], r[f"search_{fy}"]),
                    arrowprops={"arrowstyle": "->", "color": _VERIFIED, "lw": 0.7,
                                "alpha": 0.6})
    ax.scatter([r[f"search_{fx}"] for r in designs], [r[f"search_{fy}"] for r in designs],
               s=60, facecolors="none", edgecolors=_FRONT, linewidths=1.4,
               label="chosen for verifying (search mesh)")
    ax.scatter(_values(designs, fx), _values(designs, fy), s=36, color=_VERIFIED, zorder=3,
               label="verified at the machine's own mesh")
    order = sorted(front, key=lambda r: r[fx])
    ax.plot([r[fx] for r in order], [r[fy] for r in order], "-", color=_VERIFIED, lw=1.2,
            zorder=2, label="verified front")
    base_search = next((r for r in history if r["phase"] == "base"), None)
    base = next((r for r in verified if r["design"] == "base"), None)
    if base_search is not None and base_search.get(fx) is not None:
        ax.scatter([base_search[fx]], [base_search[fy]], marker="*", s=160, zorder=4,
                   facecolors="none", edgecolors=_BASE, label="base machine (search mesh)")
    if base is not None and base.get(fx) is not None:
        ax.scatter([base[fx]], [base[fy]], marker="*", s=160, color=_BASE, zorder=4,
                   label="base machine (its own mesh)")
    labelled = [*order, *([base] if base is not None and base.get(fx) is not None else [])]
    obstacles = [(r[fx], r[fy]) for r in [*ok, *designs, *labelled]]
    label_points(ax, [r[fx] for r in labelled], [r[fy] for r in labelled],
                 [r["design"] for r in labelled], obstacles)
    ax.set_xlabel(objective_label(fx, gx))
    ax.set_ylabel(objective_label(fy, gy))
    ax.margins(x=0.08, y=0.08)  # room for the labels at the ends
    ax.set_title("search designs and the verified front", fontsize=10)
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    return ax
