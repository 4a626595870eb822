"""Position averaging: the rule's arithmetic, its property, and five layouts against dense means.

The layout checks (marked slow) compare every position-averaged figure with a dense reference
computed here: the air-gap (Maxwell stress) torque and the flux linkages averaged over at
least four times the default positions, equally spaced over a whole torque period, on the
same coarse mesh.
"""

import math
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from layouts import LAYOUTS, layout_spec

from fluxlab.studies.averaging import (
    averaging_steps,
    default_positions,
    division_unit,
    equally_spaced_steps,
    period_steps,
    periods_per_revolution,
    residual_orders,
    slot_order,
    slot_order_electrical,
)

RATED_A, RATED_ANGLE_DEG = 25.0, 60.0


# (slots, pole pairs): periods per revolution P = gcd(lcm(Q, 2p), 6p), slot order
# s = lcm(Q, 2p) / P and the default count, worked by hand:
# 36/2: lcm 36, 6p 12 -> P 12, s 3, N 4;  24/1: lcm 24, 6p 6 -> P 6, s 4, N 5;
# 48/2: lcm 48, 12 -> P 12, s 4, N 5;     48/4: lcm 48, 24 -> P 24, s 2, N 5;
# 30/2: lcm 60, 12 -> P 12, s 5, N 4 (4 is prime to 5).
@pytest.mark.parametrize("slots, p, periods, s, count", [
    (36, 2, 12, 3, 4), (24, 1, 6, 4, 5), (48, 2, 12, 4, 5), (48, 4, 24, 2, 5), (30, 2, 12, 5, 4),
])
def test_rule_on_hand_worked_layouts(slots, p, periods, s, count):
    assert periods_per_revolution(slots, p) == periods
    assert slot_order(slots, p) == s
    assert default_positions(slots, p) == count


def test_orders_left_in_the_mean():
    # demo: 4 positions over 60 electrical degrees leave the multiples of 4 * 6 = 24
    assert residual_orders(36, 2, 4, up_to=60) == [24.0, 48.0]
    # q = 4 and the old 4-position subsample: the slot order 4 * 6 = 24 itself stays
    assert residual_orders(24, 1, 4, up_to=30) == [24.0]
    assert 24.0 not in residual_orders(24, 1, default_positions(24, 1), up_to=30)


@given(st.integers(1, 12), st.lists(st.floats(-1, 1), min_size=40, max_size=40),
       st.floats(0, 2 * math.pi))
def test_n_point_mean_keeps_only_multiples_of_n(count, amplitudes, phase):
    # Discrete Fourier sum (common practice, no source): the mean of N equally spaced samples
    # of cos(h theta + phi) over one period is cos(phi) when N divides h, else zero.
    theta = 2 * math.pi * np.arange(count) / count
    h = np.arange(1, 41)
    series = 3.0 + sum(a * np.cos(k * theta + phase) for k, a in zip(h, amplitudes))
    expected = 3.0 + sum(a * math.cos(phase) for k, a in zip(h, amplitudes) if k % count == 0)
    assert series.mean() == pytest.approx(expected, abs=1e-9)


def _stand_in(slots, p, counts, sectors, extra_divisions):
    """A model-like object: what the averaging functions read of a model and a mesh."""
    spec = SimpleNamespace(stator=SimpleNamespace(slots=slots), pole_pairs=p)
    divisions = division_unit(spec, sectors, counts) * extra_divisions
    return SimpleNamespace(spec=spec, step_angle=2 * math.pi / sectors / divisions, axis_step=7)


@settings(max_examples=300, deadline=None)
@given(slots=st.integers(6, 120), p=st.integers(1, 10), count=st.integers(1, 72),
       extra=st.integers(1, 5), data=st.data())
def test_every_count_is_equally_spaced_and_distinct(slots, p, count, extra, data):
    # a machine's sector count divides 2 gcd(Q, p); take any such divisor
    t = 2 * math.gcd(slots, p)
    sectors = data.draw(st.sampled_from([d for d in range(1, t + 1) if t % d == 0]))
    model = _stand_in(slots, p, [count], sectors, extra)
    model.spec.mesh = SimpleNamespace(averaging_positions=count)
    steps = averaging_steps(model)
    assert len(steps) == count == len(set(steps.tolist()))
    gaps = np.diff(np.append(steps, steps[0] + period_steps(model)))
    assert np.all(gaps == gaps[0]) and gaps[0] * count == period_steps(model)
    span = gaps[0] * count * model.step_angle
    assert span == pytest.approx(2 * math.pi / periods_per_revolution(slots, p))


def test_uneven_count_is_refused_with_the_counts_that_work():
    model = _stand_in(36, 2, [4], 4, 3)  # divisions 4 * 3: the period holds 12 steps
    assert period_steps(model) == 12
    with pytest.raises(ValueError, match=r"ripple positions = 5: .* 1, 2, 3, 4, 6, 12"):
        equally_spaced_steps(model, period_steps(model), 5, "ripple positions")


