"""Rotor stress at speed: von Mises over the lamination by plane-stress finite elements.

Writes stress.json (peak and per-region maxima, safety factor on yield, yield speed,
radial growth) and stress.png. The lamination alone with its bore free: no shaft fit.
"""

from __future__ import annotations

from pathlib import Path

from fluxlab.cli._output import add_overwrite, open_machine_output
from fluxlab.report.stress_files import write_stress
from fluxlab.spec.machine_file import load_machine
from fluxlab.stress.study import STRESS_CAUTION, rotor_stress, stress_summary

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--speed-rpm", type=float, default=None,
                        help="rotor speed, rpm (default: drive.max_speed_rpm, else twice "
                        "operating.speed_rpm)")
    parser.add_argument("--out", required=True, help="output folder")
    add_overwrite(parser)


def speed_of(args, spec) -> float:
    """The speed asked for, rpm, or the machine's top speed."""
    if args.speed_rpm is not None:
        return args.speed_rpm
    return spec.top_speed_rpm


def run(args) -> int:
    spec = load_machine(args.machine)
    output = open_machine_output(args.out, "stress", spec, args.overwrite)  # before solving
    speed = speed_of(args, spec)
    result = rotor_stress(spec)
    output.clear_stale()
    written = write_stress(result, speed, Path(args.out))
    output.finish(written)
    s = stress_summary(result, speed)
    factor = "none at standstill" if s["safety_factor"] is None else f"{s['safety_factor']:.2f}"
    print(f"{spec.name}: peak von Mises {s['von_mises_max_MPa']:.1f} MPa at {speed:g} rpm "
          f"(yield {s['yield_strength_MPa']:.0f} MPa, safety factor {factor}, yield reached "
          f"at {s['yield_speed_rpm']:.0f} rpm); "
          f"radial growth {s['radial_growth_max_mm'] * 1e3:.1f} um "
          f"({100 * s['radial_growth_airgap_share']:.1f} % of the air gap)")
    print(f"note: {STRESS_CAUTION}")
    print(f"wrote {len(written)} files to {args.out}")
    return 0
