"""Checks of the winding layout against textbook formulas and independent field computations."""

from __future__ import annotations

import math

import matplotlib
import numpy as np
import pytest

from fluxlab.errors import WindingError
from fluxlab.machine.winding import (
    WindingLayout,
    check_parallel_paths,
    coil_groups,
    machine_symmetry,
    phase_axis_angle,
    series_turns_per_phase,
    slot_angles,
    winding_factor,
    winding_factors,
    winding_layout,
)

matplotlib.use("Agg")

# (slots, poles, layers, coil pitch): integral and fractional slot windings.
LAYOUTS = [
    (36, 4, 2, 9),
    (36, 4, 2, 8),
    (36, 4, 1, 9),
    (24, 4, 1, 6),
    (54, 6, 2, 8),
    (48, 4, 2, 10),
    (18, 2, 2, 7),
    (12, 10, 2, 1),
    (9, 8, 2, 1),
    (27, 6, 2, 4),
    (24, 10, 2, 2),
    (12, 10, 1, 1),
    (24, 10, 1, 3),
]


def _id(value):
    """Test id of a (slots, poles, layers, pitch) case, e.g. "36s4p2L8y"."""
    if isinstance(value, tuple) and len(value) == 4:
        return "{}s{}p{}L{}y".format(*value)
    return None


# ---------------------------------------------------------------- winding factors


def textbook_kw(Q: int, poles: int, y: int, nu: int) -> float:
    """|k_d * k_p| of an integral-slot winding for space harmonic nu.

    k_d = sin(q nu alpha/2) / (q sin(nu alpha/2)), alpha = p 2pi/Q the slot angle;
    k_p = sin(nu (y/tau_p) pi/2). J. Pyrhonen, T. Jokinen, V. Hrabovcova, "Design of
    Rotating Electrical Machines", Wiley 2008, ch. 2 (from memory).
    """
    p = poles // 2
    q = Q // (3 * poles)
    alpha = p * 2 * math.pi / Q
    kd = math.sin(q * nu * alpha / 2) / (q * math.sin(nu * alpha / 2))
    kp = math.sin(nu * y / (Q / poles) * math.pi / 2)
    return abs(kd * kp)


@pytest.mark.parametrize(
    ("case", "stated"),
    [((36, 4, 2, 9), 0.9598), ((36, 4, 1, 9), 0.9598), ((36, 4, 2, 8), 0.9452)],
)
def test_fundamental_factor_matches_textbook_numbers(case, stated):
    # Stated numbers: Pyrhonen et al. 2008, ch. 2 (from memory), 4 decimals, so the
    # tolerance is half a unit of the last digit. Formula: same source, exact to round-off.
    layout = winding_layout(*case)
    kw = winding_factor(layout, 1)
    assert kw == pytest.approx(textbook_kw(case[0], case[1], case[3], 1), abs=1e-12)
    assert kw == pytest.approx(stated, abs=5e-5)


@pytest.mark.parametrize("case", [c for c in LAYOUTS if c[0] % (3 * c[1]) == 0], ids=_id)
@pytest.mark.parametrize("nu", [1, 5, 7, 11, 13])
def test_harmonic_factors_match_distribution_times_pitch(case, nu):
    # Pyrhonen et al. 2008, ch. 2 (from memory): k_w = k_d k_p for integral q, any odd nu.
    # Tolerance: both sides are closed-form sums of unit phasors, round-off only.
    layout = winding_layout(*case)
    assert winding_factor(layout, nu) == pytest.approx(
        textbook_kw(case[0], case[1], case[3], nu), abs=1e-12
    )


def test_even_harmonics_vanish_for_integral_slot_windings():
    # Half-wave symmetry: the -a belt is the +a belt turned by 180 electrical degrees with
    # the opposite sign, so even orders cancel (Pyrhonen et al. 2008, ch. 2, from memory).
    # Tolerance: round-off.
    layout = winding_layout(36, 4, 2, 8)
    assert np.all(winding_factors(layout, [2, 4, 6, 8]) < 1e-12)


