"""The one maximiser of fluxlab (MTPA by current angle) against closed-form maxima.

Torque versus current angle of a synchronous reluctance machine is, near its peak, a smooth
sum of sin 2k gamma terms (sin 2 gamma for linear steel; saturation adds higher terms and
moves the peak beyond 45 deg). The reference peak of each test function is computed here
independently, by a dense scan refined with scipy's bounded Brent search.
"""

import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from fluxlab.studies.operating_point import peak_angle

TOLERANCE = math.radians(0.1)
GRID = [math.radians(d) for d in (0.0, 22.5, 45.0, 67.5, 90.0)]


def _reference_peak(f) -> float:
    scan = np.linspace(0.0, math.pi / 2, 9001)
    best = scan[np.argmax([f(x) for x in scan])]
    step = scan[1] - scan[0]
    found = minimize_scalar(lambda x: -f(x), bounds=(best - step, best + step),
                            method="bounded", options={"xatol": 1e-10})
    return found.x


@pytest.mark.parametrize("a2, a4, a6", [
    (1.0, 0.0, 0.0),     # linear steel: 45 deg
    (1.0, -0.15, 0.0),   # saturation of the d-axis: the peak moves towards q
    (1.0, -0.3, 0.05),
    (1.0, 0.2, -0.04),   # the peak below 45 deg
    (1.0, -0.45, 0.1),   # a flat, skewed peak
])
def test_peak_within_the_tolerance_of_the_closed_form(a2, a4, a6):
    def torque(g):
        return a2 * math.sin(2 * g) + a4 * math.sin(4 * g) + a6 * math.sin(6 * g)

    known = {g: torque(g) for g in GRID}
    calls = []
    found = peak_angle(lambda g: calls.append(g) or torque(g), known, TOLERANCE)
    assert abs(found - _reference_peak(torque)) < TOLERANCE
    assert len(set(calls)) == len(calls)  # no angle asked twice
    print(f"{a2, a4, a6}: {len(calls)} evaluations")


def test_rising_to_the_edge_gives_none():
    known = {g: g for g in GRID}  # keeps rising to pi/2
    assert peak_angle(lambda g: g, known, TOLERANCE) is None
    assert max(known, key=known.get) == pytest.approx(math.pi / 2)


def test_peak_near_the_edge_of_the_grid_is_bracketed_first():
    peak = math.radians(86.0)

    def torque(g):
        return -((g - peak) ** 2) + 0.1 * (g - peak) ** 3

    known = {g: torque(g) for g in GRID[:4]}  # 0 to 67.5 deg: the best is the last
    found = peak_angle(torque, known, TOLERANCE)
    assert abs(found - _reference_peak(torque)) < TOLERANCE
