"""Rotor stress at speed: one elastic solve of the lamination, read at any speed.

Stresses and displacements of the linear model scale with omega^2, so the field is solved
once (at 1 rad/s) and every speed is a product. The peak von Mises stress against the rotor
steel's yield strength gives the safety factor and, by the same square law, the speed at
which the peak reaches yield.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import SpecError
from fluxlab.spec.types import MachineSpec
from fluxlab.stress.cyclic import component_dofs
from fluxlab.stress.elasticity import UnitSpeedField, solve_unit_speed, von_mises
from fluxlab.stress.mesh import StressMesh, stress_mesh
from fluxlab.stress.zones import ZONES, element_zones

__all__ = [
    "BORE_NOTE",
    "STRESS_CAUTION",
    "Mechanics",
    "RotorStress",
    "rotor_mechanics",
    "rotor_stress",
    "speed_checks",
    "stress_summary",
]

STRESS_CAUTION = (
    "A 2-D linear-elastic estimate of the lamination alone: it does not replace a structural "
    "analysis with the real fit on the shaft, temperature, stacking, punching damage and "
    "fatigue, nor an overspeed test. Design margins and overspeed tests follow the applicable "
    "standards; have the rotor checked by qualified engineers.")
BORE_NOTE = "bore free: no shrink or press fit on a shaft (out of scope)"


@dataclass(frozen=True)
class Mechanics:
    """Rotor steel: density kg/m^3, Young's modulus Pa, Poisson's ratio, yield strength Pa."""

    density_kg_m3: float
    youngs_modulus_Pa: float
    poisson_ratio: float
    yield_strength_Pa: float


def rotor_mechanics(spec: MachineSpec) -> Mechanics:
    """The rotor steel's mechanical data; SpecError naming each missing key (value 0)."""
    steel = spec.materials["rotor"]
    values = Mechanics(steel.density_kg_m3, steel.youngs_modulus_Pa, steel.poisson_ratio,
                       steel.yield_strength_Pa)
    keys = {"youngs_modulus_Pa": "youngs_modulus_GPa", "poisson_ratio": "poisson_ratio",
            "yield_strength_Pa": "yield_strength_MPa"}
    missing = [f"materials.rotor.{key}" for attr, key in keys.items()
               if not getattr(values, attr) > 0]
    if steel.name == "air" or steel.kind == "linear":
        missing = ["materials.rotor (a steel: a built-in grade or a bh_csv table)"]
    if missing:
        raise SpecError(f"{', '.join(missing)}: needed for the rotor stress; the rotor "
                        f"material {steel.name!r} does not give it (0 or absent)")
    return values


@dataclass(frozen=True, eq=False)
class RotorStress:
    """The lamination's stress field at 1 rad/s and what is read from it.

    ``von_mises``: (n_elements, 3) Pa per (rad/s)^2 at element vertices; ``zone``: index
    into :data:`~fluxlab.stress.zones.ZONES` per element; ``growth``: the largest radial
    displacement of the rotor surface, m per (rad/s)^2.
    """

    spec: MachineSpec
    mesh: StressMesh
    field: UnitSpeedField
    mechanics: Mechanics
    von_mises: np.ndarray
    zone: np.ndarray
    growth: float

    def peak_Pa(self, speed_rpm: float) -> float:
        """Largest von Mises stress at ``speed_rpm``, Pa."""
        return float(self.von_mises.max()) * _omega(speed_rpm) ** 2

    def safety_factor(self, speed_rpm: float) -> float | None:
        """Yield strength over the peak at ``speed_rpm`` (None at standstill)."""
        peak = self.peak_Pa(speed_rpm)
        return self.mechanics.yield_strength_Pa / peak if peak > 0 else None

    def yield_speed_rpm(self) -> float:
        """Speed at which the peak reaches yield, rpm: sigma ~ omega^2, so
        omega_y = sqrt(yield / peak at 1 rad/s)."""
        unit = float(self.von_mises.max())
        return math.sqrt(self.mechanics.yield_strength_Pa / unit) * 60 / (2 * math.pi)

    def peak_point(self) -> tuple[float, float]:
        """Where the peak sits, (x, y) m in the sector."""
        e, k = np.unravel_index(int(np.argmax(self.von_mises)), self.von_mises.shape)
        x, y = self.mesh.mesh.p[:, self.mesh.mesh.t[k, e]]
        return float(x), float(y)


