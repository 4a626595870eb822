"""Magnetic materials: B-H curves, the reluctivity nu(B^2) the solver needs, built-in steels.

A nonlinear material is built from measured (H, B) pairs of the sheet steel:

1. the stacking factor k gives the curve of the laminated stack,
   B_eff(H) = k B_steel(H) + (1 - k) mu0 H (common practice, no source): J_eff = k J;
2. J = B - mu0 H is interpolated monotonically and nu(B^2) = H/B tabulated up to B_last
   (:mod:`fluxlab.materials.bh_table`);
3. past the last point J stays constant, i.e. B = B_last + mu0 (H - H_last), where nu has
   the closed form nu = 1/mu0 - J_last / (mu0 B).

Everything is SI: H in A/m, B in T, nu in m/H, energy densities in J/m^3.
"""

from __future__ import annotations

import functools
import logging
import math
from dataclasses import dataclass, field

import numpy as np

from fluxlab.errors import MaterialError
from fluxlab.materials import steels
from fluxlab.materials.bh_table import MU0, Curve, evaluate_pieces, polarization, tabulate
from fluxlab.materials.steels import LossCoefficients

__all__ = [
    "MU0",
    "Material",
    "LossCoefficients",
    "reluctivity",
    "energy_density",
    "coenergy_density",
    "h_of_b",
    "b_of_h",
    "linear_material",
    "AIR",
    "bh_material",
    "builtin_material",
    "BUILTIN_STEELS",
    "specific_iron_loss",
]

log = logging.getLogger(__name__)


MIN_POINTS = 5  # a B-H curve needs at least this many points, the origin included
_J_MAX_T = 2.5  # no soft magnetic material saturates above ~2.45 T (FeCo), from memory


@dataclass(frozen=True)
class Material:
    """A magnetic material of one region.

    Build one with :func:`linear_material`, :func:`bh_material`, :func:`builtin_material`
    or :func:`fluxlab.materials.files.material_from_csv`; direct construction checks and
    tabulates the curve too. Materials compare equal when all fields, tables included, are
    equal; they are hashable.

    Attributes
    ----------
    name
        Name shown in results, e.g. ``"M400-50A"``.
    kind
        ``"linear"`` or ``"nonlinear"``.
    mu_r
        Linear: relative permeability. Nonlinear: initial slope of the stack curve / mu0,
        informational, always recomputed from the table.
    h_table, b_table
        Nonlinear: H (A/m) and B (T) of the effective (stacked) curve, starting at (0, 0),
        after the J >= previous-J correction; empty for linear materials.
    stacking_factor
        Iron fraction of the stack length already applied to the tables, in (0, 1].
    density_kg_m3
        Mass density, kg/m^3.
    yield_strength_Pa, youngs_modulus_Pa, poisson_ratio
        Yield strength and Young's modulus, Pa, Poisson's ratio; 0 means unknown.
    loss
        Iron-loss coefficients, or None if unknown.
    """

    name: str
    kind: str
    mu_r: float
    h_table: np.ndarray = field(repr=False, compare=False)
    b_table: np.ndarray = field(repr=False, compare=False)
    stacking_factor: float = 1.0
    density_kg_m3: float = 7650.0
    yield_strength_Pa: float = 0.0
    loss: LossCoefficients | None = None
    youngs_modulus_Pa: float = 0.0
    poisson_ratio: float = 0.0
    _curve: Curve | None = field(init=False, repr=False, compare=False)
    _fingerprint: bytes = field(init=False, repr=False)  # tables' bytes: equality and hash

    def __post_init__(self) -> None:
        where = f"material {self.name!r}"
        _check_fraction(self.stacking_factor, f"{where}: stacking_factor")
        _positive_number(self.density_kg_m3, f"{where}: density_kg_m3")
        for name, high in (("yield_strength_Pa", math.inf), ("youngs_modulus_Pa", math.inf),
                           ("poisson_ratio", 0.5)):  # 0 <= nu < 1/2 for a stable solid
            if not 0 <= _number(getattr(self, name), f"{where}: {name}") < high:
                raise MaterialError(f"{where}: {name} = {getattr(self, name)} outside [0, {high})")
        if self.kind == "linear":
            mu_r = _positive_number(self.mu_r, f"{where}: mu_r")
            h = b = np.zeros(0)
            curve = None
        elif self.kind == "nonlinear":
            h, b = _checked_curve(self.h_table, self.b_table, where)
            curve = tabulate(h, b)
            mu_r = 1.0 / (MU0 * curve.nu_c[0][0])
        else:
            raise MaterialError(f"{where}: kind = {self.kind!r}; expected 'linear' or 'nonlinear'")
        h.setflags(write=False)
        b.setflags(write=False)
        for name, value in (("mu_r", float(mu_r)), ("h_table", h), ("b_table", b)):
            object.__setattr__(self, name, value)
        object.__setattr__(self, "_curve", curve)
        object.__setattr__(self, "_fingerprint", h.tobytes() + b.tobytes())