# --- the five layouts against dense references (slow) -----------------------------------


def _dense_count(model, at_least: int) -> int:
    steps = period_steps(model)
    return next(n for n in range(at_least, steps + 1) if steps % n == 0)


@pytest.fixture(scope="module", params=list(LAYOUTS))
def layout(request):
    """A layout's model, its dense reference at the rated point, and the figures under test."""
    from fluxlab.envelope import envelope_settings, envelope_study
    from fluxlab.machine.model import build_model
    from fluxlab.studies.curves import ripple_steps, solve_positions
    from fluxlab.studies.evaluate import evaluate

    spec = layout_spec(request.param)
    model = build_model(spec)
    n = default_positions(spec.stator.slots, spec.pole_pairs)
    dense = ripple_steps(model)
    assert len(dense) >= 4 * n  # the floor for a reference: four times the default
    points = solve_positions(model, RATED_A, math.radians(RATED_ANGLE_DEG), dense)
    envelope = envelope_study(spec, envelope_settings(spec, map_points=2, loss_samples=0),
                              model=model)
    return SimpleNamespace(
        name=request.param, spec=spec, model=model, count=n,
        torque=float(np.mean([pt.torque_maxwell_Nm for pt in points])),
        torque_dq=float(np.mean([pt.torque_dq_Nm for pt in points])),
        quick=evaluate(spec, studies="point", model=model), envelope=envelope,
        reference_steps=equally_spaced_steps(model, period_steps(model),
                                             _dense_count(model, 4 * n), "reference positions"))


@pytest.mark.slow
def test_dense_reference_agrees_with_itself(layout):
    # Two estimators of one period mean, air-gap stress and dq form: if they did not agree
    # the reference itself would be unconverged (aliased) on this layout.
    assert layout.torque_dq == pytest.approx(layout.torque, rel=2e-3)


@pytest.mark.slow
def test_quick_mode_and_envelope_torque_match_the_dense_mean(layout):
    assert layout.quick.summary["torque_mean_Nm"] == pytest.approx(layout.torque, rel=5e-3)
    assert layout.quick.summary["averaging"]["positions"] == layout.count
    assert layout.envelope.rated_point["torque_Nm"] == pytest.approx(layout.torque, rel=5e-3)
    # the current-angle study behind it, at the rated angle: the same figure
    rated = layout.envelope.operating.rated
    assert rated.current_angle_deg == pytest.approx(RATED_ANGLE_DEG)
    assert rated.torque_Nm == pytest.approx(layout.torque, rel=5e-3)


@pytest.mark.slow
def test_mtpa_angle_matches_a_quarter_degree_scan_of_the_reference(layout):
    from fluxlab.studies.operating_point import solve_point

    mtpa = layout.envelope.operating.mtpa[RATED_A]
    model, starts, torque = layout.model, {}, {}

    def reference(angle_deg):
        """Dense mean of the air-gap torque at the rated current and ``angle_deg``."""
        if angle_deg not in torque:
            values = []
            for step in (int(s) for s in layout.reference_steps):
                pt = solve_point(model, RATED_A, math.radians(angle_deg), step, starts.get(step))
                starts[step] = pt.solution.a
                values.append(pt.torque_maxwell_Nm)
            torque[angle_deg] = float(np.mean(values))
        return torque[angle_deg]

    angles = [round(mtpa.current_angle_deg * 4) / 4 + 0.25 * k for k in range(-6, 7)]
    best = max(angles, key=reference)
    while best in (angles[0], angles[-1]):  # widen the scan until the peak is inside it
        angles = [angles[0] - 0.25, *angles, angles[-1] + 0.25]
        best = max(angles, key=reference)
    assert mtpa.current_angle_deg == pytest.approx(best, abs=0.5)


@pytest.mark.slow
def test_one_axis_lq_matches_the_dense_mean(layout):
    from fluxlab.studies.curves import inductance_curves
    from fluxlab.studies.operating_point import averaged_point

    curve = inductance_curves(layout.model, [RATED_A], axes=("q",))
    dense = averaged_point(layout.model, RATED_A, math.pi / 2, layout.reference_steps)
    assert curve.Lq_one_axis_H[0] == pytest.approx(dense.psi_q / RATED_A, rel=5e-3)


@pytest.mark.parametrize("slots, poles, order", [
    (36, 4, 18),  # integral slot, q = 3: 6 q
    (54, 6, 18),  # q = 3
    (24, 2, 24),  # q = 4
    (48, 8, 12),  # q = 2
    (30, 4, 30),  # q = 5/2: the pattern repeats lcm(30, 4) = 60 times a turn, 2 periods
])
def test_slot_order_per_electrical_period(slots, poles, order):
    # integral slot: the slot harmonics of the torque are multiples of 6 q per electrical
    # period (common practice, no source); in general lcm(Q, 2p) per turn over p periods
    assert slot_order_electrical(slots, poles // 2) == order
