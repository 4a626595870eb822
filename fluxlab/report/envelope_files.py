"""The files of an envelope study: CSV tables (units in the column names; peak phase currents
and voltages), figures (PNG and SVG), envelope.pdf and envelope_summary.json."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from fluxlab.envelope import incremental_inductances, inverse_tables
from fluxlab.report.figures import save_figure
from fluxlab.report.plots import envelope as pe
from fluxlab.report.stress_files import write_stress
from fluxlab.report.tables import write_csv

__all__ = ["envelope_tables", "write_envelope"]


def envelope_tables(result) -> dict[str, dict]:
    """Every table of an envelope result: file stem -> columns (units in the names)."""
    f, m, e = result.flux_map, result.mtpa, result.envelope
    d, q = np.meshgrid(f.i_d_A, f.i_q_A, indexing="ij")
    lk = incremental_inductances(f)
    inv = inverse_tables(f)
    pd, pq = np.meshgrid(inv.psi_d_Wb, inv.psi_q_Wb, indexing="ij")
    tables = {
        "flux_map": {"i_d_A": d, "i_q_A": q, "psi_d_Wb": f.psi_d_Wb, "psi_q_Wb": f.psi_q_Wb,
                     "torque_maxwell_Nm": f.torque_Nm, "torque_dq_Nm": f.torque_dq_Nm,
                     **lk},
        "flux_map_inverse": {"psi_d_Wb": pd, "psi_q_Wb": pq, "i_d_A": inv.i_d_A,
                             "i_q_A": inv.i_q_A},
        "mtpa": {"current_peak_A": m.current_peak_A, "current_angle_deg": m.current_angle_deg,
                 "torque_Nm": m.torque_Nm, "i_d_A": m.i_d_A, "i_q_A": m.i_q_A,
                 "psi_d_Wb": m.psi_d_Wb, "psi_q_Wb": m.psi_q_Wb,
                 "source": np.array(["engine" if x else "flux map" for x in
                                     (m.from_engine if m.from_engine is not None
                                      else np.zeros(m.current_peak_A.size, bool))])},
        "torque_speed": {"speed_rpm": e.speed_rpm, "torque_Nm": e.torque_Nm,
                         "power_W": e.power_W, "i_d_A": e.i_d_A, "i_q_A": e.i_q_A,
                         "current_peak_A": e.current_peak_A,
                         "current_angle_deg": e.current_angle_deg,
                         "voltage_peak_V": e.voltage_peak_V, "power_factor": e.power_factor,
                         "region": np.array(e.region)},
        "rib_stress": {
            "barrier": [b.barrier + 1 for b in result.ribs.barriers],
            "island_mass_kg": [b.island_mass_kg for b in result.ribs.barriers],
            "centroid_radius_mm": [1e3 * b.centroid_radius_m for b in result.ribs.barriers],
            "force_N": [b.force_N for b in result.ribs.barriers],
            "rib_area_mm2": [1e6 * b.rib_area_m2 for b in result.ribs.barriers],
            "post_area_mm2": [1e6 * b.post_area_m2 for b in result.ribs.barriers],
            "stress_MPa": [b.stress_Pa / 1e6 for b in result.ribs.barriers],
            "allowed_MPa": [b.allowed_Pa / 1e6 for b in result.ribs.barriers],
            "exceeded": np.array(["yes" if b.exceeded else "no" for b in result.ribs.barriers]),
        },
    }
    regions = result.iron_loss.regions if result.iron_loss else ()
    tables["losses"] = {
        "part": np.array([r.name for r in regions] + ["copper"]),
        "mass_kg": [r.mass_kg for r in regions] + [np.nan],
        "hysteresis_W": [r.hysteresis_W for r in regions] + [0.0],
        "eddy_W": [r.eddy_W for r in regions] + [0.0],
        "excess_W": [r.excess_W for r in regions] + [0.0],
        "total_W": [r.total_W for r in regions] + [result.rated_point["copper_loss_W"]],
    }
    return tables


def write_envelope(result, out: Path) -> list[Path]:
    """Write the tables, figures, envelope.pdf and envelope_summary.json; returns the paths."""
    import matplotlib

    matplotlib.use("Agg")

    out.mkdir(parents=True, exist_ok=True)
    written = [write_csv(out / f"{stem}.csv", cols)
               for stem, cols in envelope_tables(result).items()]
    summary = {**result.summary, "rib_warnings": list(result.ribs.warnings),
               "stress_warnings": list(result.stress_warnings), "timings_s": result.timings_s}
    (out / "envelope_summary.json").write_text(json.dumps(summary, indent=2, default=float))
    written.append(out / "envelope_summary.json")
    figures = [
        ("flux_map_contours", lambda: pe.plot_flux_map_contours(result.flux_map), (11, 4.4)),
        ("flux_map_cross_saturation", lambda: pe.plot_cross_saturation(result.flux_map),
         (11, 4.2)),
        ("mtpa", lambda: pe.plot_mtpa(
            result.flux_map, result.mtpa,
            current_limit_peak_A=result.settings.current_limit_peak_A), None),
        ("torque_speed", lambda: pe.plot_envelope(result.envelope), None),
        ("losses", lambda: pe.plot_losses(
            result.iron_loss, result.rated_point["copper_loss_W"],
            title=f"Losses at {result.rated_point['current_peak_A']:g} A peak (MTPA), "
                  f"{result.rated_point['speed_rpm']:g} rpm"), None),
    ]
    for stem, draw, size in figures:
        axes = draw()
        first = axes[0] if isinstance(axes, (list, np.ndarray)) else axes
        fig = first.figure
        if size:
            fig.set_size_inches(*size)
        fig.tight_layout()
        written += save_figure(fig, out, stem, ("png", "svg"))
    pe.add_envelope_page(out / "envelope.pdf", result)
    written.append(out / "envelope.pdf")
    if result.stress is not None:
        written += write_stress(result.stress, result.settings.max_speed_rpm, out)
    return written
