"""Figures of the operating envelope: flux maps, MTPA, torque-speed limits, losses.

Every function takes ``ax`` / ``axes`` (created when None) and returns them. Currents and
voltages are peak phase values; the current angle is measured from the d-axis.
"""

from __future__ import annotations

import math

import numpy as np

from fluxlab.envelope.interp import FluxInterpolator
from fluxlab.report.figures import caution_line
from fluxlab.report.plots.efficiency import plot_efficiency_map

__all__ = [
    "side_axes",
    "plot_flux_map_contours",
    "plot_cross_saturation",
    "plot_mtpa",
    "plot_envelope",
    "plot_losses",
    "envelope_page_figure",
    "add_envelope_page",
]


def side_axes(ax, size: str = "5%", pad: float = 0.08):
    """An axes for a colour bar at the right of ``ax``, exactly as tall as its drawn box."""
    from mpl_toolkits.axes_grid1 import make_axes_locatable

    return make_axes_locatable(ax).append_axes("right", size=size, pad=pad)


def _axes(n, axes, figsize):
    import matplotlib.pyplot as plt

    if axes is None:
        _, axes = plt.subplots(1, n, figsize=figsize, squeeze=False)
        axes = list(axes[0])
    return axes


def plot_flux_map_contours(fmap, axes=None):
    """Contours of psi_d and psi_q over (id, iq), two axes."""
    axes = _axes(2, axes, (10, 4.2))
    for ax, table, name in ((axes[0], fmap.psi_d_Wb, "ψd"), (axes[1], fmap.psi_q_Wb, "ψq")):
        filled = ax.contourf(fmap.i_d_A, fmap.i_q_A, table.T, levels=14, cmap="viridis")
        top = float(np.abs(table).max()) or 1.0
        lines = ax.contour(fmap.i_d_A, fmap.i_q_A, table.T, colors="white", linewidths=0.6,
                           levels=np.linspace(top / 7, top, 6, endpoint=False))
        ax.clabel(lines, fmt="%.2f", fontsize=7)
        ax.figure.colorbar(filled, ax=ax, label=f"{name} (Wb, peak)")
        ax.set_xlabel("id (A, peak)")
        ax.set_ylabel("iq (A, peak)")
        ax.set_title(f"{name}(id, iq), {fmap.positions} rotor position(s) averaged")
        ax.set_aspect("equal")
    return axes


def plot_cross_saturation(fmap, axes=None, curves: int = 5):
    """psi_d versus id for several iq, and psi_q versus iq for several id: cross-saturation."""
    axes = _axes(2, axes, (10, 4.0))
    pick = np.unique(np.linspace(0, fmap.i_q_A.size - 1, curves).round().astype(int))
    for k in pick:
        axes[0].plot(fmap.i_d_A, fmap.psi_d_Wb[:, k], marker=".",
                     label=f"iq = {fmap.i_q_A[k]:.3g} A")
        axes[1].plot(fmap.i_q_A, fmap.psi_q_Wb[k, :], marker=".",
                     label=f"id = {fmap.i_d_A[k]:.3g} A")
    for ax, x, y in ((axes[0], "id", "ψd"), (axes[1], "iq", "ψq")):
        ax.set_xlabel(f"{x} (A, peak)")
        ax.set_ylabel(f"{y} (Wb, peak)")
        ax.grid(alpha=0.3)
        ax.legend(fontsize=7)
    axes[0].set_title("d-axis flux falls with iq: cross-saturation")
    axes[1].set_title("q-axis flux falls with id: cross-saturation")
    return axes


