"""Post-processing of a solved field: flux linkage, Park transform, torque, energy.

All results are for the whole machine (the sector integrals times the stack length and
the number of sectors). Currents are peak phase amperes, flux linkages peak Wb-turns.
"""

from __future__ import annotations

import math

import numpy as np

from fluxlab.fem.solver import FieldSolution
from fluxlab.machine.model import MachineModel
from fluxlab.materials.material import MU0

__all__ = [
    "element_integrals_of_a",
    "flux_linkage_abc",
    "park",
    "torque_maxwell",
    "machine_energy",
]


def element_integrals_of_a(model: MachineModel, solution: FieldSolution) -> np.ndarray:
    """(n_elements,) integral of A over each element, Wb*m."""
    data = model.problem.data
    a_local = solution.a[data.dofs]  # (n_local, n_elements)
    return np.einsum("ie,ieq,eq->e", a_local, data.phi, data.weights)


def flux_linkage_abc(model: MachineModel, solution: FieldSolution) -> np.ndarray:
    """Flux linkage of phases a, b, c, Wb-turns.

    psi_k = length * sectors * sum over coil sides of (signed turns / side area / parallel
    paths) * int A dS: the mean potential of a coil side times its turns (the coil side's
    flux linkage for a uniform current density; common practice, no source).
    """
    return model.scale * (model.conductor_weight.T @ element_integrals_of_a(model, solution))


def park(abc: np.ndarray, electrical_angle: float) -> tuple[float, float]:
    """d and q components of a phase quantity (amplitude-invariant Park transform).

    ``electrical_angle``: rotor d-axis from the phase-a axis, electrical rad.
    """
    shifts = electrical_angle - np.arange(3) * 2 * math.pi / 3
    d = 2 / 3 * float(np.dot(abc, np.cos(shifts)))
    q = -2 / 3 * float(np.dot(abc, np.sin(shifts)))
    return d, q


def torque_maxwell(model: MachineModel, solution: FieldSolution) -> float:
    """Torque on the rotor, N*m, counter-clockwise positive, by Arkkio's method.

    T = L / (mu0 (r2 - r1)) * int r B_r B_theta dS over the air-gap annulus r1 < r < r2
    (A. Arkkio, "Analysis of induction motors based on the numerical solution of the
    magnetic field and circuit equations", Acta Polytechnica Scandinavica, 1987). B_r B_theta
    does not depend on the frame, so rotor-side elements are used as they are.
    """
    regions = model.mesh.regions
    elements = np.concatenate([regions["airgap_rotor"], regions["airgap_stator"]])
    data = model.problem.data
    x, y = data.points[0][elements], data.points[1][elements]  # (n, n_qp)
    r = np.hypot(x, y)
    grad = np.einsum("ie,idez->dez", solution.a[data.dofs[:, elements]],
                     data.grad[:, :, elements])
    bx, by = grad[1], -grad[0]
    b_r = (bx * x + by * y) / r
    b_t = (-bx * y + by * x) / r
    integral = np.sum(r * b_r * b_t * data.weights[elements])
    r1 = model.spec.rotor_radius
    r2 = model.spec.stator.bore_diameter / 2
    return float(model.scale * integral / (MU0 * (r2 - r1)))


def machine_energy(model: MachineModel, solution: FieldSolution) -> tuple[float, float]:
    """Magnetic energy and co-energy of the whole machine, J."""
    return model.scale * solution.energy_per_m, model.scale * solution.coenergy_per_m
