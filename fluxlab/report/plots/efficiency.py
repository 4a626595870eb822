"""The efficiency map over the torque-speed plane, with the envelope drawn."""

from __future__ import annotations

import numpy as np

__all__ = ["plot_efficiency_map"]


def _levels(values: np.ndarray) -> np.ndarray:
    """Contour levels (efficiency, 1): 0.1 apart up to 0.8, then 0.02, then 0.01 above 0.9."""
    steps = np.concatenate([np.arange(0.0, 0.8, 0.1), np.arange(0.8, 0.9, 0.02),
                            np.arange(0.9, 1.0, 0.01)])
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return steps
    inside = steps[(steps > finite.min()) & (steps < finite.max())]
    return inside if inside.size >= 2 else np.linspace(finite.min(), finite.max(), 5)


def plot_efficiency_map(emap, ax=None, rated: tuple[float, float] | None = None,
                        compact: bool = False):
    """Efficiency contours (labelled) against speed and torque; the envelope as a line.

    ``rated``: (speed rpm, torque N m) of the rated point, marked when given; ``compact``:
    a short title and the legend below the axes (a small panel of a page).
    """
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(7.5, 5.2))
    n, t = np.meshgrid(emap.speed_rpm, emap.torque_Nm, indexing="ij")
    eff = np.ma.masked_invalid(emap.efficiency)
    levels = _levels(emap.efficiency)
    filled = ax.contourf(n, t, eff, levels=levels, cmap="viridis", extend="both")
    lines = ax.contour(n, t, eff, levels=levels, colors="k", linewidths=0.5)
    # a small panel labels only the levels from 80 % up (the low-speed ones crowd together)
    labelled = [v for v in lines.levels if v >= 0.8] if compact else lines.levels
    ax.clabel(lines, labelled, fmt=lambda v: f"{100 * v:.0f} %", fontsize=7, inline=True)
    ax.plot(emap.envelope_speed_rpm, emap.envelope_torque_Nm, color="tab:red", lw=1.6,
            label="envelope" if compact else "envelope (current and voltage limits)")
    if rated is not None:
        ax.plot(*rated, "o", color="white", mec="k", ms=6, label="rated point")
    bar = ax.figure.colorbar(filled, ax=ax, pad=0.02)
    bar.set_label("efficiency (1)")
    ax.set_xlabel("speed (rpm)")
    ax.set_ylabel("electromagnetic torque (N·m)")
    losses = "copper, iron" + (", mechanical" if np.nanmax(emap.mechanical_loss_W,
                                                          initial=0) > 0 else "")
    if not emap.iron_included:
        losses = "copper only (no iron-loss data)"
    ax.set_xlim(0, emap.speed_rpm.max())
    ax.set_ylim(0, 1.08 * emap.torque_Nm.max())
    # the legend sits above the envelope at high speed, where no point is reachable
    if compact:
        ax.set_title(f"Efficiency map ({losses} losses)")
        ax.legend(fontsize=5.5, loc="upper right", framealpha=0.9)
    else:
        ax.set_title(f"Efficiency map ({losses} losses; least current per point)", fontsize=10)
        ax.legend(fontsize=7, loc="upper right", framealpha=0.9)
    return ax