def star_of_slots_kw1(Q: int, poles: int, y: int) -> float:
    """Fundamental winding factor of a fractional-slot double layer from the star of slots.

    With t = gcd(Q, p): if Q/t is even, phase a's phasors (reversed ones turned by 180
    degrees) fill a 60-degree belt with n = Q/(6t) spokes spaced 2pi t/Q; if Q/t is odd,
    n = Q/(3t) phasors spaced pi t/Q. k_d = sin(n delta/2)/(n sin(delta/2)),
    k_p = sin(pi p y/Q). N. Bianchi, M. Dai Pre, IEE Proc. Electr. Power Appl. 153(3), 2006
    (from memory); the same distribution formula as Pyrhonen et al. ch. 2 with q -> n.
    """
    p = poles // 2
    t = math.gcd(Q, p)
    if (Q // t) % 2 == 0:
        n, delta = Q // (6 * t), 2 * math.pi * t / Q
    else:
        n, delta = Q // (3 * t), math.pi * t / Q
    kd = math.sin(n * delta / 2) / (n * math.sin(delta / 2))
    return abs(kd * math.sin(math.pi * p * y / Q))


@pytest.mark.parametrize(
    ("case", "stated"),
    [((12, 10, 2, 1), 0.933), ((9, 8, 2, 1), 0.945), ((27, 6, 2, 4), None),
     ((24, 10, 2, 2), None)],
)
def test_fractional_slot_fundamental_factor(case, stated):
    # Formula: star of slots (see star_of_slots_kw1), round-off tolerance. Stated values:
    # the usual tables of fractional-slot windings (from memory), 3 decimals -> 5e-4.
    kw = winding_factor(winding_layout(*case), 1)
    assert kw == pytest.approx(star_of_slots_kw1(case[0], case[1], case[3]), abs=1e-12)
    if stated is not None:
        assert kw == pytest.approx(stated, abs=5e-4)


def test_single_layer_12_slots_10_poles_factor():
    # Alternate-teeth single layer: each phase has two coils on opposite teeth with the same
    # EMF, so k_d = 1 and k_w1 = k_p = sin(pi p y / Q) = sin(75 deg) = 0.9659 (common
    # practice, no source; the 0.966 of fractional-slot tables, from memory).
    kw = winding_factor(winding_layout(12, 10, 1, 1), 1)
    assert kw == pytest.approx(math.sin(math.radians(75)), abs=1e-12)


# ---------------------------------------------------------------- balance and pitch


@pytest.mark.parametrize("case", LAYOUTS, ids=_id)
def test_phases_are_balanced_and_120_degrees_apart(case):
    layout = winding_layout(*case)
    p = layout.pole_pairs
    counts = {
        (ph, s): int(np.count_nonzero((layout.phase == ph) & (layout.sign == s)))
        for ph in range(3)
        for s in (1, -1)
    }
    # Balance (definition): every phase has the same number of +z and of -z coil sides,
    # and every slot layer belongs to exactly one phase.
    for s in (1, -1):
        assert counts[(0, s)] == counts[(1, s)] == counts[(2, s)]
    assert sum(counts.values()) == layout.layers * layout.slots
    # A closed coil has one +z and one -z side, so the totals per phase must agree.
    assert counts[(0, 1)] == counts[(0, -1)]
    # Positive sequence counter-clockwise: b axis at +120, c at +240 electrical degrees
    # (project convention). Tolerance: round-off of angle() on sums of O(Q) phasors.
    period = 2 * math.pi / p
    a, b, c = (phase_axis_angle(layout, ph) for ph in range(3))
    for lead, angle in ((1, b), (2, c)):
        diff = (angle - a - lead * period / 3 + period / 2) % period - period / 2
        assert abs(diff) < 1e-9
    # Equal fundamental factors of all phases (same phasor magnitude), round-off.
    theta = np.broadcast_to(slot_angles(layout.slots), layout.phase.shape)
    mags = [abs(np.sum(layout.sign[layout.phase == ph]
                       * np.exp(1j * p * theta[layout.phase == ph]))) for ph in range(3)]
    assert max(mags) - min(mags) < 1e-9


@pytest.mark.parametrize("case", [c for c in LAYOUTS if c[2] == 2], ids=_id)
def test_double_layer_bottom_is_return_side_of_top(case):
    layout = winding_layout(*case)
    y = layout.coil_pitch_slots
    for k in range(layout.slots):
        assert layout.phase[1, k] == layout.phase[0, (k - y) % layout.slots]
        assert layout.sign[1, k] == -layout.sign[0, (k - y) % layout.slots]


@pytest.mark.parametrize(("y", "mixed"), [(9, 0), (8, 12), (7, 24)])
def test_short_pitch_mixes_phases_in_expected_number_of_slots(y, mixed):
    # Counting argument (common practice, no source): shortening a q = 3 double layer by
    # c = tau - y <= q slots puts c slots with two phases at each of the 6p belt edges.
    layout = winding_layout(36, 4, 2, y)
    assert int(np.count_nonzero(layout.phase[0] != layout.phase[1])) == mixed
    # Same phase in both layers means same sign too (a 60-degree belt pattern).
    same = layout.phase[0] == layout.phase[1]
    assert np.all(layout.sign[0, same] == layout.sign[1, same])


@pytest.mark.parametrize("case", [(36, 4, 1, 9), (24, 4, 1, 6), (54, 6, 1, 9)], ids=_id)
def test_single_layer_full_pitch_pairs(case):
    # A full-pitch coil side in slot k returns in slot k + Q/(2p) with the opposite sign
    # (definition of full pitch, one pole pitch = 180 electrical degrees).
    layout = winding_layout(*case)
    tau = layout.slots // layout.poles
    ret = (np.arange(layout.slots) + tau) % layout.slots
    assert np.array_equal(layout.phase[0, ret], layout.phase[0])
    assert np.array_equal(layout.sign[0, ret], -layout.sign[0])


# ---------------------------------------------------------------- phase axis


def mmf_axis(slots: int, poles: int, sides: list[tuple[int, float]], n: int = 2**16) -> float:
    """Angle where the p-th harmonic of the air-gap field of line currents is largest.

    Ampere's law around a loop through the gap at 0 and theta with ideal iron:
    g H_r(0) - g H_r(theta) = enclosed +z current, so H_r(theta) = -F(theta)/g + const with
    F the staircase of enclosed current (Ampere's circuital law; common practice, no
    source beyond the derivation given here). The p-th Fourier component of -F is taken
    by FFT of the staircase sampled at n midpoints.
    """
    p = poles // 2
    centres = slot_angles(slots)
    theta = (np.arange(n) + 0.5) * (2 * math.pi / n)
    F = np.zeros(n)
    for k, current in sides:
        F += current * (theta > centres[k])
    coeff = np.fft.fft(-F)[p]  # = sum(-F e^{-j p theta}); fundamental ~ Re(coeff e^{jp th})
    return float(np.mod(-np.angle(coeff) / p, 2 * math.pi / p))


def _angle_diff(a: float, b: float, period: float) -> float:
    return abs((a - b + period / 2) % period - period / 2)


@pytest.mark.parametrize("case", LAYOUTS, ids=_id)
@pytest.mark.parametrize("phase", [0, 1, 2])
def test_axis_matches_fourier_component_of_mmf_staircase(case, phase):
    # Tolerance 1e-3 rad: sampling moves each jump by at most half a grid step
    # (2pi/2^16/2 = 5e-5 rad), far below a slot pitch (>= 0.1 rad here).
    layout = winding_layout(*case)
    mask = layout.phase == phase
    sides = [(k, float(layout.sign[layer, k])) for layer, k in zip(*np.nonzero(mask))]
    ref = mmf_axis(layout.slots, layout.poles, sides)
    period = 2 * math.pi / layout.pole_pairs
    axis = phase_axis_angle(layout, phase)
    assert 0.0 <= axis < period
    assert _angle_diff(axis, ref, period) < 1e-3


def test_axis_of_two_wires_points_along_x():
    # Right-hand rule for straight wires (Biot-Savart, D. J. Griffiths, "Introduction to
    # Electrodynamics", ch. 5, from memory): +z at the top, -z at the bottom of a 2-pole
    # machine gives a field along +x at the centre, so the axis is at 0.
    wires = WindingLayout(2, 2, 1, 1, np.array([[0, 0]]), np.array([[1, -1]]))
    assert slot_angles(2) == pytest.approx([math.pi / 2, 3 * math.pi / 2])
    assert _angle_diff(phase_axis_angle(wires, 0), 0.0, 2 * math.pi) < 1e-12


@pytest.mark.parametrize("case", [(24, 2, 2, 10), (18, 2, 1, 9), (12, 2, 2, 5)], ids=_id)
def test_two_pole_axis_matches_biot_savart_field_at_centre(case):
    # Field at the centre of line currents on a circle of radius R (Biot-Savart,
    # Griffiths ch. 5, from memory): B = mu0 I/(2 pi R) * z x (-r_hat_k) per wire. For
    # p = 1 its direction is the phase axis (iron at a larger radius only adds same-sign
    # images). Tolerance: round-off of sums of O(Q) terms.
    layout = winding_layout(*case)
    theta = np.broadcast_to(slot_angles(layout.slots), layout.phase.shape)[layout.phase == 0]
    s = layout.sign[layout.phase == 0]
    bx, by = np.sum(s * np.sin(theta)), np.sum(-s * np.cos(theta))
    ref = math.atan2(by, bx) % (2 * math.pi)
    assert _angle_diff(phase_axis_angle(layout, 0), ref, 2 * math.pi) < 1e-9


@pytest.mark.parametrize("case", [(36, 4, 2, 8), (12, 10, 2, 1), (9, 8, 2, 1)], ids=_id)
def test_positive_sequence_field_turns_counter_clockwise(case):
    # i_a = cos(wt), i_b = cos(wt - 2pi/3), i_c = cos(wt + 2pi/3) in windings whose axes
    # lead by +120 electrical degrees give a field turning counter-clockwise at w/p
    # (rotating-field theorem, Pyrhonen et al. 2008, ch. 2, from memory). The field peak
    # is found from the MMF staircase; tolerance as in the staircase test above.
    layout = winding_layout(*case)
    p = layout.pole_pairs
    step = 0.3  # rad electrical, less than half a period so the direction is unambiguous

    def peak(wt: float) -> float:
        currents = [math.cos(wt), math.cos(wt - 2 * math.pi / 3), math.cos(wt + 2 * math.pi / 3)]
        sides = [(k, currents[layout.phase[layer, k]] * layout.sign[layer, k])
                 for layer in range(layout.layers) for k in range(layout.slots)]
        return mmf_axis(layout.slots, layout.poles, sides)

    moved = (peak(step) - peak(0.0)) % (2 * math.pi / p)
    assert moved == pytest.approx(step / p, abs=1e-3)
    # At wt = 0 phase a carries the peak current, so the field sits on the a axis.
    assert _angle_diff(peak(0.0), phase_axis_angle(layout, 0), 2 * math.pi / p) < 1e-3


# ---------------------------------------------------------------- symmetry


def _repeats(layout: WindingLayout, shift: int, sign: int) -> bool:
    return np.array_equal(np.roll(layout.phase, shift, axis=1), layout.phase) and np.array_equal(
        np.roll(layout.sign, shift, axis=1), sign * layout.sign
    )


@pytest.mark.parametrize(
    ("case", "expected"),
    [
        # Expected values worked by hand from the rule (t = gcd(Q, p)) stated in the
        # machine_symmetry docstring; the layout checks below are the independent part.
        ((36, 4, 2, 8), (4, math.pi / 2, -1)),  # t = 2, Q/t = 18 even
        ((54, 6, 2, 8), (6, math.pi / 3, -1)),  # t = 3, Q/t = 18 even
        ((12, 10, 2, 1), (2, math.pi, -1)),  # t = 1, Q/t = 12 even
        ((9, 8, 2, 1), (1, 2 * math.pi, 1)),  # t = 1, Q/t = 9 odd
        ((27, 6, 2, 4), (3, 2 * math.pi / 3, 1)),  # t = 3, Q/t = 9 odd
        ((36, 4, 1, 9), (4, math.pi / 2, -1)),
        ((12, 10, 1, 1), (2, math.pi, -1)),
        ((24, 10, 1, 3), (2, math.pi, -1)),
    ],
    ids=_id,
)
def test_machine_symmetry_holds_on_the_layout(case, expected):
    sectors, angle, edge = machine_symmetry(case[0], case[1])
    assert (sectors, edge) == (expected[0], expected[2])
    assert angle == pytest.approx(expected[1], rel=1e-15)
    layout = winding_layout(*case)
    Q = layout.slots
    assert Q % sectors == 0 and angle == pytest.approx(2 * math.pi / sectors, rel=1e-15)
    # The claim: slot k + Q/sectors carries edge_sign times the pattern of slot k.
    assert _repeats(layout, Q // sectors, edge)
    # Smallest: no shorter shift repeats the pattern with either sign.
    for shift in range(1, Q // sectors):
        assert not (_repeats(layout, shift, 1) or _repeats(layout, shift, -1))


def _valid_cases():
    cases = []
    for Q in range(3, 61, 3):
        for poles in range(2, 21, 2):
            p = poles // 2
            if Q % (3 * math.gcd(Q, p)) == 0:
                tau = Q / poles
                cases.append((Q, poles, max(1, min(Q - 1, round(tau)))))
    return cases


def test_every_layout_repeats_over_its_machine_sector():
    # Invariant promised by machine_symmetry: holds for every balanced slot/pole pair up to
    # 60 slots and 20 poles (a double layer of pitch round(Q/2p), and the single layer
    # wherever winding_layout accepts one), checked on the layout itself.
    checked = {1: 0, 2: 0}
    for Q, poles, y in _valid_cases():
        pitches = {2: y, 1: y if y % 2 or Q % (3 * poles) == 0 else y + 1}
        for layers, pitch in pitches.items():
            try:
                layout = winding_layout(Q, poles, layers, pitch)
            except WindingError:  # no such single layer, or zero k_w1 for this pitch
                continue
            sectors, _, edge = machine_symmetry(Q, poles)
            assert _repeats(layout, Q // sectors, edge), (Q, poles, layers, pitch)
            checked[layers] += 1
    assert checked[2] > 80 and checked[1] > 10


# ---------------------------------------------------------------- paths and turns


@pytest.mark.parametrize(
    ("case", "groups"),
    # Textbook rule (Pyrhonen et al. 2008, ch. 2, from memory): an integral-slot double
    # layer allows a | 2p, a single layer a | p. Fractional: one group per sector.
    [((36, 4, 2, 8), 4), ((54, 6, 2, 8), 6), ((36, 4, 1, 9), 2), ((54, 6, 1, 9), 3),
     ((12, 10, 2, 1), 2), ((9, 8, 2, 1), 1), ((12, 10, 1, 1), 2)],
)
def test_parallel_path_rule(case, groups):
    layout = winding_layout(*case)
    assert coil_groups(layout) == groups
    for a in range(1, 2 * groups + 2):
        if groups % a == 0:
            check_parallel_paths(layout, a)
        else:
            with pytest.raises(WindingError, match=rf"winding\.parallel_paths = {a}"):
                check_parallel_paths(layout, a)


@pytest.mark.parametrize(
    ("case", "turns", "paths", "expected"),
    # Counting (common practice, no source): a double layer has Q coils, a single layer
    # Q/2; a third of them per phase, in series within each of the parallel paths.
    [((36, 4, 2, 8), 10, 2, 36 / 3 * 10 / 2), ((36, 4, 1, 9), 10, 1, 18 / 3 * 10),
     ((12, 10, 2, 1), 25, 2, 12 / 3 * 25 / 2), ((9, 8, 2, 1), 7, 1, 9 / 3 * 7)],
)
def test_series_turns_per_phase(case, turns, paths, expected):
    assert series_turns_per_phase(winding_layout(*case), turns, paths) == expected


# ---------------------------------------------------------------- errors


@pytest.mark.parametrize(
    ("args", "pattern"),
    [
        ((10, 4, 2, 2), r"stator\.slots = 10, machine\.poles = 4.*10/\(3\*2\)"),
        ((20, 4, 2, 4), r"stator\.slots = 20.*must be an integer"),
        ((36, 4, 2, 0), r"winding\.coil_pitch_slots = 0: must be at least 1"),
        ((36, 4, 2, 36), r"winding\.coil_pitch_slots = 36: must be less than stator\.slots"),
        ((36, 4, 3, 9), r"winding\.layers = 3: must be 1 or 2"),
        ((36, 4, 0, 9), r"winding\.layers = 0"),
        ((36, 5, 2, 9), r"machine\.poles = 5: must be even"),
        ((36, 0, 2, 9), r"machine\.poles = 0"),
        ((2, 2, 2, 1), r"stator\.slots = 2: must be at least 3"),
        ((36.0, 4, 2, 9), r"stator\.slots = 36\.0: must be an integer"),
        ((36, 4, 1, 8), r"winding\.coil_pitch_slots = 8: a single-layer.*= 9"),
        ((9, 8, 1, 1), r"winding\.layers = 1 with stator\.slots = 9, machine\.poles = 8"),
        ((18, 14, 1, 1), r"winding\.layers = 1 with stator\.slots = 18"),
        ((12, 10, 1, 3), r"winding\.coil_pitch_slots = 3: .*odd pitch nearest.*: 1"),
        ((36, 4, 2, 18), r"winding\.coil_pitch_slots = 18: gives zero fundamental"),
    ],
)
def test_impossible_windings_name_key_value_and_limit(args, pattern):
    with pytest.raises(WindingError, match=pattern):
        winding_layout(*args)


def test_other_errors_name_their_key():
    layout = winding_layout(36, 4, 2, 8)
    with pytest.raises(WindingError, match=r"stator\.slots = 10, machine\.poles = 4"):
        machine_symmetry(10, 4)
    with pytest.raises(WindingError, match=r"winding\.turns_per_coil = 0"):
        series_turns_per_phase(layout, 0, 1)
    with pytest.raises(WindingError, match=r"winding\.parallel_paths = 0"):
        check_parallel_paths(layout, 0)
    # harmonic and phase are arguments of Python calls, never machine-file values
    with pytest.raises(ValueError, match=r"harmonic = 0\.3") as info:
        winding_factor(layout, 0.3)
    assert not isinstance(info.value, WindingError)
    with pytest.raises(ValueError, match=r"phase = 3") as info:
        phase_axis_angle(layout, 3)
    assert not isinstance(info.value, WindingError)


def test_fractional_harmonic_order_is_a_subharmonic():
    # nu = 1/5 of a 10-pole machine is the first mechanical order, allowed; the value is the
    # same phasor sum at mechanical order 1 (definition of the winding factor).
    layout = winding_layout(12, 10, 2, 1)
    theta = np.broadcast_to(slot_angles(12), layout.phase.shape)[layout.phase == 0]
    s = layout.sign[layout.phase == 0]
    ref = abs(np.sum(s * np.exp(1j * theta))) / s.size
    assert winding_factor(layout, 0.2) == pytest.approx(ref, abs=1e-12)


def test_layout_arrays_are_read_only():
    layout = winding_layout(36, 4, 2, 8)
    with pytest.raises(ValueError):
        layout.phase[0, 0] = 1
    assert layout.phase.shape == layout.sign.shape == (2, 36)


# ---------------------------------------------------------------- plot


@pytest.mark.parametrize("case", [(36, 4, 2, 8), (54, 6, 2, 8), (12, 10, 1, 1)], ids=_id)
def test_plot_draws_one_labelled_cell_per_slot_layer(case):
    import matplotlib.pyplot as plt

    from fluxlab.report.plots.winding import plot_winding_layout

    layout = winding_layout(*case)
    ax = plot_winding_layout(layout)
    try:
        labels = [t.get_text() for t in ax.texts]
        expected = list(layout.labels().ravel())
        assert sorted(x for x in labels if x[:1] in "+-") == sorted(expected)
        assert len(ax.patches) == layout.layers * layout.slots
        assert f"{winding_factor(layout):.4f}" in ax.get_title()
        assert [t.get_text()[:7] for t in ax.get_legend().get_texts()][:3] == [
            "phase A", "phase B", "phase C"]
    finally:
        plt.close(ax.figure)