def _omega(speed_rpm: float) -> float:
    if not (math.isfinite(speed_rpm) and speed_rpm >= 0):
        raise ValueError(f"speed_rpm = {speed_rpm!r}: must be finite and >= 0")
    return speed_rpm * 2 * math.pi / 60


def _surface_growth(field: UnitSpeedField) -> float:
    ix, iy = component_dofs(field.basis, field.basis.mesh.boundaries["surface"])
    x, y = field.basis.doflocs[:, ix]
    return float(np.max((field.u[ix] * x + field.u[iy] * y) / np.hypot(x, y)))


def rotor_stress(spec: MachineSpec, *, local: float | None = None, bulk: float | None = None,
                 full: bool = False) -> RotorStress:
    """Mesh the lamination (:func:`~fluxlab.stress.mesh.stress_mesh`, same options) and
    solve it once; read any speed from the result.

    Raises
    ------
    SpecError
        When the rotor steel lacks elastic data or yield strength, or the barrier corners are
        sharp (``rotor.rib_fillet_mm = 0``), naming the key.
    """
    mechanics = rotor_mechanics(spec)
    if spec.rotor.barriers and spec.rotor.rib_fillet <= 0:
        raise SpecError("rotor.rib_fillet_mm = 0: sharp barrier corners have no finite "
                        "elastic stress peak (it grows without bound as the mesh is refined); "
                        "give the corner radius of the punching, at least 0.1 mm")
    sm = stress_mesh(spec, local=local, bulk=bulk, full=full)
    field = solve_unit_speed(sm, mechanics.density_kg_m3, mechanics.youngs_modulus_Pa,
                             mechanics.poisson_ratio)
    centroids = sm.mesh.p[:, sm.mesh.t].mean(axis=1)
    return RotorStress(spec, sm, field, mechanics, von_mises(field.stress),
                       element_zones(spec, centroids), _surface_growth(field))


def stress_summary(result: RotorStress, speed_rpm: float) -> dict:
    """The figures of ``stress.json`` at ``speed_rpm`` (MPa, GPa, mm as the keys say)."""
    w2 = _omega(speed_rpm) ** 2
    m = result.mechanics
    peak = result.peak_Pa(speed_rpm)
    out = {"speed_rpm": float(speed_rpm), "von_mises_max_MPa": peak / 1e6}
    for k, name in enumerate(ZONES):
        inside = result.von_mises[result.zone == k]
        out[f"{name}_max_MPa"] = float(inside.max()) * w2 / 1e6 if inside.size else None
    growth = result.growth * w2
    out.update({
        "density_kg_m3": m.density_kg_m3,
        "youngs_modulus_GPa": m.youngs_modulus_Pa / 1e9,
        "poisson_ratio": m.poisson_ratio,
        "yield_strength_MPa": m.yield_strength_Pa / 1e6,
        "safety_factor": result.safety_factor(speed_rpm),
        "yield_speed_rpm": result.yield_speed_rpm(),
        "radial_growth_max_mm": growth * 1e3,
        "radial_growth_airgap_share": growth / result.spec.stator.airgap,
        "bore": BORE_NOTE,
        "caution": STRESS_CAUTION,
    })
    return out


def speed_checks(result: RotorStress, speeds: dict[str, float], required: float
                 ) -> tuple[dict, list[str]]:
    """The peak at each named speed (``{"top_speed": 3000.0, "overspeed": 3600.0}``, rpm)
    against yield / ``required`` (a safety factor >= 1).

    Returns the JSON-able figures (MPa, rpm) and one warning per speed where the safety
    factor falls below ``required``.
    """
    m = result.mechanics
    allowed = m.yield_strength_Pa / required
    out: dict = {"method": "plane-stress finite elements, peak von Mises (fluxlab stress)",
                 "required_safety_factor": required, "allowed_MPa": allowed / 1e6,
                 "yield_speed_rpm": result.yield_speed_rpm(), "bore": BORE_NOTE,
                 "caution": STRESS_CAUTION}
    warnings = []
    for name, speed in speeds.items():
        peak = result.peak_Pa(speed)
        factor = result.safety_factor(speed)
        out[name] = {"speed_rpm": speed, "von_mises_max_MPa": peak / 1e6,
                     "safety_factor": factor}
        if factor is not None and factor < required:
            warnings.append(f"rotor stress at {speed:g} rpm ({name.replace('_', ' ')}): peak "
                            f"von Mises {peak / 1e6:.0f} MPa, safety factor {factor:.2f} on "
                            f"yield, below the required {required:g}")
    return out, warnings
