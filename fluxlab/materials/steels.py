"""Built-in non-oriented electrical steels (EN 10106 grade names) and the iron-loss model.

A grade name ``M400-50A`` reads: maximum specific total loss 4.00 W/kg at 1.5 T, 50 Hz;
nominal thickness 0.50 mm; ``A`` for fully processed non-oriented steel (EN 10106).

What is recalled and what is made up, grade by grade:

- the minimum magnetic polarization at H = 2500, 5000 and 10000 A/m and the conventional
  density are EN 10106 values **from memory** (not checked against the standard's text);
- the resistivity and the yield strength are typical catalogue values **from memory**;
- Young's modulus 200 GPa and Poisson's ratio 0.29 are typical of silicon steel sheet in
  the rolling direction, **from memory** (catalogues give 185-220 GPa, lower across the
  rolling direction; the 2-D stress model takes the sheet as isotropic);
- the shape of the magnetization curve away from those three anchor points is *typical,
  not measured*: the polarization follows the closed form of :func:`typical_polarization`,
  whose parameters were fitted once (least squares, then rounded) so that J(300 A/m) sits
  at a typical knee value of 1.20-1.28 T, J at the three anchors lies about 0.025 T above
  the standard's minimum (production steel usually beats it by a few hundredths of a
  tesla), and J(100 kA/m) is 1.96-2.02 T; past the last point J stays constant;
- the loss coefficients are typical values: the classical eddy term follows from thickness
  and resistivity (Bertotti 1988); the hysteresis and excess terms were chosen so that the
  total at 1.5 T, 50 Hz is about 87 % of the guaranteed maximum, as typical catalogue values
  are (from memory). They are not fitted to measured loss data.

Replace these by the supplier's measured data (``bh_csv``) for any real design.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.materials.bh_table import MU0

__all__ = [
    "LossCoefficients",
    "SteelGrade",
    "GRADES",
    "H_SAMPLES",
    "classical_eddy_coefficient",
    "typical_polarization",
    "steel_curve",
]


@dataclass(frozen=True)
class LossCoefficients:
    """Coefficients of the loss-separation model, specific loss p in W/kg.

    ``p = k_h f B^alpha + k_c f^2 B^2 + k_e f^1.5 B^1.5`` for sinusoidal flux of peak B (T)
    at frequency f (Hz): hysteresis, classical eddy-current and excess terms, after
    G. Bertotti, "General properties of power losses in soft ferromagnetic materials",
    IEEE Trans. Magn. 24(1), 1988.

    Attributes
    ----------
    k_h
        Hysteresis coefficient, W/kg per (Hz T^alpha).
    alpha
        Hysteresis exponent of B, dimensionless.
    k_c
        Classical eddy-current coefficient, W/kg per (Hz T)^2.
    k_e
        Excess-loss coefficient, W/kg per (Hz T)^1.5.
    """

    k_h: float
    alpha: float
    k_c: float
    k_e: float


def classical_eddy_coefficient(
    thickness_m: float, resistivity_Ohm_m: float, density_kg_m3: float
) -> float:
    """Classical eddy-current loss coefficient of a lamination, W/kg per (Hz T)^2.

    ``k_c = pi^2 sigma d^2 / (6 rho_mass)`` with sigma = 1/resistivity and d the sheet
    thickness: the thin-sheet, sinusoidal-flux result without skin effect (Bertotti 1988).
    """
    return math.pi**2 * thickness_m**2 / (6.0 * resistivity_Ohm_m * density_kg_m3)


@dataclass(frozen=True)
class SteelGrade:
    """Data of one built-in grade (see the module docstring for what is recalled).

    Attributes
    ----------
    name
        EN 10106 designation, e.g. ``"M400-50A"``.
    thickness_m
        Nominal sheet thickness, m.
    density_kg_m3
        Conventional density, kg/m^3 (from memory).
    yield_strength_Pa
        Typical yield strength, Pa (from memory).
    resistivity_Ohm_m
        Typical electrical resistivity, Ohm m (from memory).
    loss_max_W_kg
        Guaranteed maximum specific total loss at 1.5 T, 50 Hz, W/kg (from the name).
    j_min_T
        ``((H_A_m, J_min_T), ...)``: minimum polarization at H = 2500, 5000, 10000 A/m.
    shape
        ``(J1_T, h1_A_m, J2_T, h2_A_m, m)``: parameters of :func:`typical_polarization`.
    hysteresis
        ``(k_h, alpha)`` of the hysteresis term; ``k_e``: excess coefficient.
    youngs_modulus_Pa, poisson_ratio
        Typical elastic constants (from memory), Pa and dimensionless.
    """

    name: str
    thickness_m: float
    density_kg_m3: float
    yield_strength_Pa: float
    resistivity_Ohm_m: float
    loss_max_W_kg: float
    j_min_T: tuple[tuple[float, float], ...]
    shape: tuple[float, float, float, float, float]
    hysteresis: tuple[float, float]
    k_e: float
    youngs_modulus_Pa: float = 200e9  # typical silicon steel sheet, from memory
    poisson_ratio: float = 0.29  # typical silicon steel sheet, from memory

    @property
    def loss(self) -> LossCoefficients:
        """Loss coefficients, with k_c from thickness, resistivity and density."""
        k_c = classical_eddy_coefficient(
            self.thickness_m, self.resistivity_Ohm_m, self.density_kg_m3
        )
        return LossCoefficients(self.hysteresis[0], self.hysteresis[1], k_c, self.k_e)


def _anchors(j2500: float, j5000: float, j10000: float) -> tuple[tuple[float, float], ...]:
    return ((2500.0, j2500), (5000.0, j5000), (10000.0, j10000))


_GRADE_LIST = (
    SteelGrade(
        name="M270-35A",
        thickness_m=0.35e-3,
        density_kg_m3=7650.0,  # EN 10106, from memory
        yield_strength_Pa=450e6,  # typical, from memory
        resistivity_Ohm_m=0.59e-6,  # typical high-silicon grade, from memory
        loss_max_W_kg=2.70,
        j_min_T=_anchors(1.49, 1.60, 1.70),  # EN 10106 minima, from memory
        shape=(1.159, 167.0, 0.911, 1570.0, 0.60),  # typical shape, not measured
        hysteresis=(0.0162, 1.9),  # typical, not measured
        k_e=5.4e-4,  # typical, not measured
    ),
    SteelGrade(
        name="M330-50A",
        thickness_m=0.50e-3,
        density_kg_m3=7650.0,  # EN 10106, from memory
        yield_strength_Pa=420e6,  # typical, from memory
        resistivity_Ohm_m=0.52e-6,  # typical, from memory
        loss_max_W_kg=3.30,
        j_min_T=_anchors(1.49, 1.60, 1.70),  # EN 10106 minima, from memory
        shape=(1.173, 157.0, 0.907, 1700.0, 0.60),  # typical shape, not measured
        hysteresis=(0.0178, 1.9),  # typical, not measured
        k_e=6.2e-4,  # typical, not measured
    ),
    SteelGrade(
        name="M400-50A",
        thickness_m=0.50e-3,
        density_kg_m3=7700.0,  # EN 10106, from memory
        yield_strength_Pa=350e6,  # typical, from memory
        resistivity_Ohm_m=0.42e-6,  # typical, from memory
        loss_max_W_kg=4.00,
        j_min_T=_anchors(1.53, 1.63, 1.73),  # EN 10106 minima, from memory
        shape=(1.279, 166.0, 0.811, 2530.0, 0.647),  # typical shape, not measured
        hysteresis=(0.0216, 1.9),  # typical, not measured
        k_e=6.9e-4,  # typical, not measured
    ),
    SteelGrade(
        name="M800-65A",
        thickness_m=0.65e-3,
        density_kg_m3=7800.0,  # EN 10106, from memory
        yield_strength_Pa=300e6,  # typical low-silicon grade, from memory
        resistivity_Ohm_m=0.25e-6,  # typical low-silicon grade, from memory
        loss_max_W_kg=8.00,
        j_min_T=_anchors(1.60, 1.70, 1.78),  # EN 10106 minima, from memory
        shape=(1.339, 212.0, 0.781, 1790.0, 0.60),  # typical shape, not measured
        hysteresis=(0.0398, 1.9),  # typical, not measured
        k_e=1.08e-3,  # typical, not measured
    ),
)

#: Built-in grades by designation.
GRADES: dict[str, SteelGrade] = {g.name: g for g in _GRADE_LIST}

#: Field strengths, A/m, at which the built-in curves are tabulated: dense below the knee,
#: through the three anchor points of the standard, up to 100 kA/m.
H_SAMPLES: tuple[float, ...] = (
    0.0, 10.0, 20.0, 30.0, 40.0, 50.0, 60.0, 70.0, 80.0, 90.0, 100.0, 120.0, 140.0, 160.0,
    180.0, 200.0, 250.0, 300.0, 350.0, 400.0, 450.0, 500.0, 600.0, 700.0, 800.0, 900.0,
    1000.0, 1250.0, 1500.0, 1750.0, 2000.0, 2500.0, 3000.0, 3500.0, 4000.0, 5000.0, 6000.0,
    7000.0, 8000.0, 10000.0, 12500.0, 15000.0, 20000.0, 25000.0, 30000.0, 40000.0, 50000.0,
    60000.0, 70000.0, 80000.0, 90000.0, 100000.0,
)  # fmt: skip


def typical_polarization(H: np.ndarray, shape: tuple[float, ...]) -> np.ndarray:
    """Typical polarization J(H), T, of non-oriented steel: an invented closed form.

    ``J = J1 tanh(H/h1) + J2 x / (1 + x^m)^(1/m)``, ``x = H/h2``: the tanh term is the steep
    rise to the knee, the second term the slow approach to the saturation polarization
    J1 + J2. It has no physical derivation; it only gives a typical shape.
    """
    J1, h1, J2, h2, m = shape
    x = np.asarray(H, dtype=float) / h2
    return J1 * np.tanh(np.asarray(H, dtype=float) / h1) + J2 * x / (1.0 + x**m) ** (1.0 / m)


def steel_curve(grade: SteelGrade) -> tuple[np.ndarray, np.ndarray]:
    """Tabulated sheet-steel curve of a built-in grade: H (A/m) and B = mu0 H + J (T)."""
    h = np.array(H_SAMPLES)
    return h, MU0 * h + typical_polarization(h, grade.shape)
