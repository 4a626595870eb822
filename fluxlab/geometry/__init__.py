"""Machine geometry: stator slots, flux barriers, and the modelled sector."""

from fluxlab.geometry.checks import geometry_problems
from fluxlab.geometry.sector import (
    model_sector,
    poles_in_sector,
    rotor_regions,
    sliding_radius,
    slot_region_name,
    slots_in_sector,
    stator_regions,
)

__all__ = [
    "geometry_problems",
    "model_sector",
    "poles_in_sector",
    "rotor_regions",
    "slot_region_name",
    "sliding_radius",
    "slots_in_sector",
    "stator_regions",
]
