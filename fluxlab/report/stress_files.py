"""The files of a rotor stress run: ``stress.json`` and the figure ``stress.png``."""

from __future__ import annotations

import json
from pathlib import Path

from fluxlab.report.figures import save_figure
from fluxlab.report.plots.stress import stress_figure
from fluxlab.stress.study import STRESS_CAUTION, RotorStress, stress_summary

__all__ = ["write_stress"]


def write_stress(result: RotorStress, speed_rpm: float, out: Path) -> list[Path]:
    """Write ``stress.json`` (:func:`~fluxlab.stress.study.stress_summary`) and
    ``stress.png`` into the folder ``out``; returns the paths."""
    path = out / "stress.json"
    path.write_text(json.dumps(stress_summary(result, speed_rpm), indent=1) + "\n",
                    encoding="utf-8")
    fig = stress_figure(result, speed_rpm, "Caution: " + STRESS_CAUTION)
    return [path, *save_figure(fig, out, "stress", formats=("png",))]
