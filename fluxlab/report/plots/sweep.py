"""Figures of a sweep: the Pareto plot of two objectives and each parameter against each
objective. Both take the results table of :func:`fluxlab.sweep.run_sweep` (a list of dicts).

Objectives: the mean torque is maximised; the torque ripple (full studies) is minimised.
Operating-point sweeps have no ripple, so their Pareto plot shows torque against the power
factor (both maximised) and its title says so.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

__all__ = ["OBJECTIVE_LABELS", "pareto_objectives", "pareto_front", "front_rows",
           "label_points", "plot_pareto", "plot_parameters"]

OBJECTIVE_LABELS = {
    "torque_mean_Nm": "mean torque (N·m)",
    "torque_ripple_pct": "torque ripple, peak to peak (% of mean torque)",
    "power_factor": "power factor",
    "saliency_apparent": "saliency Ld/Lq at the operating point",
}


def pareto_objectives(rows: Sequence[dict]) -> tuple[str, bool]:
    """The second objective of the Pareto plot and whether it is maximised.

    ``("torque_ripple_pct", False)`` when any done row has a ripple, else
    ``("power_factor", True)``.
    """
    has_ripple = any(r.get("status") == "done" and r.get("torque_ripple_pct") is not None
                     for r in rows)
    return ("torque_ripple_pct", False) if has_ripple else ("power_factor", True)


def pareto_front(f1: np.ndarray, f2: np.ndarray) -> np.ndarray:
    """Indices of the non-dominated points when minimising both ``f1`` and ``f2``.

    A point is dominated when another is no worse in both and better in one. Sorting by
    ``f1`` then ``f2`` and keeping each point that improves the best ``f2`` so far finds the
    front in O(n log n); of identical points the first is kept.
    """
    f1, f2 = np.asarray(f1, float), np.asarray(f2, float)
    order = np.lexsort((f2, f1))
    front, best = [], np.inf
    for i in order:
        if f2[i] < best:
            front.append(i)
            best = f2[i]
    return np.array(sorted(front), dtype=int)


def _done(rows: Sequence[dict], *names: str) -> list[dict]:
    return [r for r in rows if r.get("status") == "done"
            and all(r.get(n) is not None for n in names)]


def _points(rows: Sequence[dict]):
    second, maximise = pareto_objectives(rows)
    done = _done(rows, "torque_mean_Nm", second)
    torque = np.array([r["torque_mean_Nm"] for r in done], float)
    other = np.array([r[second] for r in done], float)
    return done, torque, other, second, maximise


def front_rows(rows: Sequence[dict]) -> list[dict]:
    """The done rows on the Pareto front, highest torque first."""
    done, torque, other, _, maximise = _points(rows)
    if not done:
        return []
    idx = pareto_front(-torque, -other if maximise else other)
    return sorted((done[i] for i in idx), key=lambda r: -r["torque_mean_Nm"])


_OFFSETS = ((6, 5), (6, -13), (-26, 5), (-26, -13), (6, 16), (-26, 16), (6, -24), (-26, -24))


def _box_clear(box, dots: np.ndarray, boxes: list, margin: float) -> bool:
    x0, y0, x1, y1 = box
    inside = ((dots[:, 0] > x0 - margin) & (dots[:, 0] < x1 + margin)
              & (dots[:, 1] > y0 - margin) & (dots[:, 1] < y1 + margin))
    apart = all(x1 < a or x0 > c or y1 < b or y0 > d for a, b, c, d in boxes)
    return not inside.any() and apart


def label_points(ax, xs, ys, texts, obstacles) -> None:
    """Annotate points, each label at the first offset (points) whose box is clear of the
    earlier labels and of the other plotted points ``obstacles`` ((n, 2), data units)."""
    ax.autoscale_view()
    to_px = ax.transData.transform
    scale = ax.figure.dpi / 72.0  # pixels per point
    all_dots = to_px(np.asarray(obstacles, float))
    boxes: list[tuple[float, float, float, float]] = []
    for x, y, text in zip(xs, ys, texts, strict=True):
        px, py = to_px((x, y))
        dots = all_dots[np.hypot(all_dots[:, 0] - px, all_dots[:, 1] - py) > 1.0]
        w, h = (5.5 * len(text) + 2) * scale, 9 * scale
        choice = _OFFSETS[0]
        for dx, dy in _OFFSETS:
            x0, y0 = px + dx * scale, py + dy * scale
            if _box_clear((x0, y0, x0 + w, y0 + h), dots, boxes, 4 * scale):
                choice = (dx, dy)
                break
        x0, y0 = px + choice[0] * scale, py + choice[1] * scale
        boxes.append((x0, y0, x0 + w, y0 + h))
        ax.annotate(text, (x, y), textcoords="offset points", xytext=choice, fontsize=8,
                    color="#7b241c")


def plot_pareto(rows: Sequence[dict], ax=None, label_front: bool = True):
    """Mean torque against ripple (or power factor), coloured by the apparent saliency.

    The non-dominated candidates are ringed, joined by a line and labelled by candidate
    number. Returns the axes.
    """
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(8, 6))
    done, torque, other, second, maximise = _points(rows)
    if not done:
        ax.text(0.5, 0.5, "no evaluated candidate to plot", ha="center", transform=ax.transAxes)
        return ax
    saliency = np.array([np.nan if r.get("saliency_apparent") is None
                         else r["saliency_apparent"]
                         for r in done], float)
    sc = ax.scatter(other, torque, c=saliency, cmap="viridis", s=36, zorder=2)
    ax.scatter([], [], s=36, color="0.45", label="candidate (colour: saliency)")
    ax.figure.colorbar(sc, ax=ax, label=OBJECTIVE_LABELS["saliency_apparent"])
    idx = pareto_front(-torque, -other if maximise else other)
    idx = idx[np.argsort(other[idx])]
    ax.plot(other[idx], torque[idx], "-", color="#c0392b", lw=1.2, zorder=1)
    ax.scatter(other[idx], torque[idx], s=110, facecolors="none", edgecolors="#c0392b",
               linewidths=1.6, zorder=3, label="non-dominated (Pareto front)")
    if label_front:
        label_points(ax, other[idx], torque[idx], [f"#{done[i]['candidate']}" for i in idx],
                     np.column_stack([other, torque]))
    ax.set_xlabel(OBJECTIVE_LABELS[second] + (", higher is better" if maximise
                                              else ", lower is better"))
    ax.set_ylabel(OBJECTIVE_LABELS["torque_mean_Nm"] + ", higher is better")
    if second == "power_factor":
        ax.set_title("Mean torque vs power factor (operating-point studies: no ripple "
                     "computed)", fontsize=10)
    else:
        ax.set_title("Mean torque vs torque ripple", fontsize=10)
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best", fontsize=8)
    return ax


def plot_parameters(rows: Sequence[dict], parameters: Sequence[str], objectives=None):
    """A grid of scatter plots: each varied parameter (columns) against each objective
    (rows). Returns the figure."""
    import matplotlib.pyplot as plt

    if objectives is None:
        second, _ = pareto_objectives(rows)
        objectives = ("torque_mean_Nm", second, "saliency_apparent")
    n_rows, n_cols = len(objectives), len(parameters)
    fig, axes = plt.subplots(n_rows, n_cols,
                             figsize=(max(3.4 * n_cols + 0.8, 6.0), 2.6 * n_rows + 1.0),
                             squeeze=False, sharex="col", sharey="row")
    for i, obj in enumerate(objectives):
        done = _done(rows, obj)
        for j, par in enumerate(parameters):
            ax = axes[i, j]
            ax.scatter([r[par] for r in done], [r[obj] for r in done], s=16, color="#2e86c1")
            ax.grid(True, alpha=0.3)
            if i == n_rows - 1:
                ax.set_xlabel(par, fontsize=8)
            if j == 0:
                ax.set_ylabel(OBJECTIVE_LABELS.get(obj, obj), fontsize=8)
            ax.tick_params(labelsize=7)
    counts = {s: sum(r.get("status") == s for r in rows) for s in ("done", "rejected", "failed")}
    fig.suptitle("Each varied parameter (file units) against each result\n"
                 + ", ".join(f"{v} {k}" for k, v in counts.items()) + " candidates", fontsize=10)
    fig.tight_layout()
    return fig
