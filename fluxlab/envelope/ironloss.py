"""Iron loss from flux-density waveforms per element, and the efficiency estimate.

Each element's B(t) over one electrical period (in the element's own frame: stator
elements in the stator, rotor elements in the rotor) is split into harmonics. Harmonic k
traces an ellipse; its major and minor semi-axes are taken as two alternating fields of
frequency k f, each with the loss-separation model p = k_h f B^alpha + k_c f^2 B^2 +
k_e f^1.5 B^1.5 (G. Bertotti, IEEE Trans. Magn. 24(1), 1988), and the losses of all
harmonics and both axes are added. Rotational flux therefore counts as two orthogonal
alternating fields (common practice, no source): exact for the classical eddy term, an
approximation for hysteresis and excess loss (measured rotational loss differs, most near
saturation). Minor loops from a DC bias (rotor fields are nearly constant in the rotor
frame) are ignored, and so are cutting damage, lamination contact and PWM ripple.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import MaterialError
from fluxlab.fem.solver import element_areas
from fluxlab.studies.averaging import equally_spaced_steps
from fluxlab.studies.curves import solve_point
from fluxlab.studies.pool import run_tasks

__all__ = [
    "RegionLoss",
    "IronLoss",
    "harmonic_ellipses",
    "loss_densities",
    "region_losses",
    "sweep_steps",
    "flux_density_waveforms",
    "iron_regions",
    "iron_loss_estimate",
    "efficiency",
]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class RegionLoss:
    """Iron loss of one region of the whole machine, W; ``mass_kg`` of its steel."""

    name: str
    mass_kg: float
    hysteresis_W: float
    eddy_W: float
    excess_W: float

    @property
    def total_W(self) -> float:
        """Sum of the three terms, W."""
        return self.hysteresis_W + self.eddy_W + self.excess_W


@dataclass(frozen=True)
class IronLoss:
    """Iron loss at one operating point: per region, at ``frequency_Hz`` = p n / 60."""

    regions: tuple[RegionLoss, ...]
    speed_rpm: float
    frequency_Hz: float
    current_peak_A: float
    current_angle_deg: float
    samples: int

    @property
    def total_W(self) -> float:
        """Total iron loss, W."""
        return sum(r.total_W for r in self.regions)


def harmonic_ellipses(b: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Harmonic ellipses of vector waveforms sampled over exactly one period.

    Parameters
    ----------
    b
        (n_samples, n_elements, 2) Bx, By, T, at equally spaced times, end point excluded.

    Returns
    -------
    orders, major, minor
        Harmonic orders 1..n/2 (the mean is left out) and the (n_orders, n_elements)
        semi-axes of each harmonic's ellipse, T. For phasors X, Y of Bx, By:
        major^2, minor^2 = (|X|^2 + |Y|^2 +- |X^2 + Y^2|) / 2.
    """
    b = np.asarray(b, dtype=float)
    if b.ndim != 3 or b.shape[2] != 2 or b.shape[0] < 2:
        raise ValueError(f"flux density waveforms: shape {b.shape}, need (samples >= 2, n, 2)")
    n = b.shape[0]
    spectrum = np.fft.rfft(b, axis=0) / n
    spectrum[1:] *= 2.0
    if n % 2 == 0:
        spectrum[-1] /= 2.0  # the Nyquist term appears once
    x, y = spectrum[1:, :, 0], spectrum[1:, :, 1]
    s = np.abs(x) ** 2 + np.abs(y) ** 2
    d = np.abs(x * x + y * y)
    major = np.sqrt(0.5 * (s + d))
    minor = np.sqrt(np.maximum(0.5 * (s - d), 0.0))
    return np.arange(1, spectrum.shape[0]), major, minor


def loss_densities(coefficients, frequency_Hz: float, orders: np.ndarray,
                   major: np.ndarray, minor: np.ndarray) -> tuple[np.ndarray, ...]:
    """Specific hysteresis, eddy and excess loss, W/kg, per element (summed over harmonics).

    ``coefficients``: a :class:`fluxlab.materials.steels.LossCoefficients`; ``frequency_Hz``: the
    fundamental; ``orders``, ``major``, ``minor`` from :func:`harmonic_ellipses`.
    """
    c = coefficients
    f = (np.asarray(orders, dtype=float) * frequency_Hz)[:, None]
    terms = np.zeros((3,) + np.shape(major)[1:])
    for axis in (np.asarray(major), np.asarray(minor)):
        terms[0] += np.sum(c.k_h * f * axis**c.alpha, axis=0)
        terms[1] += np.sum(c.k_c * (f * axis) ** 2, axis=0)
        terms[2] += np.sum(c.k_e * (f * axis) ** 1.5, axis=0)
    return terms[0], terms[1], terms[2]


def region_losses(
    b: np.ndarray,
    regions: dict[str, tuple[np.ndarray, object]],
    areas_m2: np.ndarray,
    length_m: float,
    frequency_Hz: float,
) -> tuple[RegionLoss, ...]:
    """Iron loss per region from the waveforms ``b`` (see :func:`harmonic_ellipses`).

    ``regions``: name -> (element indices, material); ``areas_m2`` per element;
    ``length_m``: stack length times the number of sectors (whole machine). The flux
    density in the steel is the stack-averaged B over the stacking factor k_s, and the
    steel mass is density x area x length x k_s.
    """
    if not (math.isfinite(frequency_Hz) and frequency_Hz >= 0):
        raise ValueError(f"frequency = {frequency_Hz!r} Hz: must be finite and >= 0")
    out = []
    for name, (elements, material) in regions.items():
        if material.loss is None:
            raise MaterialError(f"material {material.name!r} of region {name!r} has no "
                                "iron-loss coefficients (a built-in grade has them)")
        k_s = material.stacking_factor
        orders, major, minor = harmonic_ellipses(np.asarray(b)[:, elements] / k_s)
        dens = loss_densities(material.loss, frequency_Hz, orders, major, minor)
        mass = material.density_kg_m3 * areas_m2[elements] * length_m * k_s
        out.append(RegionLoss(name, float(mass.sum()),
                              *(float(np.dot(mass, p)) for p in dens)))
    return tuple(out)


