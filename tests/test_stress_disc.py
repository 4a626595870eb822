"""The stress model against closed forms: the rotating annular disc with a free bore."""

import math

import numpy as np
import pytest
from paths import GEOMETRIES

from fluxlab.spec.machine_file import load_machine
from fluxlab.stress.elasticity import von_mises
from fluxlab.stress.study import rotor_stress

SPEED_RPM = 3000.0


def disc_closed_form(a, b, rho, E, nu, omega):
    """Hoop stress at the bore (Pa) and radial displacement at the rim (m) of a thin annular
    disc, inner radius a, outer b, both edges free, spinning at omega rad/s; plane stress.

    Source: S. Timoshenko and J. N. Goodier, Theory of Elasticity, the rotating disc of
    uniform thickness (also Ugural & Fenster, Advanced Strength and Applied Elasticity,
    thick-walled cylinders and rotating discs). Derivation: radial equilibrium
    d(r s_r)/dr - s_t + rho omega^2 r^2 = 0 with plane-stress Hooke's law
    s_r = E/(1-nu^2) (u' + nu u/r), s_t = E/(1-nu^2) (u/r + nu u') gives
    u'' + u'/r - u/r^2 = -(1-nu^2) rho omega^2 r / E, so
    u = C1 r + C2 / r - (1-nu^2) rho omega^2 r^3 / (8 E). Free edges, s_r(a) = s_r(b) = 0, fix
    C1, C2 and give
        s_r = (3+nu)/8 rho omega^2 (a^2 + b^2 - a^2 b^2 / r^2 - r^2),
        s_t = (3+nu)/8 rho omega^2 (a^2 + b^2 + a^2 b^2 / r^2 - (1+3 nu)/(3+nu) r^2).
    At the bore s_t(a) = (3+nu)/4 rho omega^2 (b^2 + (1-nu)/(3+nu) a^2); at the rim s_r = 0,
    so the hoop strain is s_t(b)/E and u(b) = b s_t(b) / E.
    """
    k = (3 + nu) / 8 * rho * omega**2
    hoop_bore = 2 * k * (b**2 + (1 - nu) / (3 + nu) * a**2)
    hoop_rim = k * (2 * a**2 + b**2 - (1 + 3 * nu) / (3 + nu) * b**2)
    return hoop_bore, b * hoop_rim / E


@pytest.fixture(scope="module")
def disc():
    spec = load_machine(GEOMETRIES / "demo_round_rotor.toml")  # no barriers: an annulus
    return spec, rotor_stress(spec, local=1.5e-3, bulk=1.5e-3)


def test_hoop_stress_at_the_bore_within_one_percent(disc):
    spec, result = disc
    m = result.mechanics
    a, b = spec.rotor.shaft_diameter / 2, spec.rotor_radius
    omega = SPEED_RPM * 2 * math.pi / 60
    hoop, _ = disc_closed_form(a, b, m.density_kg_m3, m.youngs_modulus_Pa, m.poisson_ratio,
                               omega)
    # the hoop stress at the bore vertices: sigma_t = (-y, x)/r . sigma . (-y, x)/r
    mesh = result.mesh.mesh
    x, y = mesh.p[:, mesh.t]  # (3, n_elements) each, vertex k of element e at [k, e]
    r = np.hypot(x, y)
    sx, sy, txy = (s.T for s in result.field.stress)
    hoop_fem = (sx * y**2 + sy * x**2 - 2 * txy * x * y) / r**2 * omega**2
    at_bore = np.isclose(r, a, rtol=1e-9)
    assert at_bore.sum() > 20
    assert np.max(np.abs(hoop_fem[at_bore] / hoop - 1)) < 0.01
    # the von Mises peak of the disc is that hoop stress (s_r = 0 at the bore)
    assert result.peak_Pa(SPEED_RPM) == pytest.approx(hoop, rel=0.01)
    assert np.max(von_mises(result.field.stress)) == pytest.approx(result.von_mises.max())


def test_radial_growth_at_the_rim_within_one_percent(disc):
    spec, result = disc
    m = result.mechanics
    omega = SPEED_RPM * 2 * math.pi / 60
    _, u_rim = disc_closed_form(spec.rotor.shaft_diameter / 2, spec.rotor_radius,
                                m.density_kg_m3, m.youngs_modulus_Pa, m.poisson_ratio, omega)
    assert result.growth * omega**2 == pytest.approx(u_rim, rel=0.01)
