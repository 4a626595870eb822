"""Operating envelope of a machine: flux maps, MTPA, resistance, torque-speed limits,
iron loss and rib stress. Currents and voltages are peak phase values throughout."""

from fluxlab.envelope.drive import (
    Envelope,
    phase_voltage_limit,
    speed_at_voltage,
    torque_speed_envelope,
)
from fluxlab.envelope.fluxmap import (
    FluxMap,
    flux_map,
    flux_map_from_arrays,
    incremental_inductances,
)
from fluxlab.envelope.interp import FluxInterpolator, InverseTable, inverse_tables
from fluxlab.envelope.ironloss import IronLoss, RegionLoss, iron_loss_estimate, region_losses
from fluxlab.envelope.mtpa import MTPATrajectory, mtpa_trajectory
from fluxlab.envelope.ribstress import RIB_CAUTION, RibStress, rib_stress
from fluxlab.envelope.study import (
    EnvelopeResult,
    EnvelopeSettings,
    envelope_settings,
    envelope_study,
)
from fluxlab.machine.resistance import PhaseResistance, phase_resistance

__all__ = [
    "Envelope",
    "phase_voltage_limit",
    "speed_at_voltage",
    "torque_speed_envelope",
    "FluxMap",
    "flux_map",
    "flux_map_from_arrays",
    "incremental_inductances",
    "FluxInterpolator",
    "InverseTable",
    "inverse_tables",
    "IronLoss",
    "RegionLoss",
    "iron_loss_estimate",
    "region_losses",
    "MTPATrajectory",
    "mtpa_trajectory",
    "PhaseResistance",
    "phase_resistance",
    "RIB_CAUTION",
    "RibStress",
    "rib_stress",
    "EnvelopeResult",
    "EnvelopeSettings",
    "envelope_settings",
    "envelope_study",
]