def sweep_steps(model, samples: int) -> tuple[np.ndarray, bool]:
    """Rotor steps of the position sweep over one electrical period, and the half-period flag.

    The stator field is half-wave symmetric, B(t + T/2) = -B(t): half a period later the
    rotor has turned one pole pitch, which leaves a reluctance rotor as it was, and the
    currents have changed sign. Where the sector is one anti-periodic pole pitch, the rotor
    field in the rotor frame repeats every T/2 as well; then half the period is solved
    (flag True). The sample count is raised to the next that divides the period's steps, so
    that the positions are equally spaced (:func:`fluxlab.studies.averaging.equally_spaced_steps`).
    """
    p = model.spec.pole_pairs
    period = round(2 * math.pi / p / model.step_angle)
    mesh = model.mesh
    half = mesh.edge_sign == -1 and math.isclose(mesh.sector_angle, math.pi / p, rel_tol=1e-9)
    if samples < 4:
        raise ValueError(f"iron loss samples = {samples}: need at least 4 per period")
    count = next(n for n in range(samples, period + 1) if period % n == 0)
    if half and count % 2:
        count = next(n for n in range(count + 1, period + 1) if period % n == 0 and n % 2 == 0)
    steps = equally_spaced_steps(model, period, count, "iron loss samples")
    return (steps[: count // 2] if half else steps), half


def _sweep_task(model, current_peak, current_angle, steps):
    out, initial = [], None
    for step in steps:
        pt = solve_point(model, current_peak, current_angle, int(step), initial)
        initial = pt.start
        out.append(pt.solution.b)
    return np.array(out)


def flux_density_waveforms(model, current_peak: float, current_angle: float, samples: int,
                           workers: int = 1,
                           progress: Callable[[str], None] | None = None) -> np.ndarray:
    """B per element over one electrical period, (n_samples, n_elements, 2), T.

    The dq current is fixed; the rotor turns through one electrical period (see
    :func:`sweep_steps`); chunks of consecutive positions run in ``workers`` processes.
    """

    steps, half = sweep_steps(model, samples)
    chunks = np.array_split(steps, max(1, min(workers, len(steps))))
    tasks = [(f"position sweep {k + 1}/{len(chunks)}", _sweep_task,
              (current_peak, current_angle, tuple(int(s) for s in c)))
             for k, c in enumerate(chunks)]
    done = run_tasks(model, tasks, workers, progress)
    b = np.concatenate([done[name] for name, _, _ in tasks])
    if not half:
        return b
    rotor = model.mesh.rotor_element
    second = np.where(rotor[None, :, None], b, -b)  # rotor repeats, stator changes sign
    return np.concatenate([b, second])


def iron_regions(model) -> dict[str, tuple[np.ndarray, object]]:
    """Steel regions: stator teeth and yoke split at the slot-bottom radius, and the rotor."""
    spec, mesh = model.spec, model.mesh.mesh
    stator = model.mesh.regions["stator_iron"]
    centre = mesh.p[:, mesh.t[:, stator]].mean(axis=1)
    r_bottom = spec.stator.bore_diameter / 2 + spec.stator.slot_depth
    teeth = np.hypot(*centre) < r_bottom
    return {
        "stator teeth": (stator[teeth], spec.materials["stator"]),
        "stator yoke": (stator[~teeth], spec.materials["stator"]),
        "rotor": (model.mesh.regions["rotor_iron"], spec.materials["rotor"]),
    }


def iron_loss_estimate(model, current_peak: float, current_angle: float, speed_rpm: float,
                       samples: int = 48, workers: int = 1,
                       progress: Callable[[str], None] | None = None) -> IronLoss:
    """Iron loss of the whole machine, W, at one dq current and speed (see module text)."""

    regions = iron_regions(model)
    for name, (_, material) in regions.items():
        if material.loss is None:
            raise MaterialError(f"material {material.name!r} of region {name!r} has no "
                                "iron-loss coefficients (a built-in grade has them)")
    b = flux_density_waveforms(model, current_peak, current_angle, samples, workers, progress)
    frequency = model.spec.pole_pairs * speed_rpm / 60.0
    areas = element_areas(model.problem)
    losses = region_losses(b, regions, areas, model.scale, frequency)
    return IronLoss(losses, float(speed_rpm), frequency, float(current_peak),
                    math.degrees(current_angle), b.shape[0])


def efficiency(power_W: float, copper_W: float, iron_W: float,
               mechanical_W: float = 0.0) -> float:
    """Efficiency (P - P_mech) / (P + P_cu + P_fe) of a motoring point, W in, 1 out.

    P = T omega from the electromagnetic torque; the shaft gives P - P_mech (friction and
    windage), the supply P + P_cu + P_fe.
    """
    total = power_W + copper_W + iron_W
    return (power_W - mechanical_W) / total if total > 0 else math.nan
