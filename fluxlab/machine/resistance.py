"""Phase resistance of the stator winding from the slot geometry and the winding data, and
the copper loss it gives."""

from __future__ import annotations

import math
from dataclasses import dataclass

from fluxlab.geometry.csg import to_shapely
from fluxlab.geometry.stator import slot_shapes
from fluxlab.machine.end_winding import end_winding_length_estimate
from fluxlab.machine.winding import series_turns_per_phase, winding_layout
from fluxlab.spec.types import MachineSpec

__all__ = [
    "COPPER_DENSITY_KG_M3",
    "copper_mass",
    "current_density_rms",
    "COPPER_RESISTIVITY_20C_OHM_M",
    "COPPER_TEMPERATURE_COEFFICIENT_PER_K",
    "PhaseResistance",
    "copper_loss",
    "copper_resistivity",
    "phase_resistance",
]

#: Annealed copper at 20 C, 1/58 Ohm mm^2/m (IEC 60028, the International Annealed Copper
#: Standard; from memory).
COPPER_RESISTIVITY_20C_OHM_M = 1.7241e-8
#: Temperature coefficient of annealed copper's resistance at 20 C, 1/K (IEC 60028, from
#: memory).
COPPER_TEMPERATURE_COEFFICIENT_PER_K = 0.00393
#: Density of copper, kg/m^3 (8.89-8.96 g/cm^3 in handbooks; from memory).
COPPER_DENSITY_KG_M3 = 8900.0


@dataclass(frozen=True)
class PhaseResistance:
    """Phase resistance estimate and the quantities it comes from (SI units).

    ``resistance_Ohm``: one phase, all parallel paths; ``conductor_area_m2``: copper of one
    turn; ``turn_length_m`` = 2 (stack length + end-winding length per coil end);
    ``series_turns``: turns per phase per parallel path.
    """

    resistance_Ohm: float
    temperature_C: float
    resistivity_Ohm_m: float
    slot_layer_area_m2: float
    conductor_area_m2: float
    end_winding_length_m: float
    end_winding_estimated: bool
    turn_length_m: float
    series_turns: float
    parallel_paths: int


def copper_resistivity(temperature_C: float) -> float:
    """Resistivity of annealed copper, Ohm m: rho20 (1 + alpha (T - 20 C)) (IEC 60028)."""
    if not (math.isfinite(temperature_C) and -200.0 < temperature_C < 400.0):
        raise ValueError(f"copper temperature = {temperature_C!r} C: must be in (-200, 400)")
    return COPPER_RESISTIVITY_20C_OHM_M * (
        1.0 + COPPER_TEMPERATURE_COEFFICIENT_PER_K * (temperature_C - 20.0))


def phase_resistance(
    spec: MachineSpec,
    temperature_C: float | None = None,
    end_winding_length: float | None = None,
) -> PhaseResistance:
    """Phase resistance of ``spec``'s winding, Ohm, at ``temperature_C`` (default: the spec's).

    One coil side fills a slot layer: conductor area = fill factor x layer area / turns per
    coil. R = rho N_s l_turn / (a A_c) with N_s the series turns per path and a the parallel
    paths (a paths of N_s turns each, in parallel).
    """

    w = spec.winding
    temperature = spec.drive.copper_temperature_C if temperature_C is None else temperature_C
    given = spec.drive.end_winding_length if end_winding_length is None else end_winding_length
    if given is not None and not (math.isfinite(given) and given > 0):
        raise ValueError(f"end-winding length = {given!r} m: must be > 0")
    end = end_winding_length_estimate(spec) if given is None else given
    layer_area = to_shapely(slot_shapes(spec.stator, w.layers)["layer_0"]).area
    conductor = w.fill_factor * layer_area / w.turns_per_coil
    layout = winding_layout(spec.stator.slots, spec.poles, w.layers, w.coil_pitch_slots)
    turns = series_turns_per_phase(layout, w.turns_per_coil, w.parallel_paths)
    rho = copper_resistivity(temperature)
    turn_length = 2.0 * (spec.stack_length + end)
    resistance = float(rho * turns * turn_length / (w.parallel_paths * conductor))
    return PhaseResistance(resistance, temperature, rho, layer_area, conductor, end,
                           given is None, turn_length, float(turns), w.parallel_paths)


def copper_loss(resistance_Ohm: float, current_peak_A: float) -> float:
    """Copper loss of the three phases, W: 3/2 R I^2 with I the peak phase current."""
    return 1.5 * resistance_Ohm * current_peak_A**2


def copper_mass(res: PhaseResistance) -> float:
    """Copper mass of the three phases, kg: 3 N_s a A_c l_turn times the density."""
    volume = 3 * res.series_turns * res.parallel_paths * res.conductor_area_m2 * res.turn_length_m
    return COPPER_DENSITY_KG_M3 * volume


def current_density_rms(res: PhaseResistance, current_peak_A: float) -> float:
    """Current density in the conductors, A/m^2 rms: (I / sqrt 2) / (a A_c)."""
    return current_peak_A / math.sqrt(2) / (res.parallel_paths * res.conductor_area_m2)
