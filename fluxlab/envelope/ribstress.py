"""Mean stress in the tangential ribs and radial posts of a flux-barrier rotor at speed.

The steel outside barrier i (towards the rotor surface, around the q-axis: the pieces
between barrier i and the barriers nearer the surface, and outside the first barrier)
hangs on barrier i's two tangential ribs and its post, if any. Its centrifugal force
F = m r_c omega^2 (m its mass, r_c its centroid radius) acts along the q-axis by symmetry;
the mean stress is F over the carrying section (2 t_rib + w_post) L (common practice, no
source). Stress concentration at the rib corners, bending of the ribs, the ribs' and posts'
own mass and any load shared with neighbouring poles are left out.

CAUTION: this estimate does not replace a structural (finite-element) analysis of the
rotor and tests at overspeed.
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass

from fluxlab.errors import SpecError
from fluxlab.geometry.csg import annular_sector, to_shapely
from fluxlab.geometry.fillets import barrier_air
from fluxlab.geometry.rotor import barrier_shape
from fluxlab.spec.types import MachineSpec

__all__ = ["RIB_CAUTION", "BarrierStress", "RibStress", "outer_steel", "rib_stress"]

log = logging.getLogger(__name__)

RIB_CAUTION = ("The rib stress is a mean-stress hand estimate (no stress concentration, no "
               "bending): it does not replace a structural analysis of the rotor and "
               "overspeed tests.")

_EPS = 5e-6  # m: wider than the chord error of the 720-gon circles (0.6 um at 70 mm)


@dataclass(frozen=True)
class BarrierStress:
    """Load and mean stress on the ribs and post of one barrier (index from the surface)."""

    barrier: int
    island_mass_kg: float
    centroid_radius_m: float
    force_N: float
    rib_area_m2: float
    post_area_m2: float
    stress_Pa: float
    allowed_Pa: float

    @property
    def exceeded(self) -> bool:
        """True when the mean stress passes yield / safety factor (allowed > 0)."""
        return self.allowed_Pa > 0 and self.stress_Pa > self.allowed_Pa


@dataclass(frozen=True)
class RibStress:
    """Rib-stress estimate of one rotor pole at ``speed_rpm``."""

    barriers: tuple[BarrierStress, ...]
    speed_rpm: float
    safety_factor: float
    yield_strength_Pa: float
    warnings: tuple[str, ...]
    caution: str = RIB_CAUTION

    @property
    def exceeded(self) -> bool:
        """True when any barrier's ribs pass the allowed stress."""
        return any(b.exceeded for b in self.barriers)


def _pole_shapes(spec: MachineSpec):
    rotor, radius = spec.rotor, spec.rotor_radius
    half = math.pi / spec.poles  # pole from d-axis to d-axis, q-axis on +x
    pole = to_shapely(annular_sector(rotor.shaft_diameter / 2, radius, -half, half))
    full, air = [], []
    for i, b in enumerate(rotor.barriers):
        key = f"rotor.barriers[{i}]"
        full.append(to_shapely(barrier_shape(rotor, radius, b, key)))
        air.append(to_shapely(barrier_air(rotor, radius, b, key)))  # fillets are steel
    steel = pole
    for a in air:
        steel = steel.difference(a)
    return steel, full


def _rib_cutters(spec: MachineSpec, barrier):
    """Strips through the tangential ribs at both ends of a barrier, out past the surface."""
    from shapely.geometry import Point

    radius, rib = spec.rotor_radius, spec.rotor.tangential_rib
    near = barrier.difference(Point(0, 0).buffer(radius - rib - _EPS, quad_segs=720))
    pieces = getattr(near, "geoms", [near])
    cutters = []
    for piece in pieces:
        if piece.is_empty:
            continue
        angles = [math.atan2(y, x) for x, y in piece.exterior.coords]
        cutters.append(to_shapely(annular_sector(radius - rib - 2 * _EPS, 1.01 * radius,
                                                 min(angles), max(angles))))
    return cutters


def outer_steel(spec: MachineSpec) -> list:
    """Per barrier, the shapely region of steel it carries (pole coordinates, q-axis on +x)."""
    from shapely.geometry import Point

    steel, full = _pole_shapes(spec)
    radius, rib = spec.rotor_radius, spec.rotor.tangential_rib
    probe = Point(radius - rib / 2, 0.0)  # on the q-axis inside the surface: always outer
    out = []
    for i, barrier in enumerate(full):
        rest = steel.difference(barrier)
        for cutter in _rib_cutters(spec, barrier):
            rest = rest.difference(cutter)
        parts = [g for g in getattr(rest, "geoms", [rest]) if g.distance(probe) < rib / 4]
        if len(parts) != 1:
            raise SpecError(f"rotor.barriers[{i}]: the steel outside it is not one piece "
                            "held by its ribs; no rib-stress estimate for this geometry")
        out.append(parts[0])
    return out


def rib_stress(spec: MachineSpec, speed_rpm: float | None = None,
               safety_factor: float | None = None) -> RibStress:
    """Mean rib and post stress of each barrier at ``speed_rpm`` (default: the top speed).

    The allowed stress is the rotor steel's yield strength over ``safety_factor`` (default
    the spec's ``drive.rib_safety_factor``). A warning is logged and recorded for each
    barrier above it, and when the yield strength is unknown (0).
    """
    drive = spec.drive
    speed = speed_rpm if speed_rpm is not None else spec.top_speed_rpm
    factor = drive.rib_safety_factor if safety_factor is None else safety_factor
    problems = []
    if not (math.isfinite(speed) and speed >= 0):
        problems.append(f"rib stress speed = {speed!r} rpm: must be finite and >= 0")
    if not (math.isfinite(factor) and factor >= 1):
        problems.append(f"rib safety factor = {factor!r}: must be at least 1")
    if problems:
        raise ValueError("; ".join(problems))
    steel = spec.materials["rotor"]
    omega = speed * 2 * math.pi / 60
    allowed = steel.yield_strength_Pa / factor
    length = spec.stack_length
    rows, warnings = [], []
    if steel.yield_strength_Pa <= 0:
        warnings.append(f"rotor steel {steel.name!r} has no yield strength: stresses are not "
                        "compared with an allowed value")
    for i, region in enumerate(outer_steel(spec)):
        barrier = spec.rotor.barriers[i]
        mass = steel.density_kg_m3 * region.area * length
        r_c = region.centroid.x  # symmetric about the q-axis: the centroid lies on it
        force = mass * r_c * omega**2
        rib_area = 2 * spec.rotor.tangential_rib * length
        post_area = barrier.post_width * length
        row = BarrierStress(i, mass, r_c, force, rib_area, post_area,
                            force / (rib_area + post_area), allowed)
        if row.exceeded:
            warnings.append(
                f"rotor.barriers[{i}]: mean rib/post stress {row.stress_Pa / 1e6:.1f} MPa at "
                f"{speed:g} rpm exceeds the allowed {allowed / 1e6:.1f} MPa (yield "
                f"{steel.yield_strength_Pa / 1e6:.0f} MPa / safety factor {factor:g})")
        rows.append(row)
    for w in warnings:
        log.warning("%s", w)
    return RibStress(tuple(rows), float(speed), float(factor),
                     float(steel.yield_strength_Pa), tuple(warnings))
