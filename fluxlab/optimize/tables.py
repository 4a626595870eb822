"""The tables of an optimisation: every evaluation (history) and the verified front.

Rows are plain dicts with the varied keys in file units (named by their paths, the unit in
the name) and the summary figures under their own names (``torque_mean_Nm``,
``torque_ripple_pct``, ``power_factor``: units in the names). CSV files are written with
:func:`fluxlab.sweep.table.write_results_csv`, so they read back exactly.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from fluxlab.optimize.designs import Design
from fluxlab.optimize.scoring import Score
from fluxlab.sweep.store import StoredResult
from fluxlab.sweep.table import result_columns, write_results_csv

__all__ = ["HISTORY_CSV", "FRONT_CSV", "history_row", "front_row", "write_table",
           "with_all_columns"]

HISTORY_CSV = "history.csv"
FRONT_CSV = "front.csv"


def history_row(number: int, phase: str, generation: int, design: Design,
                result: StoredResult, score: Score, reused: bool) -> dict:
    """One evaluation: its number in the run, the phase (``base``, ``search``, ``verify``),
    the generation (0: the base machine; the verify step is one after the last), the
    ``fidelity`` (``search`` or the ``machine``'s own mesh), the varied keys, the status
    (done, rejected or failed, as stored), whether it is feasible, the summary figures, the
    message (why it is infeasible), whether the store already held it (``reused``) and its
    key."""
    return {"evaluation": number, "phase": phase, "generation": generation,
            "fidelity": "search" if design.coarse else "machine", **design.values,
            "status": result.status, "feasible": score.feasible,
            **_figures(result), "message": score.message, "reused": reused, "key": design.key}


def _figures(result: StoredResult) -> dict:
    return {c: (result.summary or {}).get(c) for c in result_columns([result])}


def front_row(label: str, coarse: dict | None, fine: dict, figures: Sequence[str],
              dominates_base: bool) -> dict:
    """A verified design: its label, the varied keys, the figures at the machine's own mesh,
    the search figures it was chosen on (``search_<figure>``), whether it dominates the base
    machine (at the machine's own mesh) and its key."""
    skip = {"evaluation", "phase", "generation", "fidelity", "status", "feasible", "message",
            "reused", "key"}
    row = {"design": label, **{k: v for k, v in fine.items() if k not in skip}}
    row.update({f"search_{f}": (coarse or {}).get(f) for f in figures})
    row.update(feasible=fine["feasible"], dominates_base=dominates_base, key=fine["key"])
    return row


def with_all_columns(rows: Sequence[dict]) -> list[dict]:
    """The rows with the union of their columns (in first-seen order), missing ones None:
    a rejected design has no figures, a later one may have more."""
    columns = list(dict.fromkeys(k for r in rows for k in r))
    tail = [c for c in ("message", "reused", "key") if c in columns]
    columns = [c for c in columns if c not in tail] + tail
    return [{c: r.get(c) for c in columns} for r in rows]


def write_table(rows: Sequence[dict], path: str | Path) -> Path:
    """Write rows (see :func:`with_all_columns`) as CSV; returns the path."""
    return write_results_csv(with_all_columns(rows), path)