# --- input checks -------------------------------------------------------------------------


def _number(value: object, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.number)):
        raise MaterialError(f"{where} = {value!r} must be a number")
    return float(value)


def _positive_number(value: object, where: str) -> float:
    if not (math.isfinite(x := _number(value, where)) and x > 0):
        raise MaterialError(f"{where} = {value!r} must be finite and > 0")
    return x


def _check_fraction(value: object, where: str) -> float:
    x = _number(value, where)
    if not (0.0 < x <= 1.0):
        raise MaterialError(f"{where} = {value!r} must lie in (0, 1]")
    return x


def _checked_curve(h_in: object, b_in: object, where: str) -> tuple[np.ndarray, np.ndarray]:
    """Validated copy of sheet (H, B) data, (0, 0) prepended if H starts above 0.

    A J that decreases (dB/dH < mu0, usually rounding in the data) is raised to the
    running maximum, with a warning: J = B - mu0 H of a real steel never decreases.
    """
    try:
        h = np.array(h_in, dtype=float)
        b = np.array(b_in, dtype=float)
    except (TypeError, ValueError) as err:
        raise MaterialError(f"{where}: H and B must be numbers ({err})") from err
    if h.ndim != 1 or h.shape != b.shape:
        raise MaterialError(f"{where}: H and B must be 1-D of one length, got {h.shape}, {b.shape}")
    for label, values in (("H", h), ("B", b)):
        bad = np.flatnonzero(~np.isfinite(values) | (values < 0))
        if bad.size:
            i = bad[0]
            raise MaterialError(f"{where}: {label}[{i}] = {values[i]} must be finite and >= 0")
    if h.size and h[0] == 0.0 and b[0] != 0.0:
        raise MaterialError(f"{where}: B[0] = {b[0]} T at H = 0 must be 0 (no remanence)")
    prepended = int(h.size > 0 and h[0] > 0.0)  # indices in messages count the input rows
    if prepended:
        h, b = np.r_[0.0, h], np.r_[0.0, b]
    if h.size < MIN_POINTS:
        raise MaterialError(f"{where}: {h.size} points with the origin; need >= {MIN_POINTS}")
    for label, values, unit in (("H", h, "A/m"), ("B", b, "T")):
        bad = np.flatnonzero(np.diff(values) <= 0)
        if bad.size:
            i = bad[0] + 1
            raise MaterialError(
                f"{where}: {label} must increase strictly, but {label}[{i - prepended}] = "
                f"{values[i]} {unit} follows {values[i - 1]} {unit}"
            )
    j = b - MU0 * h
    if j[1] <= 0.0:
        raise MaterialError(
            f"{where}: B/H = {b[1] / h[1]:.3g} H/m at the first point is not above mu0; "
            "not a soft magnetic curve (H in A/m, B in T?)"
        )
    if j.max() > _J_MAX_T:
        raise MaterialError(
            f"{where}: polarization B - mu0 H reaches {j.max():.3g} T, above the limit "
            f"{_J_MAX_T} T of any soft magnetic material (B in T, H in A/m?)"
        )
    j_mono = np.maximum.accumulate(j)
    if np.any(j_mono - j > 1e-9):
        log.warning(
            "%s: dB/dH < mu0 at %d points; J raised to its running maximum",
            where,
            np.count_nonzero(j_mono - j > 1e-9),
        )
    return h, MU0 * h + j_mono


def _flat_b_sq(b_sq) -> tuple[np.ndarray, tuple[int, ...]]:
    s = np.asarray(b_sq, dtype=float)
    return np.maximum(s.ravel(), 0.0), s.shape


