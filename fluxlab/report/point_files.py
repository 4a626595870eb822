"""The files of a mesh and of a single solved point: mesh.vtu with its region names, the
JSON record of a solve (SI units, names with units), and a torque-versus-position study."""

from __future__ import annotations

import json
import math
from pathlib import Path

from fluxlab.machine.dq import power_factor
from fluxlab.report.figures import save_figure
from fluxlab.report.plots.curves import plot_torque_harmonics, plot_torque_vs_position
from fluxlab.report.tables import position_tables, table_comment, write_csv
from fluxlab.studies.averaging import slot_order_electrical
from fluxlab.studies.plausibility import point_warnings

__all__ = ["write_mesh", "point_record", "write_position_study"]


def write_mesh(machine_mesh, out: Path) -> list[Path]:
    """Write ``mesh.vtu`` (cell data ``region``, ids in ``regions.json``) to ``out``."""
    import meshio
    import numpy as np

    m = machine_mesh.mesh
    names = sorted(m.subdomains)
    region = np.zeros(m.t.shape[1], dtype=np.int32)
    for k, name in enumerate(names):
        region[m.subdomains[name]] = k
    points = np.column_stack([m.p.T, np.zeros(m.p.shape[1])]) * 1e3  # mm, for viewing
    meshio.write(
        out / "mesh.vtu",
        meshio.Mesh(points, [("triangle", m.t.T)],
                    cell_data={"region": [region],
                               "rotor_part": [machine_mesh.rotor_element.astype(np.int32)]}),
    )
    (out / "regions.json").write_text(json.dumps(
        {"units": "mm", "regions": dict(enumerate(names))}, indent=1))
    return [out / "mesh.vtu", out / "regions.json"]


def point_record(model, point) -> dict:
    """JSON-able record of one solved point (SI units, names with units).

    ``warnings``: implausible figures (see :mod:`fluxlab.studies.plausibility`), may be empty.
    """

    sol = point.solution
    b_peak = float(sol.b_norm.max())
    return {
        "current_peak_A": point.current_peak_A,
        "current_angle_deg": math.degrees(point.current_angle),
        "position_deg": math.degrees(point.position),
        "rotor_step": point.step,
        "i_d_A": point.i_d,
        "i_q_A": point.i_q,
        "psi_d_Wb": point.psi_d,
        "psi_q_Wb": point.psi_q,
        "torque_maxwell_Nm": point.torque_maxwell_Nm,
        "torque_dq_Nm": point.torque_dq_Nm,
        "power_factor": power_factor(point.psi_d, point.psi_q, point.i_d, point.i_q),
        "energy_J": model.scale * sol.energy_per_m,
        "coenergy_J": model.scale * sol.coenergy_per_m,
        "b_local_peak_T": b_peak,
        "newton_iterations": sol.iterations,
        "newton_rtol": model.newton_rtol,
        "newton_relative_residuals": list(sol.history),
        "nodes": int(model.mesh.mesh.p.shape[1]),
        "element_order": model.spec.mesh.element_order,
        "currents": "peak phase amperes; angle from the d-axis",
        "warnings": point_warnings(model, point.current_peak_A, b_peak),
    }


def write_position_study(study, spec, out: Path) -> list[Path]:
    """torque_vs_position and torque_harmonics, as CSV tables and figures, of one
    :class:`fluxlab.studies.curves.TorqueVsPosition` of machine ``spec``."""
    import matplotlib.pyplot as plt

    written = [write_csv(out / f"{stem}.csv", columns, table_comment(stem))
               for stem, columns in position_tables(study).items()]
    order = slot_order_electrical(spec.stator.slots, spec.pole_pairs)
    for stem, draw in (("torque_vs_position", lambda ax: plot_torque_vs_position(study, ax)),
                       ("torque_harmonics",
                        lambda ax: plot_torque_harmonics({"this point": study}, order, ax))):
        fig, ax = plt.subplots(figsize=(7, 4.3))
        draw(ax)
        fig.tight_layout()
        written += save_figure(fig, out, stem, dpi=170)
    return written
