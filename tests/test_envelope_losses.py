"""Phase resistance, copper loss and the iron-loss model against hand calculations."""

import copy
import math

import numpy as np
import pytest
from paths import DEMO, GEOMETRIES

from fluxlab.envelope.ironloss import (
    efficiency,
    harmonic_ellipses,
    region_losses,
)
from fluxlab.errors import MaterialError, SpecError
from fluxlab.machine.resistance import copper_loss, copper_resistivity, phase_resistance
from fluxlab.materials.material import builtin_material, linear_material
from fluxlab.materials.steels import GRADES
from fluxlab.spec.machine_file import load_machine, machine_from_dict


def _rectangular_slot_machine():
    """The demo with parallel-sided, flat-bottomed slots: each layer is a rectangle."""
    raw = copy.deepcopy(load_machine(DEMO).raw)
    st = raw["stator"]
    st.pop("tooth_width_mm")
    st.update(slot_width_mm=5.0, slot_bottom="flat", slot_depth_mm=20.0, tip_height_mm=1.0)
    raw["winding"].update(turns_per_coil=10, parallel_paths=2, fill_factor=0.4)
    raw["drive"] = {"copper_temperature_C": 95.0, "end_winding_length_mm": 120.0}
    return machine_from_dict(raw, GEOMETRIES)


def test_phase_resistance_by_hand():
    spec = _rectangular_slot_machine()
    res = phase_resistance(spec)
    # hand calculation: layer = half the slot body below the tips, 5 mm x (20 - 1) mm / 2
    layer = 5e-3 * 19e-3 / 2
    conductor = 0.4 * layer / 10  # fill factor x layer area / conductors of a coil side
    # 36 slots, double layer: 72 coil sides, 24 per phase, 12 coils per phase;
    # 2 parallel paths: 6 coils x 10 turns = 60 series turns per path
    series = 12 * 10 / 2
    turn = 2 * (0.160 + 0.120)  # two stack lengths and two given coil ends
    rho = 1.7241e-8 * (1 + 0.00393 * (95 - 20))  # IEC 60028 annealed copper (from memory)
    r_ref = rho * series * turn / (2 * conductor)  # two equal paths in parallel
    assert res.slot_layer_area_m2 == pytest.approx(layer, rel=1e-6)  # shapely polygon
    assert res.series_turns == series
    assert res.resistance_Ohm == pytest.approx(r_ref, rel=1e-6)
    assert not res.end_winding_estimated


def test_end_winding_estimate_by_hand(demo_spec):
    # Pyrhonen et al. 2008 (from memory): l_av = 2 l + 2.4 W + 0.1 m per turn, W the coil
    # span; here W = 8 slot pitches at the mid-slot diameter 136 + 20 mm.
    res = phase_resistance(demo_spec)
    span = 8 * math.pi * 0.156 / 36
    assert res.turn_length_m == pytest.approx(2 * 0.160 + 2.4 * span + 0.1, rel=1e-9)


def test_copper_resistivity_and_loss():
    # IEC 60028: 1/58 Ohm mm^2/m at 20 C, +0.393 %/K (from memory)
    assert copper_resistivity(20.0) == pytest.approx(1 / 58 * 1e-6, rel=1e-4)
    assert copper_resistivity(120.0) == pytest.approx(1.7241e-8 * 1.393, rel=1e-9)
    # three phases, I_rms = I_peak / sqrt 2: P = 3 I_rms^2 R = 3 * 50 * 0.5 = 75 W
    assert copper_loss(0.5, 10.0) == pytest.approx(75.0, rel=1e-12)
    assert efficiency(900.0, 60.0, 40.0) == pytest.approx(0.9, rel=1e-12)
    with pytest.raises(ValueError, match="copper temperature") as info:
        copper_resistivity(math.nan)
    assert not isinstance(info.value, SpecError)  # an argument, not a file


def _uniform_region(b_t):
    """One region of 10 elements of 1 cm^2 each, with the same waveform in every element."""
    steel = builtin_material("M400-50A")
    b = np.repeat(np.asarray(b_t)[:, None, :], 10, axis=1)
    return b, {"test": (np.arange(10), steel)}, np.full(10, 1e-4), steel


def _closed_form(b_peak, f):
    # Bertotti 1988 loss separation, W/kg, with the grade's coefficients
    c = GRADES["M400-50A"].loss
    return c.k_h * f * b_peak**c.alpha + c.k_c * (f * b_peak) ** 2 + c.k_e * (f * b_peak) ** 1.5