def plot_mtpa(fmap, mtpa, ax=None, current_limit_peak_A: float | None = None,
              legend_below: bool = True):
    """MTPA trajectory over the torque contours in the (id, iq) plane."""

    ax = _axes(1, None if ax is None else [ax], (6, 5.2))[0]
    i_d = np.linspace(0, fmap.i_d_A[-1], 80)
    i_q = np.linspace(0, fmap.i_q_A[-1], 80)
    d, q = np.meshgrid(i_d, i_q, indexing="ij")
    torque = FluxInterpolator(fmap).torque(d, q)
    filled = ax.contourf(i_d, i_q, torque.T, levels=14, cmap="magma")
    top = float(np.abs(torque).max()) or 1.0
    lines = ax.contour(i_d, i_q, torque.T, colors="white", linewidths=0.6,
                       levels=np.linspace(top / 7, top, 6, endpoint=False))
    ax.clabel(lines, fmt="%.0f", fontsize=7)
    ax.set_aspect("equal")
    ax.figure.colorbar(filled, cax=side_axes(ax),
                       label="torque 3/2 p (ψd iq − ψq id) (N·m)")
    ax.plot(mtpa.i_d_A, mtpa.i_q_A, "c-o", ms=3, label="MTPA trajectory")
    if current_limit_peak_A:
        t = np.linspace(0, math.pi / 2, 100)
        ax.plot(current_limit_peak_A * np.cos(t), current_limit_peak_A * np.sin(t), "w--", lw=1.2,
                label=f"current limit {current_limit_peak_A:g} A")
    ax.plot([0, min(i_d[-1], i_q[-1])], [0, min(i_d[-1], i_q[-1])], color="0.7", lw=0.8,
            ls=":", label="45 deg")
    ax.set_xlim(0, i_d[-1])
    ax.set_ylim(0, i_q[-1])
    ax.set_aspect("equal")
    ax.set_xlabel("id (A, peak)")
    ax.set_ylabel("iq (A, peak)")
    ax.set_title("MTPA trajectory over torque contours")
    if legend_below:
        legend = ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=3)
    else:
        legend = ax.legend(fontsize=6, loc="lower right", framealpha=0.9)
    legend.get_frame().set_facecolor("0.55")  # the white limit line must show in the key
    return ax


def plot_envelope(env, axes=None):
    """Torque, power, and current and voltage against speed, with the limits drawn."""
    import matplotlib.pyplot as plt

    if axes is None:
        _, axes = plt.subplots(3, 1, figsize=(7, 8.2), sharex=True)
    n = env.speed_rpm
    colours = {"MTPA": "tab:blue", "flux weakening": "tab:orange", "MTPV": "tab:red",
               "none": "0.5"}
    regions = np.array(env.region)
    for name, colour in colours.items():
        mask = regions == name
        if mask.any():
            axes[0].plot(n[mask], env.torque_Nm[mask], "o", ms=3, color=colour, label=name)
    axes[0].plot(n, env.torque_Nm, "-", color="0.3", lw=1)
    axes[0].set_ylabel("torque (N·m)")
    axes[0].set_title("Torque–speed envelope under current and voltage limits")
    axes[1].plot(n, env.power_W / 1e3, "-", color="tab:green")
    axes[1].set_ylabel("mechanical power (kW)")
    axes[2].plot(n, env.current_peak_A, "-", color="tab:blue", label="|i| (A, peak)")
    axes[2].axhline(env.current_limit_peak_A, color="tab:blue", ls="--", lw=1,
                    label=f"current limit {env.current_limit_peak_A:g} A")
    axes[2].set_ylabel("current (A, peak)")
    twin = axes[2].twinx()
    twin.plot(n, env.voltage_peak_V, "-", color="tab:purple", label="|v| (V, peak)")
    twin.axhline(env.voltage_limit_peak_V, color="tab:purple", ls="--", lw=1,
                 label=f"voltage limit {env.voltage_limit_peak_V:.0f} V")
    twin.set_ylabel("phase voltage (V, peak)")
    twin.set_ylim(0, 1.3 * env.voltage_limit_peak_V)  # limit lines apart from the current's
    axes[2].set_ylim(0, 1.15 * env.current_limit_peak_A)
    handles = axes[2].get_legend_handles_labels()
    more = twin.get_legend_handles_labels()
    axes[2].legend(handles[0] + more[0], handles[1] + more[1], fontsize=7, loc="lower left")
    axes[2].set_xlabel("speed (rpm)")
    for ax in axes:
        ax.axvline(env.base_speed_rpm, color="0.4", ls=":", lw=1)
        ax.grid(alpha=0.3)
    axes[0].annotate(f"base speed {env.base_speed_rpm:.0f} rpm", (env.base_speed_rpm, 0),
                     xytext=(4, 4), textcoords="offset points", fontsize=7, color="0.3")
    axes[0].set_ylim(0, 1.1 * max(env.torque_Nm.max(), 1e-9))
    axes[0].legend(fontsize=7, loc="upper right")
    axes[1].set_ylim(0, 1.1 * max(env.power_W.max() / 1e3, 1e-9))
    return axes


