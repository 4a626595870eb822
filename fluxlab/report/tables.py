"""CSV tables, units in the column names: the writer and the tables of an evaluation."""

from __future__ import annotations

import csv
from collections.abc import Mapping
from pathlib import Path

import numpy as np

__all__ = ["write_csv", "evaluation_tables", "position_tables", "table_comment",
           "HARMONICS_CONVENTION"]

#: How torque_harmonics.csv is to be read.
HARMONICS_CONVENTION = (
    "torque = mean + sum of amplitude_Nm * cos(order * theta_e + phase_deg), theta_e the "
    "electrical rotor position from position 0; order per electrical period; every order the "
    "samples resolve")


def table_comment(stem: str) -> str | None:
    """The convention line a table's file starts with, if any."""
    return HARMONICS_CONVENTION if stem.startswith("torque_harmonics") else None


def _cell(value, exact: bool) -> str:
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    return str(value) if exact else f"{float(value):.10g}"


def _values(column) -> list:
    """The cells of a column; an array is flattened, a list's items stay whole."""
    return np.ravel(column).tolist() if isinstance(column, np.ndarray) else list(column)


def write_csv(path: str | Path, columns: Mapping[str, object], comment: str | None = None,
              exact: bool = False) -> Path:
    """Write equal-length columns to ``path`` (UTF-8); returns the path.

    Parameters
    ----------
    path
        The file, overwritten.
    columns
        Header name (with its unit, e.g. ``torque_Nm``) -> values: a sequence, or an array
        of any shape (read in C order).  Text is written as it is, None as an empty cell,
        numbers as ``%.10g``.
    comment
        A first line ``# comment`` (a convention the columns follow).
    exact
        Numbers as Python prints them (``str``: floats read back bit for bit) instead of
        ``%.10g``.

    Raises
    ------
    ValueError
        When the columns differ in length.
    """
    path = Path(path)
    names = list(columns)
    cells = [[_cell(v, exact) for v in _values(columns[n])] for n in names]
    with path.open("w", newline="", encoding="utf-8") as f:
        if comment:
            f.write(f"# {comment}\n")
        writer = csv.writer(f)
        writer.writerow(names)
        writer.writerows(zip(*cells, strict=True))
    return path


def position_tables(r, suffix: str = "") -> dict[str, dict[str, np.ndarray]]:
    """A torque-versus-position study (:class:`fluxlab.studies.curves.TorqueVsPosition`) as
    ``torque_vs_position`` and ``torque_harmonics`` tables, their stems ending in ``suffix``."""
    return {
        f"torque_vs_position{suffix}": {
            "position_deg": r.position_deg,
            "torque_Nm": r.torque_Nm,
            "torque_dq_Nm": r.torque_dq_Nm,
            "psi_d_Wb": r.psi_d_Wb,
            "psi_q_Wb": r.psi_q_Wb,
            "newton_iterations": r.iterations,
        },
        f"torque_harmonics{suffix}": {
            "order_per_electrical_period": r.harmonic_orders,
            "amplitude_Nm": r.harmonic_amplitudes_Nm,
            "phase_deg": r.harmonic_phases_deg,
        },
    }


def evaluation_tables(evaluation) -> dict[str, dict[str, np.ndarray]]:
    """Every curve of an :class:`fluxlab.studies.evaluate.Evaluation` as named tables (file stem ->
    columns); the ripple study at overload gets the stems' suffix ``_overload``."""
    tables = {}
    for study, suffix in ((evaluation.torque_vs_position, ""),
                          (evaluation.torque_vs_position_overload, "_overload")):
        if study is not None:
            tables.update(position_tables(study, suffix))
    rows = [(s.current_peak_A, a, t, tm, pd, pq, pf) for s in evaluation.torque_vs_angle
            for a, t, tm, pd, pq, pf in zip(s.current_angle_deg, s.torque_Nm,
                                            s.torque_maxwell_Nm, s.psi_d_Wb, s.psi_q_Wb,
                                            s.power_factor)]
    if rows:
        cols = np.array(rows).T
        tables["torque_vs_current_angle"] = dict(zip(
            ["current_peak_A", "current_angle_deg", "torque_Nm", "torque_maxwell_Nm",
             "psi_d_Wb", "psi_q_Wb", "power_factor"], cols))
    c = evaluation.inductances
    if c is not None:
        tables["inductance_vs_current"] = {
            "current_peak_A": c.current_peak_A,
            "psi_d_Wb": c.psi_d_Wb,
            "psi_q_Wb": c.psi_q_Wb,
            "Ld_one_axis_H": c.Ld_one_axis_H,
            "Lq_one_axis_H": c.Lq_one_axis_H,
            "saliency_one_axis": c.saliency_one_axis,
        }
    return tables
