"""The files of an envelope study: CSV tables (units in the column names; peak phase currents
and voltages), figures (PNG and SVG), envelope.pdf and envelope_summary.json."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from fluxlab.envelope import incremental_inductances, inverse_tables
from fluxlab.report.figures import save_figure
from fluxlab.report.plots import envelope as pe
from fluxlab.report.plots.efficiency import plot_efficiency_map
from fluxlab.report.stress_files import write_stress
from fluxlab.report.tables import write_csv

__all__ = ["TABLE_NOTES", "envelope_tables", "write_envelope"]


#: First-line comments of the tables that need one.
TABLE_NOTES = {
    "flux_map_inverse": "currents at flux linkages on a regular grid; flux linkages that no "
                        "current within the flux map reaches are left out (not NaN rows)",
    "efficiency_map": "least-current point per (speed, torque) under the current and voltage "
                      "limits; points above the envelope are unreachable and left out; "
                      "peak phase current and voltage; efficiency (T w - P_mech) / "
                      "(T w + P_cu + P_fe)",
}


def _reachable(columns: dict, keys: tuple[str, ...]) -> dict:
    """The columns flattened, rows with a non-finite value in ``keys`` left out."""
    flat = {name: np.ravel(values) for name, values in columns.items()}
    keep = np.all([np.isfinite(flat[k]) for k in keys], axis=0)
    return {name: values[keep] for name, values in flat.items()}


def _efficiency_table(emap) -> dict:
    n, t = np.meshgrid(emap.speed_rpm, emap.torque_Nm, indexing="ij")
    return _reachable({"speed_rpm": n, "torque_Nm": t, "current_peak_A": emap.current_peak_A,
                       "current_angle_deg": emap.current_angle_deg,
                       "voltage_peak_V": emap.voltage_peak_V,
                       "copper_loss_W": emap.copper_loss_W, "iron_loss_W": emap.iron_loss_W,
                       "mechanical_loss_W": emap.mechanical_loss_W,
                       "efficiency": emap.efficiency}, ("efficiency",))


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
        "flux_map_inverse": _reachable({"psi_d_Wb": pd, "psi_q_Wb": pq, "i_d_A": inv.i_d_A,
                                         "i_q_A": inv.i_q_A}, ("i_d_A", "i_q_A")),
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
            "barrier": [f"rotor.barriers[{b.barrier}]" for b in result.ribs.barriers],
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
    if result.efficiency_map is not None:
        tables["efficiency_map"] = _efficiency_table(result.efficiency_map)
    regions = result.iron_loss.regions if result.iron_loss else ()
    tables["losses"] = {
        "part": np.array([r.name for r in regions] + ["copper"]),
        "mass_kg": [r.mass_kg for r in regions] + [result.rated_point["copper_mass_kg"]],
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
    written = [write_csv(out / f"{stem}.csv", cols, TABLE_NOTES.get(stem))
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
    if result.efficiency_map is not None:
        rated = (result.rated_point["speed_rpm"], result.rated_point["torque_Nm"])
        figures.append(("efficiency_map", lambda: plot_efficiency_map(
            result.efficiency_map, rated=rated), None))
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