def plot_losses(iron, copper_W: float, ax=None, title: str | None = None):
    """Loss breakdown: iron loss per region (hysteresis, eddy, excess stacked) and copper."""
    ax = _axes(1, None if ax is None else [ax], (6.5, 4))[0]
    names = [r.name for r in iron.regions] + ["copper"] if iron else ["copper"]
    parts = {"hysteresis": [r.hysteresis_W for r in iron.regions] if iron else [],
             "eddy current": [r.eddy_W for r in iron.regions] if iron else [],
             "excess": [r.excess_W for r in iron.regions] if iron else []}
    bottom = np.zeros(len(names))
    for (label, values), colour in zip(parts.items(), ("tab:blue", "tab:orange", "tab:green"),
                                       strict=True):
        v = np.array(values + [0.0])
        ax.bar(names, v, bottom=bottom, label=label, color=colour)
        bottom += v
    copper = np.zeros(len(names))
    copper[-1] = copper_W
    ax.bar(names, copper, bottom=bottom, color="tab:red", label="copper 3/2 R I²")
    for k, total in enumerate(bottom + copper):
        ax.annotate(f"{total:.0f} W", (k, total), ha="center", va="bottom", fontsize=8,
                    xytext=(0, 2), textcoords="offset points")
    ax.set_ylabel("loss (W)")
    ax.set_ylim(0, 1.15 * max(bottom.max() + copper_W, 1e-9))
    ax.legend(fontsize=7, loc="upper left")
    ax.set_title(title or "Loss breakdown")
    ax.grid(axis="y", alpha=0.3)
    return ax


def _key_rows(result) -> list[tuple[str, str]]:
    s, r = result.summary, result.summary["rated"]
    rows = [
        ("limits: current (A) / voltage (V), peak",
         f"{s['current_limit_peak_A']:.4g} / {s['voltage_limit_peak_V']:.4g}"),
        ("base speed (rpm) / torque (N·m)",
         f"{s['base_speed_rpm']:.4g} / {s['base_torque_Nm']:.4g}"),
        ("power at base / top speed (kW)",
         f"{s['base_power_W'] / 1e3:.3g} / {s['power_at_max_speed_W'] / 1e3:.3g}"),
        ("top speed (rpm)", f"{s['max_speed_rpm']:.4g}"),
        ("phase resistance at {:.0f} °C (Ω)".format(s["copper_temperature_C"]),
         f"{s['phase_resistance_Ohm']:.4g}"),
        ("rated: A peak, γ deg, rpm",
         f"{r['current_peak_A']:.4g}, {r['current_angle_deg']:.1f}, {r['speed_rpm']:.4g}"),
        ("rated torque (N·m) / power (kW)", f"{r['torque_Nm']:.4g} / {r['power_W'] / 1e3:.3g}"),
        ("copper / iron loss (W)", f"{r['copper_loss_W']:.4g} / {r['iron_loss_W']:.4g}"),
        ("efficiency (mechanical loss {:.0f} W)".format(r.get("mechanical_loss_W", 0.0)),
         f"{r['efficiency']:.3f}"),
        ("rib mean estimate, top speed (MPa)",
         f"{s['rib_max_stress_MPa']:.3g}" if s["rib_max_stress_MPa"] is not None
         else "no barriers"),
    ]
    stress = s.get("rotor_stress", {})
    for name in ("top_speed", "overspeed"):
        if name in stress:
            c = stress[name]
            rows.append((f"FEM peak / allowed, {c['speed_rpm']:g} rpm (MPa)",
                         f"{c['von_mises_max_MPa']:.3g} / {stress['allowed_MPa']:.3g}"))
    if "skipped" in stress:
        rows.append(("rotor FEM stress", "skipped: no elastic data"))
    return rows


