"""Curves of an evaluation: torque versus position and current angle, inductances."""

from __future__ import annotations

import numpy as np

from fluxlab.studies.curves import InductanceCurves, TorqueVsAngle, TorqueVsPosition

__all__ = ["plot_torque_vs_position", "plot_torque_harmonics", "plot_torque_vs_angle",
           "plot_inductances"]

_NOTE = "peak phase current; angle from the d-axis (least reluctance)"


def _axes(ax):
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(6.4, 4.0))
    ax.grid(True, alpha=0.3)
    return ax


def plot_torque_vs_position(result: TorqueVsPosition, ax=None,
                            unskewed: TorqueVsPosition | None = None):
    """Torque (Maxwell stress and dq) over one torque period; mean and ripple noted.

    ``unskewed``: the same rotor without its skew, drawn in grey for comparison.
    """
    ax = _axes(ax)
    x = np.append(result.position_deg, result.position_deg[-1] + _step_deg(result))
    if unskewed is not None:
        xu = np.append(unskewed.position_deg, unskewed.position_deg[-1] + _step_deg(unskewed))
        ax.plot(xu, np.append(unskewed.torque_Nm, unskewed.torque_Nm[0]), "-", color="0.6",
                lw=1.0, label=f"without skew ({unskewed.ripple_pct:.0f} % p-p)")
    ax.plot(x, np.append(result.torque_Nm, result.torque_Nm[0]), "o-", ms=3,
            label="air-gap Maxwell stress")
    ax.plot(x, np.append(result.torque_dq_Nm, result.torque_dq_Nm[0]), "--", lw=1.2,
            label=r"$\frac{3}{2}p(\psi_d i_q - \psi_q i_d)$")
    ax.axhline(result.torque_maxwell_mean_Nm, color="k", lw=0.8, ls=":",
               label=f"mean {result.torque_maxwell_mean_Nm:.1f} N·m")
    ax.set_xlabel("rotor position (mechanical deg from d-axis on phase-a axis)")
    ax.set_ylabel("torque (N·m)")
    ax.set_title(f"Torque vs rotor position: {result.current_peak_A:g} A peak at "
                 f"{result.current_angle_deg:.1f} deg; ripple {result.ripple_pct:.1f} % p-p",
                 fontsize=10)
    low, high = ax.get_ylim()
    ax.set_ylim(low, high + 0.3 * (high - low))  # room for the legend above the curves
    ax.legend(fontsize=7, loc="upper center", ncol=3, framealpha=0.9)
    return ax


def plot_torque_harmonics(studies: dict[str, TorqueVsPosition], slot_order: int, ax=None,
                          orders_shown: int = 6):
    """Torque harmonics as bars, one group per order, one bar per study (``label -> study``).

    The x-axis counts multiples of the slot order (``slot_order`` per electrical period,
    :func:`fluxlab.studies.averaging.slot_order_electrical`), up to ``orders_shown`` of them;
    amplitudes in per cent of each study's mean torque, so that studies at other currents
    compare. Amplitude and phase of every order are in torque_harmonics*.csv.
    """
    ax = _axes(ax)
    width = 0.8 / (3 * max(len(studies), 1))  # bars of one group share a third of a unit
    for k, (label, r) in enumerate(studies.items()):
        multiple = r.harmonic_orders / slot_order
        keep = multiple <= orders_shown + 1e-9
        share = 100 * r.harmonic_amplitudes_Nm[keep] / abs(r.torque_maxwell_mean_Nm)
        offset = (k - (len(studies) - 1) / 2) * width
        ax.bar(multiple[keep] + offset, share, width=width,
               label=f"{label}: {r.current_peak_A:g} A at {r.current_angle_deg:.1f}°")
    ax.set_xticks(range(1, orders_shown + 1))
    ax.set_xticklabels([f"{m}×\n({m * slot_order})" for m in range(1, orders_shown + 1)])
    ax.set_xlim(0, orders_shown + 0.5)
    ax.set_xlabel(f"order: multiple of the slot order ({slot_order} per electrical period)")
    ax.set_ylabel("amplitude (% of mean torque)")
    ax.set_title("Torque harmonics (amplitude; phases in torque_harmonics*.csv)", fontsize=10)
    ax.legend(fontsize=7, loc="upper right")
    return ax


def _step_deg(result: TorqueVsPosition) -> float:
    """Sample spacing, deg: the curve is closed over the period with the first sample."""
    step = np.diff(result.position_deg)
    return float(step.mean()) if len(step) else 0.0


def plot_torque_vs_angle(results: list[TorqueVsAngle], ax=None):
    """Position-averaged torque versus current angle for each current, the MTPA marked."""
    ax = _axes(ax)
    for r in results:
        # one legend row per current, the MTPA star in its label: narrow enough for a sheet
        line, = ax.plot(r.current_angle_deg, r.torque_Nm, "o-", ms=3,
                        label=f"{r.current_peak_A:g} A peak; MTPA (★) {r.mtpa_angle_deg:.1f}°, "
                              f"{r.mtpa_torque_Nm:.1f} N·m")
        ax.plot([r.mtpa_angle_deg], [r.mtpa_torque_Nm], "*", ms=11, color=line.get_color())
    ax.set_xlabel("current angle γ (deg from d-axis)")
    ax.set_ylabel("torque, mean over rotor positions (N·m)")
    ax.set_xlim(0, 90)
    ax.set_ylim(0, 1.45 * max(r.mtpa_torque_Nm for r in results))  # legend room above
    ax.set_title("Torque vs current angle (" + _NOTE + ")", fontsize=9)
    ax.legend(fontsize=6.5, loc="upper left", handlelength=1.5)
    return ax


def plot_inductances(curves: InductanceCurves, ax=None):
    """One-axis apparent Ld (iq = 0) and Lq (id = 0) against current, and their ratio."""
    ax = _axes(ax)
    i = curves.current_peak_A
    ax.plot(i, curves.Ld_one_axis_H * 1e3, "o-", ms=3,
            label=r"$L_d = \langle\psi_d\rangle / i_d$ ($i_q = 0$)")
    ax.plot(i, curves.Lq_one_axis_H * 1e3, "s-", ms=3,
            label=r"$L_q = \langle\psi_q\rangle / i_q$ ($i_d = 0$)")
    ax.set_xlabel("current (A peak, on the axis)")
    ax.set_ylabel("one-axis apparent inductance (mH)")
    ax.set_ylim(bottom=0)
    right = ax.twinx()
    right.plot(i, curves.saliency_one_axis, ":", color="0.3", label="one-axis saliency Ld/Lq")
    right.set_ylabel("one-axis saliency Ld/Lq")
    right.set_ylim(bottom=0)
    lines = ax.get_lines() + right.get_lines()
    ax.legend(lines, [ln.get_label() for ln in lines], fontsize=8, loc="upper right")
    ax.set_title(f"Saturation, current on one axis at a time (mean of {curves.positions} rotor "
                 "positions)", fontsize=10)
    return ax
