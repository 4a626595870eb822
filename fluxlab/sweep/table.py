"""The results table of a sweep: one row per candidate, and its CSV file.

A row holds the candidate number, its varied keys (file units, named by their paths), its
status (done, rejected, failed, or pending when a run was stopped before it), the scalar
results of its summary (units in the names: ``torque_mean_Nm``, ``Ld_apparent_H``), the message and
the content key.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from fluxlab.report.tables import write_csv
from fluxlab.sweep.candidates import Candidate
from fluxlab.sweep.store import StoredResult

__all__ = ["RESULT_COLUMNS", "results_table", "result_columns", "write_results_csv"]

# Key results first, in this order; other scalar summary entries follow, sorted.
RESULT_COLUMNS = ("torque_mean_Nm", "torque_ripple_pct", "saliency_apparent", "Ld_apparent_H",
                  "Lq_apparent_H",
                  "power_factor", "mtpa_angle_deg", "current_peak_A", "current_angle_deg",
                  "nodes")
_SKIP = ("fluxlab_version",)


def _scalar(value) -> bool:
    # numbers only: text entries (machine name, conventions) are the same in every row
    return value is None or (isinstance(value, (int, float)) and not isinstance(value, bool))


def result_columns(stored: Sequence[StoredResult | None]) -> list[str]:
    """The summary columns present in any done result, key results first."""
    seen: set[str] = set()
    for r in stored:
        if r is not None and r.summary:
            seen.update(k for k, v in r.summary.items() if _scalar(v) and k not in _SKIP)
    return [c for c in RESULT_COLUMNS if c in seen] + sorted(seen - set(RESULT_COLUMNS))


def results_table(candidates: Sequence[Candidate], stored: dict[str, StoredResult]) -> list[dict]:
    """One dict per candidate, in plan order (see the module docstring for the columns)."""
    found = [stored.get(c.key) for c in candidates]
    columns = result_columns(found)
    rows = []
    for cand, res in zip(candidates, found, strict=True):
        row = {"candidate": cand.number, **cand.values,
               "status": res.status if res is not None else "pending"}
        summary = (res.summary or {}) if res is not None else {}
        row.update({c: summary.get(c) for c in columns})
        row["message"] = res.message if res is not None else ""
        row["key"] = cand.key
        rows.append(row)
    return rows


def _text(value):
    # validation messages are "- a\n- b": one line in the CSV
    if isinstance(value, str):
        return value.replace("\n- ", "; ").removeprefix("- ").replace("\n", " ")
    return value


def write_results_csv(rows: Sequence[dict], path: str | Path) -> Path:
    """Write the results table as CSV (empty cells for missing values, numbers as Python
    prints them, so they read back exactly); returns the path."""
    fields = list(rows[0]) if rows else ["candidate", "status", "message", "key"]
    return write_csv(path, {k: [_text(row.get(k)) for row in rows] for k in fields}, exact=True)