def envelope_page_figure(result):
    """An A4 landscape page of an :class:`~fluxlab.envelope.EnvelopeResult` (a Figure)."""
    import matplotlib.pyplot as plt

    fig = plt.figure(figsize=(11.69, 8.27))
    stress = result.stress_warnings if result.stress is not None else result.ribs.warnings
    warn = [*stress, *result.summary.get("grid_warnings", [])]
    # warnings take lines above the caution: the plots move up for them
    grid = fig.add_gridspec(3, 3, left=0.06, right=0.97, top=0.86,
                            bottom=0.15 + 0.035 * len(warn),
                            wspace=0.42, hspace=0.5, width_ratios=[1.1, 1.1, 1.0])
    fig.suptitle(f"Operating envelope: {result.spec.name}", fontsize=14, x=0.06, y=0.97,
                 ha="left")
    fig.text(0.06, 0.915, "Peak phase currents and voltages; current angle from the d-axis; "
             "V_max = m V_dc / √3 (space-vector modulation); flux maps from the 2-D FEM.",
             fontsize=8)
    plot_mtpa(result.flux_map, result.mtpa, ax=fig.add_subplot(grid[0:2, 0]),
              current_limit_peak_A=result.settings.current_limit_peak_A)  # legend below
    env_axes = [fig.add_subplot(grid[k, 1]) for k in range(3)]
    plot_envelope(result.envelope, axes=env_axes)
    for ax in env_axes[:2]:
        ax.set_xlabel("speed (rpm)")
    plot_losses(result.iron_loss, result.rated_point["copper_loss_W"],
                ax=fig.add_subplot(grid[2, 0]),
                title=f"Losses at the rated point, {result.rated_point['speed_rpm']:g} rpm")
    if result.efficiency_map is not None:
        ax = plot_efficiency_map(result.efficiency_map, ax=fig.add_subplot(grid[2, 2]),
                                 rated=(result.rated_point["speed_rpm"],
                                        result.rated_point["torque_Nm"]), compact=True)
    ax = fig.add_subplot(grid[0:2, 2])
    ax.axis("off")
    table = ax.table(cellText=[list(r) for r in _key_rows(result)],
                     colLabels=["quantity", "value"], colWidths=[0.7, 0.3],
                     bbox=[-0.05, 0.1, 1.1, 0.9], cellLoc="left")
    table.auto_set_font_size(False)
    table.set_fontsize(6.5)
    stress_caution = result.summary.get("rotor_stress", {}).get("caution", "")
    text = caution_line(result.ribs.caution, stress_caution, "Iron loss: harmonic "
                        "loss-separation estimate, scaled to frequency and flux level over the "
                        "efficiency map; mechanical losses only as "
                        "drive.mechanical_loss_at_max_speed_W gives them.")
    fig.text(0.06, 0.03, ("WARNING: " + " ".join(warn) + "\n" if warn else "") + text,
             fontsize=7.5, wrap=True, va="bottom", color="darkred" if warn else "black")
    for a in fig.axes:
        a.title.set_fontsize(8.5)
        a.tick_params(labelsize=7)
        a.xaxis.label.set_fontsize(7.5)
        a.yaxis.label.set_fontsize(7.5)
    return fig


def add_envelope_page(pdf, result) -> None:
    """Append the envelope page to ``pdf``: an open ``PdfPages`` or a path (new file)."""
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_pdf import PdfPages

    fig = envelope_page_figure(result)
    try:
        if isinstance(pdf, PdfPages):
            pdf.savefig(fig)
        else:
            fig.savefig(pdf)
    finally:
        plt.close(fig)
