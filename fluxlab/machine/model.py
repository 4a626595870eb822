"""The machine model: mesh, materials and winding assembled once per candidate.

A :class:`MachineModel` knows how phase currents become a current density, and the rotor
step at which the rotor d-axis sits on the phase-a magnetic axis (rotor position zero).
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass

import numpy as np

from fluxlab.fem.solver import FieldProblem, element_areas, linear_backend, make_problem
from fluxlab.geometry import slot_region_name, slots_in_sector
from fluxlab.machine.winding import WindingLayout, phase_axis_angle, winding_layout
from fluxlab.materials.material import AIR
from fluxlab.mesh.machine_mesh import MachineMesh, build_mesh
from fluxlab.spec.types import MachineSpec

__all__ = [
    "MachineModel",
    "build_model",
    "phase_currents",
    "current_density",
    "coil_side_current_density",
    "rotor_step",
]

log = logging.getLogger(__name__)

#: Newton tolerance of the studies (relative residual). On the demo machine at 50 A the
#: ripple torques at 1e-5 differ from those at 1e-8 by at most 8e-6 N m (1e-7 relative)
#: and the flux linkages by 5e-9 relative, far below the discretisation error, for 15 %
#: fewer Newton steps; tests/test_studies.py checks the torque against a 1e-10 solve.
STUDY_RTOL = 1e-5

#: Material of each region kind: the region name starts with the key.
_REGION_MATERIAL = {"stator_iron": "stator", "rotor_iron": "rotor", "shaft": "shaft"}


@dataclass(frozen=True, eq=False)
class MachineModel:
    """Everything fixed for one candidate machine.

    Attributes
    ----------
    spec
        The machine.
    mesh
        The meshed sector.
    problem
        The assembled field problem.
    layout
        The winding's slot-phase layout.
    conductor_weight
        (n_elements, 3): turns per coil side area per parallel path, signed, 1/m^2, for
        phases a, b, c. The current density is ``conductor_weight @ i_abc`` (A/m^2) and the
        flux linkage of phase k is ``length * sectors * sum(conductor_weight[:, k] * int A)``.
    axis_step
        Rotor step that puts a rotor d-axis on the phase-a axis: rotor position zero.
    axis_error
        Mechanical angle, rad, by which ``axis_step`` misses the exact phase-a axis (zero
        when the axis falls on a step, as for integral-slot windings).
    linear_solver
        Sparse direct solver of every solve of this model: ``"auto"`` (MKL PARDISO when
        installed, else scipy SuperLU), ``"scipy"`` or ``"pardiso"``.
    newton_rtol
        Relative residual at which the studies stop Newton (see :mod:`fluxlab.fem.newton`);
        default :data:`STUDY_RTOL`.
    """

    spec: MachineSpec
    mesh: MachineMesh
    problem: FieldProblem
    layout: WindingLayout
    conductor_weight: np.ndarray
    axis_step: int
    axis_error: float
    linear_solver: str = "auto"
    newton_rtol: float = STUDY_RTOL

    @property
    def step_angle(self) -> float:
        """Mechanical angle of one rotor step, rad."""
        return self.mesh.step_angle

    @property
    def scale(self) -> float:
        """Factor from a sector integral per metre to the whole machine: length x sectors."""
        return self.spec.stack_length * self.mesh.sectors


def _element_materials(spec: MachineSpec, machine: MachineMesh):
    materials = [AIR, spec.materials["stator"], spec.materials["rotor"], spec.materials["shaft"]]
    index = {"stator": 1, "rotor": 2, "shaft": 3}
    element_material = np.zeros(machine.mesh.t.shape[1], dtype=np.int64)  # air by default
    for name, elements in machine.regions.items():
        kind = _REGION_MATERIAL.get(name)
        if kind is not None:
            element_material[elements] = index[kind]
    return materials, element_material


def _conductor_weight(spec: MachineSpec, machine: MachineMesh, layout, areas) -> np.ndarray:
    w = spec.winding
    weight = np.zeros((machine.mesh.t.shape[1], 3))
    for slot in range(slots_in_sector(spec, machine.sector_angle)):
        for layer in range(w.layers):
            elements = machine.regions[slot_region_name(slot, layer)]
            side_area = areas[elements].sum()
            phase, sign = layout.phase[layer, slot], layout.sign[layer, slot]
            weight[elements, phase] = sign * w.turns_per_coil / (side_area * w.parallel_paths)
    return weight


def build_model(spec: MachineSpec, mesh: MachineMesh | None = None,
                linear_solver: str = "auto") -> MachineModel:
    """Mesh (unless given) and assemble a machine once, for any current and rotor step.

    ``linear_solver`` is checked here (SpecError for an unknown or missing backend).
    """
    machine = build_mesh(spec) if mesh is None else mesh
    materials, element_material = _element_materials(spec, machine)
    problem = make_problem(machine, materials, element_material, order=spec.mesh.element_order)
    layout = winding_layout(
        spec.stator.slots, spec.poles, spec.winding.layers, spec.winding.coil_pitch_slots
    )
    weight = _conductor_weight(spec, machine, layout, element_areas(problem))
    # rotor d-axes repeat every pole pitch; the rotor frame has one on angle 0
    pole_pitch = 2 * math.pi / spec.poles
    axis = phase_axis_angle(layout) % pole_pitch
    axis_step = round(axis / machine.step_angle)
    axis_error = axis - axis_step * machine.step_angle
    if abs(axis_error) > 1e-9:
        log.warning("phase-a axis %.4f deg is %.4f deg off the nearest rotor step",
                    math.degrees(axis), math.degrees(axis_error))

    linear_backend(problem, linear_solver)  # fail early on a bad name
    return MachineModel(spec, machine, problem, layout, weight, axis_step, axis_error,
                        linear_solver)


def rotor_step(model: MachineModel, position: float) -> int:
    """Rotor step of a mechanical rotor position (rad from position zero), rounded."""
    return model.axis_step + round(position / model.step_angle)


def phase_currents(current_peak: float, current_angle: float, electrical_angle: float):
    """Phase currents a, b, c (A) of a dq current by the inverse Park transform.

    Amplitude-invariant transform; ``current_angle`` gamma from the d-axis
    (id = I cos gamma, iq = I sin gamma); ``electrical_angle`` = p * rotor position, rad.
    Phase k's axis leads phase a's by k * 120 electrical degrees.
    """
    i_d = current_peak * math.cos(current_angle)
    i_q = current_peak * math.sin(current_angle)
    shifts = electrical_angle - np.arange(3) * 2 * math.pi / 3
    return i_d * np.cos(shifts) - i_q * np.sin(shifts)


def current_density(model: MachineModel, i_abc: np.ndarray) -> np.ndarray:
    """Current density per element, A/m^2, +z out of the page, for phase currents in A."""
    return model.conductor_weight @ np.asarray(i_abc, dtype=float)


def coil_side_current_density(model: MachineModel, densities: dict[str, float]) -> np.ndarray:
    """Current density per element (A/m^2) from densities given per coil-side region.

    For studies with a hand-made excitation; every region named must carry a winding (a
    ``slot_<k>_layer_<l>`` region), otherwise a ValueError names it (a wrong argument).
    """
    regions = model.mesh.regions
    coil_sides = {n for n in regions if n.startswith("slot_") and "_layer_" in n}
    problems = [
        f"current density on region {name!r} = {value!r} A/m^2: the region carries no "
        f"winding (coil-side regions: slot_<k>_layer_<l>)"
        for name, value in densities.items() if name not in coil_sides
    ]
    if problems:
        raise ValueError("; ".join(problems))
    j = np.zeros(model.mesh.mesh.t.shape[1])
    for name, value in densities.items():
        j[regions[name]] = value
    return j
