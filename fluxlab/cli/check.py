"""Validate a machine file and print its summary, or every problem found."""

from __future__ import annotations

import math

from fluxlab.geometry import model_sector
from fluxlab.geometry.barrier_ends import slot_pitch
from fluxlab.geometry.rotor import opening_angles
from fluxlab.machine.winding import winding_factor, winding_layout
from fluxlab.spec.machine_file import load_machine
from fluxlab.studies.averaging import averaging_positions, residual_orders, torque_period

__all__ = ["add_args", "opening_lines", "rotor_slot_lines", "run", "summary_lines"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")


def opening_lines(spec) -> list[str]:
    """Per barrier, where it opens under its tangential rib, one line each.

    Angles in deg from the pole's q-axis (inner edge, middle, outer edge; the middle is
    the file's ``end_angle_deg``) and the opening's length along the rib circle, mm.
    """

    rotor, r_rib = spec.rotor, spec.rotor_radius - spec.rotor.tangential_rib
    lines = []
    for i, b in enumerate(rotor.barriers):
        key = f"rotor.barriers[{i}]"
        inner, middle, outer = opening_angles(rotor, spec.rotor_radius, b, key)
        lines.append(
            f"{key}  opening under the rib {math.degrees(inner):.2f} / "
            f"{math.degrees(middle):.2f} / {math.degrees(outer):.2f} deg from the q-axis "
            f"(inner edge / middle / outer edge), {r_rib * (outer - inner) * 1e3:.2f} mm "
            "along the rib"
        )
    return lines


def rotor_slot_lines(spec) -> list[str]:
    """The barrier ends placed by ``rotor.rotor_slots_per_pole_pair`` (none without it).

    The end angles set from n_r, and n_r beside the stator's slots per pole pair Q/p with
    their difference (the rule of fluxlab.geometry.barrier_ends asks for about 4; printed,
    not judged).
    """

    n_r = spec.rotor.rotor_slots_per_pole_pair
    if n_r is None:
        return []
    p, slots = spec.pole_pairs, spec.stator.slots
    ends = ", ".join(f"{math.degrees(b.end_angle):.2f}" for b in spec.rotor.barriers)
    return [
        f"barrier ends end_angle_deg = {ends} (rotor.barriers[0] first, from the q-axis), "
        f"at the rotor slot pitch {math.degrees(slot_pitch(p, n_r)):.4g} deg",
        f"slot rule    rotor slots per pole pair n_r = {n_r}, stator slots per pole pair Q/p = "
        f"{slots / p:g}, difference Q/p - n_r = {slots / p - n_r:g}",
    ]


def summary_lines(spec) -> list[str]:
    """A short human summary of a validated machine."""

    st, w, r = spec.stator, spec.winding, spec.rotor
    sectors, sector_angle, sign = model_sector(spec)
    layout = winding_layout(st.slots, spec.poles, w.layers, w.coil_pitch_slots)
    return [
        f"machine      {spec.name}: {spec.poles} poles, stack {spec.stack_length * 1e3:g} mm",
        f"stator       {st.slots} slots, outer {st.outer_diameter * 1e3:g} mm, "
        f"bore {st.bore_diameter * 1e3:g} mm, air gap {st.airgap * 1e3:g} mm",
        f"winding      {w.layers} layer(s), pitch {w.coil_pitch_slots} slots, "
        f"{w.turns_per_coil} turns/coil, {w.parallel_paths} path(s), "
        f"fundamental winding factor {winding_factor(layout):.4f}",
        f"rotor        {len(r.barriers)} {r.barrier_shape} barrier(s) per pole, shaft "
        f"{r.shaft_diameter * 1e3:g} mm, tangential rib {r.tangential_rib * 1e3:g} mm",
        *opening_lines(spec),
        *rotor_slot_lines(spec),
        "materials    " + ", ".join(f"{k} {m.name}" for k, m in spec.materials.items()),
        f"model sector {math.degrees(sector_angle):g} deg ("
        + (f"{sectors} sectors, {'anti-' if sign < 0 else ''}periodic edges)" if sectors > 1
           else "the whole machine)"),
        _averaging_line(spec),
        f"rated point  {spec.operating.current_peak_A:g} A peak"
        + (f" at {math.degrees(spec.operating.current_angle):g} deg from the d-axis"
           if spec.operating.current_angle is not None else ""),
    ]


def run(args) -> int:
    spec = load_machine(args.machine)
    print(f"{args.machine}: valid")
    for line in summary_lines(spec):
        print("  " + line)
    return 0


def _averaging_line(spec) -> str:
    """The rotor positions of every position-averaged figure, and what they leave in."""

    slots, p = spec.stator.slots, spec.pole_pairs
    count = averaging_positions(spec)
    left = ", ".join(f"{k:g}" for k in residual_orders(slots, p, count))
    return (f"averaging    {count} rotor positions over the torque period of "
            f"{math.degrees(torque_period(slots, p)) * p:g} electrical deg; harmonic orders "
            f"left in the means: {left or 'none'} (per electrical period, up to 60)")