# --- public functions of B and H ----------------------------------------------------------


def reluctivity(material: Material, b_sq: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Reluctivity and its derivative at squared flux density.

    Parameters
    ----------
    material
        The material.
    b_sq
        |B|^2, T^2, any shape; negative values count as 0.

    Returns
    -------
    nu, dnu
        nu = H/B in m/H and d nu / d(b_sq) in m/(H T^2), shaped like ``b_sq``.
    """
    s, shape = _flat_b_sq(b_sq)
    c = material._curve
    if c is None:
        return np.full(shape, 1.0 / (MU0 * material.mu_r)), np.zeros(shape)
    nu, dnu = evaluate_pieces(c, s, c.nu_c, c.dnu_c)
    past = np.flatnonzero(s > c.b_last**2)
    if past.size:  # J = J_last: H = (B - J_last) / mu0
        bp = np.sqrt(s.take(past))
        nu.put(past, 1.0 / MU0 - c.j_last / (MU0 * bp))
        dnu.put(past, c.j_last / (2.0 * MU0 * bp**3))
    return nu.reshape(shape), dnu.reshape(shape)


def energy_density(material: Material, b_sq: np.ndarray) -> np.ndarray:
    """Magnetic energy density w = integral_0^B H dB, J/m^3, at b_sq = |B|^2 (T^2).

    dw/d(b_sq) = nu/2 holds exactly with the nu of :func:`reluctivity`.
    """
    s, shape = _flat_b_sq(b_sq)
    c = material._curve
    if c is None:
        return (0.5 * s / (MU0 * material.mu_r)).reshape(shape)
    (w,) = evaluate_pieces(c, s, c.w_c)
    past = np.flatnonzero(s > c.b_last**2)
    if past.size:  # integral of H = H_last + (B - B_last)/mu0 from B_last
        db = np.sqrt(s.take(past)) - c.b_last
        w.put(past, c.w_last + c.h_last * db + db**2 / (2.0 * MU0))
    return w.reshape(shape)


def coenergy_density(material: Material, b_sq: np.ndarray) -> np.ndarray:
    """Magnetic co-energy density w' = H B - w = nu b_sq - w, J/m^3, at b_sq (T^2)."""
    nu, _ = reluctivity(material, b_sq)
    return nu * np.maximum(b_sq, 0.0) - energy_density(material, b_sq)


def h_of_b(material: Material, b: np.ndarray) -> np.ndarray:
    """Field strength H = nu(B^2) B, A/m, at flux density b (T), odd in b."""
    b = np.asarray(b, dtype=float)
    return reluctivity(material, b * b)[0] * b


def b_of_h(material: Material, h: np.ndarray) -> np.ndarray:
    """Flux density B, T, at field strength h (A/m), odd in h, from the B-H curve itself.

    Evaluates the monotone interpolant of J(H), not the nu table: comparing the two checks
    the table.
    """
    h = np.asarray(h, dtype=float)
    c = material._curve
    if c is None:
        return MU0 * material.mu_r * h
    a = np.abs(h)
    j = polarization(np.minimum(a, c.h_last), material.h_table, c.j, c.dj)[0]
    return np.sign(h) * (MU0 * a + j)


# --- factories ----------------------------------------------------------------------------


def linear_material(
    mu_r: float, name: str | None = None, *, density_kg_m3: float = 7650.0
) -> Material:
    """A linear material: B = mu0 mu_r H, nu = 1/(mu0 mu_r) (mu_r > 0, dimensionless)."""
    mu_r = _positive_number(mu_r, f"material {name!r}: mu_r" if name else "linear_mu_r")
    label = name if name is not None else f"linear mu_r={mu_r:g}"
    return Material(label, "linear", mu_r, np.zeros(0), np.zeros(0), density_kg_m3=density_kg_m3)


AIR: Material = linear_material(1.0, "air", density_kg_m3=1.2)  # 1.2 kg/m^3 near 20 C


def _bh_material(
    name: str,
    h: object,
    b: object,
    where: str,
    stacking_factor: float = 1.0,
    density_kg_m3: float = 7650.0,
    yield_strength_Pa: float = 0.0,
    loss: LossCoefficients | None = None,
    **elastic: float,
) -> Material:
    k = _check_fraction(stacking_factor, f"{where}: stacking_factor")
    h, b = _checked_curve(h, b, where)
    b_stack = k * b + (1.0 - k) * MU0 * h  # B_eff = k B + (1 - k) mu0 H
    return Material(name, "nonlinear", 0.0, h, b_stack, k, float(density_kg_m3),
                    float(yield_strength_Pa), loss, **elastic)


def bh_material(
    name: str,
    h: np.ndarray,
    b: np.ndarray,
    stacking_factor: float = 1.0,
    density_kg_m3: float = 7650.0,
    yield_strength_Pa: float = 0.0,
    loss: LossCoefficients | None = None,
) -> Material:
    """A nonlinear material from measured sheet-steel (H, B) pairs.

    Parameters
    ----------
    name
        Material name.
    h, b
        Field strength (A/m) and flux density (T) of the sheet (e.g. Epstein) curve, both
        strictly increasing, >= 0, at least 5 points with the origin. (0, 0) is prepended
        if H starts above 0.
    stacking_factor
        Iron fraction k of the stack, in (0, 1]; the tables hold k B + (1 - k) mu0 H.
    density_kg_m3, yield_strength_Pa, loss
        Mass density (kg/m^3), yield strength (Pa, 0 = unknown), loss coefficients.
        Raises MaterialError naming the material, the offending value and the limit.
    """
    return _bh_material(
        name, h, b, f"material {name!r}", stacking_factor, density_kg_m3, yield_strength_Pa, loss
    )


#: Names of the built-in steels (EN 10106 designations), see :mod:`fluxlab.materials.steels`.
BUILTIN_STEELS: tuple[str, ...] = tuple(steels.GRADES)


@functools.lru_cache(maxsize=64)
def _builtin(name: str, stacking_factor: float) -> Material:
    grade = steels.GRADES[name]
    h, b = steels.steel_curve(grade)
    where = f"built-in steel {name}"
    density, yield_strength = grade.density_kg_m3, grade.yield_strength_Pa
    return _bh_material(name, h, b, where, stacking_factor, density, yield_strength, grade.loss,
                        youngs_modulus_Pa=grade.youngs_modulus_Pa,
                        poisson_ratio=grade.poisson_ratio)


def builtin_material(name: str, stacking_factor: float = 1.0) -> Material:
    """A built-in non-oriented steel by its EN 10106 grade name (case-insensitive).

    See :mod:`fluxlab.materials.steels` for which values are recalled and which are typical.

    Raises
    ------
    MaterialError
        For an unknown name (listing the known ones) or a stacking factor outside (0, 1].
    """
    canonical = name.strip().upper() if isinstance(name, str) else None
    if canonical not in steels.GRADES:
        raise MaterialError(
            f"unknown steel grade {name!r}; known grades: {', '.join(BUILTIN_STEELS)}"
        )
    k = _check_fraction(stacking_factor, f"built-in steel {canonical}: stacking_factor")
    return _builtin(canonical, k)


def specific_iron_loss(material: Material, b_peak_T: np.ndarray, f_Hz: np.ndarray) -> np.ndarray:
    """Specific iron loss, W/kg, for sinusoidal flux of peak b_peak_T (T) at f_Hz (Hz).

    Loss separation p = k_h f B^alpha + k_c f^2 B^2 + k_e f^1.5 B^1.5 (G. Bertotti,
    IEEE Trans. Magn. 24(1), 1988) with the material's :class:`LossCoefficients`. No minor
    loops, rotating flux, harmonics or cutting damage.

    Raises
    ------
    MaterialError
        If the material has no loss coefficients.
    ValueError
        If B or f is negative or not finite (a wrong argument).
    """
    c = material.loss
    if c is None:
        raise MaterialError(f"material {material.name!r} has no iron-loss coefficients")
    b = np.asarray(b_peak_T, dtype=float)
    f = np.asarray(f_Hz, dtype=float)
    for label, x in (("b_peak_T", b), ("f_Hz", f)):
        if not np.all(np.isfinite(x) & (x >= 0)):
            raise ValueError(f"specific_iron_loss: {label} = {x} must be finite and >= 0")
    return c.k_h * f * b**c.alpha + c.k_c * (f * b) ** 2 + c.k_e * (f * b) ** 1.5
