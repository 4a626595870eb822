"""Operating envelope of a machine: flux maps, MTPA, resistance, torque-speed limits,
iron loss and rib stress. Currents and voltages are peak phase values throughout."""

from .drive import Envelope, phase_voltage_limit, speed_at_voltage, torque_speed_envelope
from .fluxmap import FluxMap, flux_map, flux_map_from_arrays, incremental_inductances
from .interp import FluxInterpolator, InverseTable, inverse_tables
from .ironloss import IronLoss, RegionLoss, iron_loss_estimate, region_losses
from .mtpa import MTPATrajectory, mtpa_trajectory
from .resistance import PhaseResistance, phase_resistance
from .ribstress import RIB_CAUTION, RibStress, rib_stress
from .study import EnvelopeResult, EnvelopeSettings, envelope_settings, envelope_study

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
