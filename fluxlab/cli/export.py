"""Export the stator and rotor laminations, whole, as DXF drawings in millimetres.

Writes stator.dxf (layers STATOR_OUTLINE, STATOR_BORE, SLOTS) and rotor.dxf (layers
ROTOR_OUTLINE, SHAFT_BORE, BARRIERS) to --out: circles for the outer and bore outlines,
one closed polyline per slot or barrier piece. The rotor is drawn at position 0 (its
d-axis on +x); slot k (0-based, as in the model) has its axis at (k + 1/2) slot pitches.
"""

from __future__ import annotations

from pathlib import Path

from fluxlab.cli._output import add_machine_and_out, open_machine_output
from fluxlab.geometry.lamination import rotor_lamination, stator_lamination
from fluxlab.report.drawing import write_lamination_dxf
from fluxlab.spec.machine_file import load_machine

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    add_machine_and_out(parser)


def run(args) -> int:
    spec = load_machine(args.machine)
    out = Path(args.out)
    output = open_machine_output(out, "export", spec, args.overwrite)
    laminations = (stator_lamination(spec), rotor_lamination(spec))
    output.clear_stale()
    written = [write_lamination_dxf(lam, out / f"{lam.name}.dxf") for lam in laminations]
    output.finish(written)
    for lam, path in zip(laminations, written):
        print(f"wrote {path}: {lam.name} lamination, {len(lam.cutouts)} {lam.cutout_kind} "
              f"contours, steel area {lam.area * 1e6:.1f} mm^2")
    return 0