def test_uniform_sinusoidal_flux_gives_the_closed_form_loss():
    t = np.arange(36) / 36
    b_t = np.column_stack([1.5 * np.sin(2 * np.pi * t), np.zeros(36)])
    b, regions, areas, steel = _uniform_region(b_t)
    (loss,) = region_losses(b, regions, areas, 0.2, 50.0)
    mass = 7700.0 * 10 * 1e-4 * 0.2  # density x area x length (EN 10106, from memory)
    assert loss.mass_kg == pytest.approx(mass, rel=1e-12)
    # a pure sine is resolved exactly by the FFT: rounding only
    assert loss.total_W / mass == pytest.approx(_closed_form(1.5, 50.0), rel=1e-9)
    # the grade's total at 1.5 T, 50 Hz lies below its guaranteed maximum (name: 4.00 W/kg)
    assert loss.total_W / mass < 4.0


def test_direction_rotation_and_harmonics():
    t = np.arange(64) / 64
    w = 2 * np.pi * t
    base = _closed_form(1.2, 60.0)
    # the same alternating flux along 30 degrees: the loss does not depend on direction
    b_t = 1.2 * np.sin(w)[:, None] * np.array([math.cos(0.5), math.sin(0.5)])
    b, regions, areas, _ = _uniform_region(b_t)
    (loss,) = region_losses(b, regions, areas, 1.0, 60.0)
    assert loss.total_W / loss.mass_kg == pytest.approx(base, rel=1e-9)
    # circular rotating flux: two orthogonal alternating fields (the model's stated rule)
    b, regions, areas, _ = _uniform_region(np.column_stack([1.2 * np.cos(w), 1.2 * np.sin(w)]))
    (loss,) = region_losses(b, regions, areas, 1.0, 60.0)
    assert loss.total_W / loss.mass_kg == pytest.approx(2 * base, rel=1e-9)
    # a 5th harmonic adds its own loss at 5 f
    b_t = np.column_stack([1.2 * np.sin(w) + 0.1 * np.sin(5 * w + 0.3), np.zeros(64)])
    b, regions, areas, _ = _uniform_region(b_t)
    (loss,) = region_losses(b, regions, areas, 1.0, 60.0)
    assert loss.total_W / loss.mass_kg == pytest.approx(base + _closed_form(0.1, 300.0),
                                                        rel=1e-9)


def test_ellipse_axes_of_a_harmonic():
    # B = (2 cos wt, 0.5 sin wt): an ellipse with semi-axes 2 and 0.5 T
    w = 2 * np.pi * np.arange(16) / 16
    b = np.stack([2 * np.cos(w), 0.5 * np.sin(w)], axis=-1)[:, None, :]
    orders, major, minor = harmonic_ellipses(b)
    assert orders[0] == 1
    assert major[0, 0] == pytest.approx(2.0) and minor[0, 0] == pytest.approx(0.5)
    assert np.allclose(major[1:], 0, atol=1e-12)


def test_stacking_factor_scales_flux_and_mass():
    steel = builtin_material("M400-50A", stacking_factor=0.95)
    t = np.arange(32) / 32
    b = np.column_stack([0.95 * 1.5 * np.sin(2 * np.pi * t), np.zeros(32)])[:, None, :]
    (loss,) = region_losses(b, {"s": (np.array([0]), steel)}, np.array([1e-3]), 0.1, 50.0)
    assert loss.mass_kg == pytest.approx(7700 * 1e-3 * 0.1 * 0.95, rel=1e-12)
    assert loss.total_W / loss.mass_kg == pytest.approx(_closed_form(1.5, 50.0), rel=1e-9)


def test_bad_loss_inputs():
    b, _, areas, _ = _uniform_region(np.zeros((8, 2)))
    with pytest.raises(MaterialError, match="no iron-loss coefficients"):
        region_losses(b, {"x": (np.arange(10), linear_material(1000.0))}, areas, 1.0, 50.0)
    with pytest.raises(ValueError, match="frequency") as info:
        region_losses(b, {}, areas, 1.0, -1.0)
    assert not isinstance(info.value, SpecError)  # an argument, not a file
    with pytest.raises(ValueError, match="shape") as info:
        harmonic_ellipses(np.zeros((8, 3)))
    assert not isinstance(info.value, SpecError)  # an argument, not a file
