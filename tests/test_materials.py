"""Tests of fluxlab.materials.material: B-H curves, nu(B^2), energy, built-in steels, loss model."""

from __future__ import annotations

import logging
import math
import pickle
import re

import numpy as np
import pytest
from scipy.integrate import quad

from fluxlab.errors import MaterialError
from fluxlab.materials import steels
from fluxlab.materials.files import material_from_csv, resolve_material
from fluxlab.materials.material import (
    AIR,
    BUILTIN_STEELS,
    MU0,
    b_of_h,
    bh_material,
    builtin_material,
    coenergy_density,
    energy_density,
    h_of_b,
    linear_material,
    reluctivity,
    specific_iron_loss,
)

# A measured-looking sheet curve with few, unevenly spaced points (invented, typical shape),
# so the generic path is tested apart from the dense built-in tables.
H_DATA = [0.0, 40.0, 100.0, 200.0, 500.0, 1500.0, 5000.0, 20000.0, 60000.0]
B_DATA = [0.0, 0.25, 0.80, 1.15, 1.38, 1.52, 1.66, 1.86, 2.05]

# EN 10106 minimum polarization J (T) at H = 2500, 5000, 10000 A/m, from memory; kept
# here apart from fluxlab/materials/steels.py so the check does not read the code under test.
EN10106_J_MIN = {
    "M270-35A": (1.49, 1.60, 1.70),
    "M330-50A": (1.49, 1.60, 1.70),
    "M400-50A": (1.53, 1.63, 1.73),
    "M800-65A": (1.60, 1.70, 1.78),
}


def curves():
    """The materials every curve property is checked on."""
    return [
        builtin_material("M400-50A"),
        builtin_material("M270-35A", stacking_factor=0.95),
        bh_material("coarse", H_DATA, B_DATA),
    ]


CURVE_IDS = ["M400-50A", "M270-35A k=0.95", "coarse data"]


