"""Operating envelope: flux maps, MTPA, torque-speed limits, iron loss, rib stress.

Writes CSV tables (units in the column names; peak phase currents and voltages), figures
(PNG and SVG), envelope.pdf (one review page) and envelope_summary.json to --out.
"""

from __future__ import annotations

import os
from pathlib import Path

from fluxlab.cli._output import add_overwrite, open_machine_output
from fluxlab.envelope import (
    envelope_settings,
    envelope_study,
)
from fluxlab.report.envelope_files import write_envelope
from fluxlab.spec.machine_file import load_machine, machine_from_dict
from fluxlab.sweep.progress import Progress

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--out", required=True, help="output folder")
    parser.add_argument("--points", type=int, default=None,
                        help="flux-map points per axis (default: drive.flux_map_points)")
    parser.add_argument("--positions", type=int, default=None,
                        help="rotor positions averaged per map point "
                             "(default: drive.flux_map_positions, else the machine's averaging "
                             "count; the mesh is made for it)")
    parser.add_argument("--max-current-A", type=float, default=None,
                        help="flux-map range, peak A (default: the current limit)")
    parser.add_argument("--speed-points", type=int, default=61,
                        help="speeds of the envelope from 0 to the top speed (default 61)")
    parser.add_argument("--loss-samples", type=int, default=48,
                        help="rotor positions per electrical period for the iron loss "
                             "(default 48; 0 skips it)")
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 1,
                        help="processes for the FEM solves (default: the core count)")
    add_overwrite(parser)


def run(args) -> int:
    spec = load_machine(args.machine)
    output = open_machine_output(args.out, "envelope", spec, args.overwrite)  # before solves
    if args.positions is not None:  # the mesh is made for the count asked for
        raw = spec.raw
        raw.setdefault("drive", {})["flux_map_positions"] = args.positions
        spec = machine_from_dict(raw, spec.base_dir)
    settings = envelope_settings(spec, map_points=args.points,
                                 map_max_current_A=args.max_current_A,
                                 speed_points=args.speed_points, loss_samples=args.loss_samples)
    progress = Progress()
    result = envelope_study(spec, settings, workers=args.workers, progress=progress)
    progress("writing tables and figures")
    output.clear_stale()
    written = write_envelope(result, Path(args.out))
    output.finish(written)
    progress.close()
    s, r = result.summary, result.summary["rated"]
    print(f"{spec.name}: base speed {s['base_speed_rpm']:.0f} rpm at "
          f"{s['base_torque_Nm']:.1f} N·m ({s['current_limit_peak_A']:g} A peak, "
          f"{s['voltage_limit_peak_V']:.0f} V peak); {s['power_at_max_speed_W'] / 1e3:.2f} kW "
          f"at {s['max_speed_rpm']:g} rpm; R = {s['phase_resistance_Ohm']:.3f} Ω")
    print(f"rated {r['current_peak_A']:g} A at {r['speed_rpm']:g} rpm: {r['torque_Nm']:.1f} "
          f"N·m, copper {r['copper_loss_W']:.0f} W, iron {r['iron_loss_W']:.0f} W, "
          f"efficiency {r['efficiency']:.3f}")
    stress = s["rotor_stress"]
    for name in ("top_speed", "overspeed"):
        if name in stress:
            c = stress[name]
            mean = s["rib_max_stress_MPa"]
            print(f"rotor stress at {c['speed_rpm']:g} rpm: peak von Mises "
                  f"{c['von_mises_max_MPa']:.1f} MPa, safety factor {c['safety_factor']:.2f} "
                  "on yield (finite elements" + (f"; mean rib estimate {mean:.1f} MPa, a "
                                                 "cross-check)" if mean else ")"))
    warnings = result.stress_warnings if result.stress is not None else result.ribs.warnings
    for warning in (*warnings, *s["grid_warnings"]):
        print(f"WARNING: {warning}")
    print(f"caution: {stress.get('caution', result.ribs.caution)}")
    print(f"wrote {len(written)} files to {args.out}")
    return 0
