"""Figure of a winding layout: a slot table coloured by phase."""

from __future__ import annotations

import math

import numpy as np

from fluxlab.machine.winding import WindingLayout, winding_factor

__all__ = ["plot_winding_layout", "PHASE_COLOURS"]

#: Fill colour of each phase (a, b, c); +z sides are drawn in the full colour, -z sides
#: in a lighter tint of it, so the label text stays black and readable on both.
PHASE_COLOURS = ("#d95f5f", "#e8c14a", "#5f8fd9")
_MAX_SLOTS_PER_BAND = 36  # longer tables wrap into bands so labels keep their size
_CELL_IN = 0.42  # inches per slot cell when the function makes its own figure
_MIN_WIDTH_IN = 7.5  # room for the title and legend of small tables


def _tint(colour: str, amount: float) -> tuple[float, float, float]:
    from matplotlib.colors import to_rgb

    rgb = np.array(to_rgb(colour))
    return tuple(rgb + (1.0 - rgb) * amount)


def _bands(slots: int) -> list[range]:
    n = math.ceil(slots / _MAX_SLOTS_PER_BAND)
    width = math.ceil(slots / n)
    return [range(i, min(i + width, slots)) for i in range(0, slots, width)]


def _title(layout: WindingLayout) -> str:
    kind = "double layer" if layout.layers == 2 else "single layer"
    tau = layout.slots / layout.poles
    tau_txt = f"{tau:g}" if tau == int(tau) else f"{tau:.3g}"
    y = layout.coil_pitch_slots
    return (
        f"Q = {layout.slots} slots, 2p = {layout.poles} poles, {kind}\n"
        f"coil pitch {y} slot{'s' if y > 1 else ''} (pole pitch {tau_txt} slots), "
        f"fundamental winding factor $k_{{w1}}$ = {winding_factor(layout, 1):.4f}"
    )


def _draw_band(ax, layout: WindingLayout, band: range, y0: float) -> None:
    """One band of the table: slot numbers above, one row of cells per layer."""
    from matplotlib.patches import Rectangle

    labels = layout.labels()
    row_names = ["top", "bottom"] if layout.layers == 2 else ["single"]
    for col, k in enumerate(band):
        ax.text(col + 0.5, y0 + 0.15, str(k), ha="center", va="bottom", fontsize=7,
                color="0.3")
        for layer in range(layout.layers):
            positive = layout.sign[layer, k] > 0
            fill = _tint(PHASE_COLOURS[layout.phase[layer, k]], 0.15 if positive else 0.65)
            ax.add_patch(Rectangle((col, y0 - layer - 1), 1, 1, facecolor=fill,
                                   edgecolor="white", linewidth=1.0))
            ax.text(col + 0.5, y0 - layer - 0.5, labels[layer, k], ha="center",
                    va="center", fontsize=8, fontweight="bold" if positive else "normal")
    for layer, name in enumerate(row_names):
        ax.text(-0.2, y0 - layer - 0.5, name, ha="right", va="center", fontsize=8)
    ax.text(-0.2, y0 + 0.35, "slot k", ha="right", va="center", fontsize=7, color="0.3")


def _legend(ax) -> None:
    from matplotlib.patches import Patch

    handles = [
        Patch(facecolor=_tint(c, 0.15), edgecolor="0.5", label=f"phase {n}: + (current +z)")
        for c, n in zip(PHASE_COLOURS, "ABC")
    ] + [Patch(facecolor=_tint(PHASE_COLOURS[0], 0.65), edgecolor="0.5",
               label="lighter tint: - (current -z)")]
    wide = ax.figure.get_figwidth() * ax.get_position().width >= 9.5
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, 0.0),
              ncol=4 if wide else 2, fontsize=8, frameon=False)


def plot_winding_layout(layout: WindingLayout, ax=None):
    """Draw the slot table of a winding layout.

    Slots run along x (slot index k from 0, centre at (k + 1/2) 360/Q degrees), one row per
    layer (top row: layer 0, the air-gap side). Each cell is coloured by phase and labelled
    "+A", "-B", ...: "+" means current in +z (out of the page). Tables of more than 36
    slots wrap into bands.

    Parameters
    ----------
    layout
        The winding, from :func:`fluxlab.machine.winding.winding_layout`.
    ax
        Matplotlib axes to draw into; a new figure sized to the table if None.

    Returns
    -------
    matplotlib.axes.Axes
    """
    import matplotlib.pyplot as plt

    bands = _bands(layout.slots)
    band_height = layout.layers + 0.9  # rows of cells plus a line of slot numbers
    data_width, data_height = len(bands[0]) + 2.3, band_height * len(bands) + 0.2
    if ax is None:
        # Equal aspect: the table takes `cell` inches per unit, at least _CELL_IN and
        # enough for the figure to hold title and legend; add room for those two.
        fig_width = max(_CELL_IN * data_width, _MIN_WIDTH_IN)
        cell = fig_width / data_width
        size = (fig_width, cell * data_height + (1.5 if fig_width < 10 else 1.3))
        _, ax = plt.subplots(figsize=size, layout="constrained")
    for b, band in enumerate(bands):
        _draw_band(ax, layout, band, y0=-b * band_height)
    ax.set_xlim(-2.2, data_width - 2.2)
    ax.set_ylim(1.0 - data_height, 1.0)
    ax.set_aspect("equal")
    ax.set_axis_off()
    ax.set_title(_title(layout), fontsize=10)
    _legend(ax)
    return ax