def write_csv(tmp_path, text, name="curve.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def csv_text(h, b, header="H_A_per_m,B_T"):
    rows = [header] if header else []
    return "\n".join(rows + [f"{x},{y}" for x, y in zip(h, b, strict=True)]) + "\n"


# --- consistency of nu, its derivative and the energy --------------------------------------


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_dnu_matches_central_difference(material):
    # Common practice, no source: the Newton Jacobian needs dnu = d nu/d(b_sq) of the same nu.
    # Step 1e-6 b_sq: rounding (2e-16 / 1e-6) and the O(step) error where a difference
    # straddles a join of the C1 pieces stay below 1e-6 of the scale nu/b_sq of dnu.
    b = np.linspace(0.01, 2.6, 1301)  # through the data, the last point and past it
    s = b**2
    nu, dnu = reluctivity(material, s)
    step = 1e-6 * s
    fd = (reluctivity(material, s + step)[0] - reluctivity(material, s - step)[0]) / (2 * step)
    assert np.all(np.abs(fd - dnu) <= 1e-6 * nu / s)


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_energy_derivative_is_half_nu(material):
    # dw = H dB = nu B dB = (nu/2) d(B^2): common practice, no source. Same central
    # difference as above; the energy is smoother (C2), so 1e-8 of nu is ample.
    s = np.linspace(0.01, 2.6, 1301) ** 2
    nu, _ = reluctivity(material, s)
    step = 1e-6 * s
    fd = (energy_density(material, s + step) - energy_density(material, s - step)) / (2 * step)
    assert np.all(np.abs(fd - nu / 2) <= 1e-8 * nu)


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_coenergy_is_integral_of_b_dh(material):
    # w'(H) = integral_0^H B dH (common practice, no source), integrated by adaptive
    # quadrature over b_of_h, which reads the B-H interpolant, not the nu table. The table
    # reproduces H to about 2e-5 relative (see the round trip), hence rtol 1e-4.
    for h in (50.0, 300.0, 2500.0, 30000.0, 150000.0):
        knots = [p for p in material.h_table if 0 < p < h]
        reference, _ = quad(
            lambda x: float(b_of_h(material, x)), 0.0, h, points=knots, limit=500, epsabs=0
        )
        b = float(b_of_h(material, h))
        assert coenergy_density(material, b**2) == pytest.approx(reference, rel=1e-4)
        assert energy_density(material, b**2) == pytest.approx(h * b - reference, rel=1e-4)


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_h_increasing_energy_convex_nu_finite(material):
    # H(B) strictly increasing <=> w(B) strictly convex: common practice, no source.
    b = np.linspace(0.0, 3.0, 30001)
    h = h_of_b(material, b)
    assert np.all(np.diff(h) > 0)
    w = energy_density(material, b**2)
    assert np.all(w[2:] - 2 * w[1:-1] + w[:-2] > 0)
    # At B -> 0, nu -> dH/dB(0) = 1/(mu0 mu_r): finite and positive.
    nu0 = reluctivity(material, np.array([0.0, 1e-12]))[0]
    assert np.all(np.isfinite(nu0)) and np.all(nu0 > 0)
    # documented choice: the initial slope is the secant of the first data interval
    mu_initial = material.b_table[1] / (MU0 * material.h_table[1])
    assert material.mu_r == pytest.approx(mu_initial, rel=1e-12)
    assert nu0[0] == pytest.approx(1 / (MU0 * mu_initial), rel=1e-12)


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_mu0_slope_past_last_point(material):
    # Past saturation J is constant, dB/dH = mu0 (common practice, no source), so
    # H = H_last + (B - B_last)/mu0 and mu0 nu = 1 - J_last/B -> 1. Tolerance: rounding.
    h_last, b_last = material.h_table[-1], material.b_table[-1]
    j_last = b_last - MU0 * h_last
    b = b_last + np.array([1e-3, 0.1, 1.0, 10.0, 1000.0])
    assert h_of_b(material, b) == pytest.approx(h_last + (b - b_last) / MU0, rel=1e-12)
    nu, _ = reluctivity(material, b**2)
    assert MU0 * nu == pytest.approx(1 - j_last / b, rel=1e-12)
    assert abs(MU0 * nu[-1] - 1) < 2.5e-3
    h = h_last * np.array([1.5, 3.0])
    slope = np.diff(b_of_h(material, h)) / np.diff(h)
    assert slope == pytest.approx(MU0, rel=1e-9)


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_roundtrip_b_of_h_of_b(material):
    # The nu table against the B-H interpolant it was built from (common practice, no
    # source). 1e-5 T is two orders below the accuracy of measured B-H data (about 1e-3 T).
    b = np.linspace(-3.0, 3.0, 60001)
    assert np.max(np.abs(b_of_h(material, h_of_b(material, b)) - b)) < 1e-5


@pytest.mark.parametrize("material", curves(), ids=CURVE_IDS)
def test_interpolant_through_data_and_dB_dH_at_least_mu0(material):
    # The monotone interpolant passes through the data and never has dB/dH < mu0, since
    # J = B - mu0 H never decreases (common practice, no source). Tolerance: rounding.
    assert b_of_h(material, material.h_table) == pytest.approx(material.b_table, abs=1e-12)
    h = np.linspace(0.0, 1.2 * material.h_table[-1], 20001)
    assert np.all(np.diff(b_of_h(material, h)) >= MU0 * np.diff(h) * (1 - 1e-8))


def test_decreasing_polarization_is_raised_to_running_max(caplog):
    # Data whose last segment has dB/dH < mu0 (rounded B): J is held at its running maximum
    # (common practice, no source), so the slope there is exactly mu0; a warning is logged.
    h = [0.0, 50.0, 200.0, 1000.0, 50000.0, 100000.0]
    b = [0.0, 0.5, 1.2, 1.45, 1.95, 1.99]  # 0.04 T over 50 kA/m < mu0 * 50 kA/m = 0.063 T
    with caplog.at_level(logging.WARNING, logger="fluxlab.materials.material"):
        material = bh_material("rounded", h, b)
    assert "running maximum" in caplog.text
    assert material.b_table[-1] == pytest.approx(1.95 + MU0 * 50000.0, rel=1e-12)
    hh = np.array([60000.0, 90000.0])
    assert np.diff(b_of_h(material, hh))[0] / 30000.0 == pytest.approx(MU0, rel=1e-9)


def test_vectorised_shapes_nan_and_negative():
    material = builtin_material("M400-50A")
    s = np.linspace(0.0, 5.0, 12).reshape(3, 4)
    nu, dnu = reluctivity(material, s)
    assert nu.shape == dnu.shape == (3, 4)
    assert energy_density(material, s).shape == (3, 4)
    nu_nan, _ = reluctivity(material, np.array([np.nan, 1.0]))
    assert np.isnan(nu_nan[0]) and np.isfinite(nu_nan[1])
    assert reluctivity(material, np.array([-1.0]))[0] == reluctivity(material, np.array([0.0]))[0]


# --- built-in steels ------------------------------------------------------------------------


def test_reference_table_covers_every_builtin():
    assert set(BUILTIN_STEELS) == set(EN10106_J_MIN)
    thicknesses = {name.split("-")[1][:2] for name in BUILTIN_STEELS}
    assert {"35", "50"} <= thicknesses


@pytest.mark.parametrize("name", sorted(EN10106_J_MIN))
def test_builtin_polarization_meets_en10106_minima(name):
    # EN 10106 minimum polarization at 2500/5000/10000 A/m (values from memory, above):
    # J >= J_min, and at most 0.06 T above (a typical curve, not a premium one).
    material = builtin_material(name)
    h = np.array([2500.0, 5000.0, 10000.0])
    j = b_of_h(material, h) - MU0 * h
    j_min = np.array(EN10106_J_MIN[name])
    assert np.all(j >= j_min)
    assert np.all(j <= j_min + 0.06)


@pytest.mark.parametrize("name", BUILTIN_STEELS)
def test_builtin_shape_is_typical(name):
    # Typical non-oriented steel, common practice, no source: initial mu_r of a few
    # thousand, the knee (mu_r fallen below 1000) between 1.3 and 1.6 T, and a polarization
    # of 1.95-2.1 T at very high field.
    material = builtin_material(name)
    assert 1000 <= material.mu_r <= 10000
    b = np.linspace(0.5, 2.0, 1501)
    mu_r = b / (MU0 * h_of_b(material, b))
    knee = b[np.argmax(mu_r < 1000)]
    assert 1.3 <= knee <= 1.6
    assert 1.95 <= float(b_of_h(material, 1e6)) - MU0 * 1e6 <= 2.1
    assert material.h_table[0] == 0 and material.h_table[-1] >= 1e5


@pytest.mark.parametrize("name", BUILTIN_STEELS)
def test_builtin_properties(name):
    # Density 7500-7900 kg/m^3 and yield strength 250-500 MPa: typical NO steel, from memory.
    material = builtin_material(name)
    assert 7500 <= material.density_kg_m3 <= 7900
    assert 250e6 <= material.yield_strength_Pa <= 500e6
    assert material.name == name and material.kind == "nonlinear"


def test_builtin_lookup_is_case_insensitive_and_equal():
    a = builtin_material("M400-50A")
    assert builtin_material("m400-50a") == a
    assert hash(builtin_material(" M400-50A ")) == hash(a)
    assert builtin_material("M400-50A", 0.97) != a


# --- stacking factor ------------------------------------------------------------------------


@pytest.mark.parametrize("k", [0.5, 0.95, 0.97])
def test_stacking_factor_formula(k):
    # B_eff(H) = k B_steel(H) + (1 - k) mu0 H: common practice, no source. Exact for the
    # interpolant too, since monotone Hermite slopes scale with the data; tolerance: rounding.
    one = bh_material("sheet", H_DATA, B_DATA)
    stacked = bh_material("stack", H_DATA, B_DATA, stacking_factor=k)
    h = np.linspace(0.0, 2e5, 4001)
    expected = k * b_of_h(one, h) + (1 - k) * MU0 * h
    assert b_of_h(stacked, h) == pytest.approx(expected, rel=1e-12, abs=1e-15)
    assert stacked.stacking_factor == k
    # the solver's side agrees too (table accuracy, see the round trip)
    b = expected[1:]
    assert h_of_b(stacked, b) == pytest.approx(h[1:], rel=1e-4)


# --- linear material ------------------------------------------------------------------------


@pytest.mark.parametrize("mu_r", [1.0, 1000.0])
def test_linear_closed_forms(mu_r):
    # B = mu0 mu_r H, w = w' = B^2 / (2 mu0 mu_r): the linear constitutive law. Rounding only.
    material = AIR if mu_r == 1.0 else linear_material(mu_r)
    s = np.array([0.0, 0.25, 4.0])
    nu, dnu = reluctivity(material, s)
    assert nu == pytest.approx(np.full(3, 1 / (MU0 * mu_r)), rel=1e-15)
    assert np.all(dnu == 0)
    assert energy_density(material, s) == pytest.approx(s / (2 * MU0 * mu_r), rel=1e-15)
    assert coenergy_density(material, s) == pytest.approx(s / (2 * MU0 * mu_r), rel=1e-15)
    assert b_of_h(material, 1000.0) == pytest.approx(MU0 * mu_r * 1000.0, rel=1e-15)
    assert h_of_b(material, 1.0) == pytest.approx(1 / (MU0 * mu_r), rel=1e-15)
    assert material.kind == "linear" and material.h_table.size == 0


# --- iron loss ------------------------------------------------------------------------------


@pytest.mark.parametrize("name", BUILTIN_STEELS)
def test_loss_at_1p5T_50Hz_within_grade_maximum(name):
    # EN 10106 naming: the grade number is the maximum specific total loss at 1.5 T, 50 Hz in
    # W/kg x 100. A typical steel stays below it and, common practice, no source, above 60 %.
    p_max = int(name[1 : name.index("-")]) / 100.0
    p = specific_iron_loss(builtin_material(name), 1.5, 50.0)
    assert 0.6 * p_max <= p <= p_max


@pytest.mark.parametrize("name", BUILTIN_STEELS)
def test_classical_eddy_coefficient_from_thickness(name):
    # k_c = pi^2 sigma d^2 / (6 rho_mass) (Bertotti, IEEE Trans. Magn. 24(1), 1988), with
    # the thickness read from the grade name (-50A: 0.50 mm). Rounding only.
    grade = steels.GRADES[name]
    d = int(name.split("-")[1][:2]) * 1e-5
    expected = math.pi**2 * d**2 / (6 * grade.resistivity_Ohm_m * grade.density_kg_m3)
    assert builtin_material(name).loss.k_c == pytest.approx(expected, rel=1e-12)
    assert grade.thickness_m == pytest.approx(d, rel=1e-12)


def test_loss_scales_and_refuses_bad_input():
    material = builtin_material("M400-50A")
    c = material.loss
    # separation terms at 1 T, 1 Hz are the coefficients themselves (the model's definition)
    assert specific_iron_loss(material, 1.0, 1.0) == pytest.approx(c.k_h + c.k_c + c.k_e)
    assert specific_iron_loss(material, np.array([0.5, 1.0]), 50.0).shape == (2,)
    with pytest.raises(MaterialError, match="'air' has no iron-loss"):
        specific_iron_loss(AIR, 1.0, 50.0)
    with pytest.raises(ValueError, match="b_peak_T") as info:  # a wrong argument
        specific_iron_loss(material, -1.0, 50.0)
    assert not isinstance(info.value, MaterialError)


# --- bad input ------------------------------------------------------------------------------

BAD_CSV = [
    # (description, file text, text the message must contain)
    ("H not increasing", csv_text([0, 10, 10, 30, 40], [0, 0.1, 0.2, 0.3, 0.4]), "H[2] = 10"),
    (
        "H repeats, no origin",
        csv_text([10, 20, 20, 30, 40], [0.1, 0.2, 0.25, 0.3, 0.4]),
        "H[2] = 20",
    ),
    ("B not increasing", csv_text([0, 10, 20, 30, 40], [0, 0.1, 0.3, 0.3, 0.4]), "B[3] = 0.3"),
    ("negative H", csv_text([0, -10, 20, 30, 40], [0, 0.1, 0.2, 0.3, 0.4]), "H[1] = -10"),
    ("negative B", csv_text([0, 10, 20, 30, 40], [0, -0.1, 0.2, 0.3, 0.4]), "B[1] = -0.1"),
    ("too few points", csv_text([0, 10, 20, 30], [0, 0.1, 0.2, 0.3]), "need >= 5"),
    ("remanence", csv_text([0, 10, 20, 30, 40], [0.1, 0.2, 0.3, 0.4, 0.5]), "B[0] = 0.1"),
    ("NaN", csv_text([0, 10, 20, 30, 40], [0, 0.1, float("nan"), 0.3, 0.4]), "B[2] = nan"),
    ("three columns", "H,B,mu\n0,0,1\n10,0.1,2\n", "3 columns"),
    ("text in data", csv_text([0, 10], [0, 0.1]) + "20,abc\n", "'20,abc'"),
    ("B in mT", csv_text([0, 10, 20, 30, 40], [0, 100, 200, 300, 400]), "above the limit 2.5"),
    ("below mu0", csv_text([0, 1e6, 2e6, 3e6, 4e6], [0, 0.5, 1.0, 1.5, 2.0]), "not above mu0"),
]


@pytest.mark.parametrize("text,expected", [c[1:] for c in BAD_CSV], ids=[c[0] for c in BAD_CSV])
def test_bad_csv_names_key_file_and_value(tmp_path, text, expected):
    write_csv(tmp_path, text)
    value = {"bh_csv": "curve.csv"}
    with pytest.raises(MaterialError) as info:
        resolve_material(value, tmp_path, "materials.rotor")
    message = str(info.value)
    assert message.startswith("materials.rotor = {'bh_csv': 'curve.csv'}")
    assert "curve.csv" in message.split(":", 1)[1]
    assert expected in message


BAD_VALUES = [
    ("unknown grade", "M999-50A", "unknown steel grade 'M999-50A'; known grades: M270-35A"),
    ("unknown grade key", {"grade": "M1-1"}, "'M1-1'"),
    ("stacking zero", {"grade": "M400-50A", "stacking_factor": 0.0}, "0.0 must lie in (0, 1]"),
    ("stacking above 1", {"grade": "M400-50A", "stacking_factor": 1.5}, "1.5 must lie in (0, 1]"),
    ("stacking text", {"grade": "M400-50A", "stacking_factor": "0.9"}, "must be a number"),
    ("mu_r zero", {"linear_mu_r": 0.0}, "materials.rotor.linear_mu_r = 0.0 must be finite and > 0"),
    ("mu_r negative", {"linear_mu_r": -5}, "linear_mu_r = -5 must be finite and > 0"),
    ("mu_r bool", {"linear_mu_r": True}, "linear_mu_r = True must be a number"),
    ("two forms", {"linear_mu_r": 1.0, "grade": "M400-50A"}, "exactly one of"),
    ("no form", {"stacking_factor": 0.9}, "exactly one of"),
    ("unknown key", {"grade": "M400-50A", "colour": "grey"}, "materials.rotor.colour"),
    ("missing file", {"bh_csv": "nope.csv"}, "nope.csv: cannot read"),
    ("path not text", {"bh_csv": 3}, "bh_csv = 3 must be a file path"),
    ("wrong type", 42, "expected a grade name, 'air' or a table"),
]


@pytest.mark.parametrize(
    "value,expected", [c[1:] for c in BAD_VALUES], ids=[c[0] for c in BAD_VALUES]
)
def test_bad_values_name_key_and_value(tmp_path, value, expected):
    with pytest.raises(MaterialError) as info:
        resolve_material(value, tmp_path, "materials.rotor")
    message = str(info.value)
    assert message.startswith(f"materials.rotor = {value!r}: ")
    assert expected in message


def test_bad_arguments_of_factories():
    with pytest.raises(MaterialError, match=re.escape("material 'x': stacking_factor = 0 ")):
        bh_material("x", H_DATA, B_DATA, stacking_factor=0)
    with pytest.raises(MaterialError, match="mu_r = -1.0 must be finite and > 0"):
        linear_material(-1.0)
    with pytest.raises(MaterialError, match="1-D of one length"):
        bh_material("x", H_DATA, B_DATA[:-1])
    with pytest.raises(MaterialError, match=re.escape("H[3] = inf")):
        bh_material("x", [0, 1, 2, np.inf, 4], [0, 0.1, 0.2, 0.3, 0.4])


# --- accepted forms -------------------------------------------------------------------------


def test_resolve_each_accepted_form(tmp_path):
    write_csv(tmp_path, csv_text(H_DATA, B_DATA))
    key = "materials.rotor"
    assert resolve_material("M400-50A", tmp_path, key) == builtin_material("M400-50A")
    assert resolve_material("air", tmp_path, key) is AIR
    assert resolve_material("Air", tmp_path, key) is AIR
    linear = resolve_material({"linear_mu_r": 1000.0}, tmp_path, key)
    assert linear.kind == "linear" and linear.mu_r == 1000.0
    from_csv = resolve_material({"bh_csv": "curve.csv"}, tmp_path, key)
    assert from_csv.name == "curve"
    assert from_csv == bh_material("curve", H_DATA, B_DATA)
    stacked = resolve_material({"grade": "M400-50A", "stacking_factor": 0.96}, tmp_path, key)
    assert stacked == builtin_material("M400-50A", stacking_factor=0.96)
    assert stacked.stacking_factor == 0.96
    extras = {
        "bh_csv": "curve.csv",
        "stacking_factor": 0.97,
        "name": "supplier X",
        "density_kg_m3": 7600.0,
        "yield_strength_MPa": 380.0,
    }
    custom = resolve_material(extras, tmp_path, key)
    assert (custom.name, custom.stacking_factor) == ("supplier X", 0.97)
    assert (custom.density_kg_m3, custom.yield_strength_Pa) == (7600.0, 380e6)


def test_csv_header_comments_and_missing_origin(tmp_path):
    # (0, 0) is prepended when the data start above H = 0 (documented behaviour).
    text = "# supplier sheet, 50 Hz\n" + csv_text(H_DATA[1:], B_DATA[1:], header="H, B")
    material = material_from_csv(write_csv(tmp_path, text), name="m")
    assert material == bh_material("m", H_DATA, B_DATA)
    assert material.h_table[0] == 0 and material.b_table[0] == 0


def test_pickle_roundtrip_keeps_the_curve():
    # Sweeps send materials to worker processes (spawn): a pickled material must evaluate
    # identically. Exact equality: the same arrays travel.
    material = builtin_material("M330-50A", stacking_factor=0.97)
    copy = pickle.loads(pickle.dumps(material))
    s = np.linspace(0.0, 6.0, 101)
    assert copy == material
    assert np.array_equal(reluctivity(copy, s)[1], reluctivity(material, s)[1])
