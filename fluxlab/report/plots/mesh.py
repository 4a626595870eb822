"""Pictures of a meshed machine sector: regions coloured and labelled, mesh edges drawn."""

from __future__ import annotations

import numpy as np

from fluxlab.mesh.machine_mesh import MachineMesh

__all__ = ["region_colour", "plot_mesh"]

_COLOURS = {
    "stator_iron": "#9aa5b1",
    "rotor_iron": "#7f8c99",
    "shaft": "#d9c9a3",
    "barrier": "#bfe3f5",
    "airgap": "#ffffff",
    "slot_opening": "#f4f4f4",
    "layer_0": "#f2a65a",
    "layer_1": "#e07a5f",
}


def region_colour(name: str) -> str:
    """Fill colour of a region by its kind (iron, barrier, slot layer, air)."""
    for key, colour in _COLOURS.items():
        if key in name:
            return colour
    return "#cccccc"


def _label(name: str) -> str | None:
    if name.startswith("slot_") and name.endswith("layer_0"):
        return name.split("_")[1]  # the slot number, once per slot
    if name.startswith("slot_") or name.startswith("airgap"):
        return None
    return name.replace("_", " ")


def _draw_labels(ax, machine: MachineMesh, centroids: np.ndarray) -> None:
    """One label per region, on one of its elements, kept apart from the other labels."""
    span = np.ptp(centroids, axis=0).max()
    placed: list[np.ndarray] = []
    for name, elements in sorted(machine.regions.items(), key=lambda kv: len(kv[1])):
        text = _label(name)
        if text is None:
            continue
        c = centroids[elements]
        score = np.sum((c - c.mean(0)) ** 2, axis=1)
        for other in placed:  # push away from labels already placed
            too_close = np.sum((c - other) ** 2, axis=1) < (0.08 * span) ** 2
            score = score + too_close * 1e6
        at = c[np.argmin(score)]
        placed.append(at)
        ax.text(*at, text, ha="center", va="center", fontsize=7, clip_on=True,
                bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.75))


def _legend(ax) -> None:
    from matplotlib.patches import Patch

    entries = [
        ("stator iron", "stator_iron"), ("rotor iron", "rotor_iron"), ("flux barrier", "barrier"),
        ("shaft", "shaft"), ("coil side, top layer", "layer_0"),
        ("coil side, bottom layer", "layer_1"), ("slot opening / air gap", "slot_opening"),
    ]
    handles = [Patch(facecolor=region_colour(key), edgecolor="#555555", label=text)
               for text, key in entries]
    ax.legend(handles=handles, loc="upper right", fontsize=7, framealpha=0.9)


def plot_mesh(machine: MachineMesh, ax=None, edges: bool = True, labels: bool = True):
    """Draw the sector in mm: regions filled by kind, optional mesh edges and labels.

    Returns the matplotlib axes.
    """
    import matplotlib.pyplot as plt
    from matplotlib.collections import PolyCollection

    if ax is None:
        _, ax = plt.subplots(figsize=(8, 8))
    p_mm = machine.mesh.p.T * 1e3
    t = machine.mesh.t.T
    colours = np.empty(len(t), dtype=object)
    for name, elements in machine.regions.items():
        colours[elements] = region_colour(name)
    ax.add_collection(
        PolyCollection(
            p_mm[t], facecolors=list(colours),
            edgecolors="#33333340" if edges else "face", linewidths=0.15 if edges else 0.0,
            rasterized=True,  # tens of thousands of polygons: keep vector files small
        )
    )
    if labels:
        _draw_labels(ax, machine, p_mm[t].mean(axis=1))
    _legend(ax)
    ax.set_aspect("equal")
    ax.autoscale_view()
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    return ax
