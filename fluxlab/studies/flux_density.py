"""Flux densities a designer reads, per region of the modelled sector.

A single element's |B| at a rib corner grows with mesh refinement; area-weighted means and
percentiles over a region do not (much). Regions: stator teeth and yoke (split at the slot
bottom radius), rotor flux guides, and the rotor ribs (tangential ribs and radial posts).
"""

from __future__ import annotations

import math

import numpy as np
import shapely

from fluxlab.fem.solver import FieldSolution
from fluxlab.geometry.csg import to_shapely, union
from fluxlab.geometry.rotor import barrier_placement, opening_angles
from fluxlab.geometry.stator import slot_shapes
from fluxlab.machine.model import MachineModel
from fluxlab.spec.types import MachineSpec

__all__ = ["weighted_percentile", "slot_bottom_radius", "region_elements",
           "region_flux_densities"]

#: Share of a region's area below the reported percentile value.
P99 = 0.99


def weighted_percentile(values: np.ndarray, weights: np.ndarray, share: float) -> float:
    """The smallest value v such that the values <= v carry at least ``share`` of the weight.

    With equal weights this is numpy's ``method="inverted_cdf"``; with element areas as
    weights it is the value below which ``share`` (0..1) of the region's area lies.
    """
    values, weights = np.ravel(values), np.ravel(weights)
    if values.size == 0 or values.shape != weights.shape or np.any(weights < 0):
        raise ValueError("weighted_percentile: need equal-length values and weights >= 0")
    if not 0.0 <= share <= 1.0:
        raise ValueError(f"share: {share!r} must lie in 0..1")
    order = np.argsort(values, kind="stable")
    cumulative = np.cumsum(weights[order])
    k = np.searchsorted(cumulative, share * cumulative[-1], side="left")
    return float(values[order][min(k, values.size - 1)])


def slot_bottom_radius(spec: MachineSpec) -> float:
    """Outermost radius a stator slot reaches, m: where the teeth end and the yoke begins."""
    shapes = slot_shapes(spec.stator, spec.winding.layers)
    points = shapely.get_coordinates(to_shapely(union(*shapes.values())))
    return float(np.hypot(points[:, 0], points[:, 1]).max())


def _rib_mask(spec: MachineSpec, xy: np.ndarray) -> np.ndarray:
    """True for rotor-frame points (2, n) in a tangential rib or a radial post."""
    rotor, r_rotor = spec.rotor, spec.rotor_radius
    pitch = 2 * math.pi / spec.poles
    theta = np.arctan2(xy[1], xy[0])
    phi = np.abs(theta - (np.floor(theta / pitch) + 0.5) * pitch)  # from the nearest q-axis
    r = np.hypot(xy[0], xy[1])
    x_pole, y_pole = r * np.cos(phi), r * np.sin(phi)
    # half a rib below the rib circle: a margin for centroids, the barrier is air there
    outer = r > r_rotor - 1.5 * rotor.tangential_rib
    # the rib's corners, where it meets the flux guides, belong to it: half a rib each side
    corner = 0.5 * rotor.tangential_rib / (r_rotor - rotor.tangential_rib)
    mask = np.zeros(r.shape, dtype=bool)
    for i, barrier in enumerate(rotor.barriers):
        lo, _, hi = opening_angles(rotor, r_rotor, barrier, f"rotor.barriers[{i}]")
        mask |= outer & (phi >= lo - corner) & (phi <= hi + corner)
        if barrier.post_width > 0:
            place = barrier_placement(rotor, r_rotor, barrier, f"rotor.barriers[{i}]")
            mask |= (y_pole < barrier.post_width / 2) & (
                np.abs(x_pole - place.r_axis) < barrier.width / 2)
    return mask


def region_elements(model: MachineModel) -> dict[str, np.ndarray]:
    """Element indices of the design regions (see :func:`region_flux_densities`)."""
    mesh, regions = model.mesh.mesh, model.mesh.regions
    centroids = mesh.p[:, mesh.t[:3]].mean(axis=1)  # (2, n_elements), rotor in rotor frame
    stator, rotor = regions["stator_iron"], regions["rotor_iron"]
    in_teeth = np.hypot(*centroids[:, stator]) < slot_bottom_radius(model.spec)
    out = {"stator_teeth": stator[in_teeth], "stator_yoke": stator[~in_teeth]}
    ribs = _rib_mask(model.spec, centroids[:, rotor])
    out["rotor_flux_guides"] = rotor[~ribs]
    if model.spec.rotor.barriers:
        out["rotor_ribs"] = rotor[ribs]
    return out


def region_flux_densities(model: MachineModel, solution: FieldSolution
                          ) -> dict[str, dict[str, float]]:
    """Area-weighted flux densities per region, T, as a JSON-able dict.

    ``stator_teeth`` (stator iron inside the slot bottom radius, tips included) and
    ``stator_yoke`` (beyond it): ``mean_T`` and ``p99_T``; ``rotor_flux_guides`` (rotor
    iron but the ribs) and ``rotor_ribs`` (tangential ribs over each barrier's opening and
    half a rib beyond it on either side, the corners; radial posts where they cross a
    barrier; absent without barriers): ``p99_T``.
    An element belongs to a region by its centroid. ``p99_T``: 99 % of the region's area
    has |B| at or below it (:func:`weighted_percentile`). ``local_peak``: the largest
    element |B| of the model (``max_T``) and its centroid (``x_mm``, ``y_mm``, stator
    frame at the solved rotor step); a local value that grows with mesh refinement.
    Elements carry the RMS of |B| over their quadrature points (``solution.b_norm``);
    a (n_elements, n_qp) ``b_norm`` is taken point by point with the quadrature weights.
    """
    weights = model.problem.data.weights  # (n_elements, n_qp), m^2
    b = np.asarray(solution.b_norm)
    if b.ndim == 1:
        b, weights = b[:, None], weights.sum(axis=1, keepdims=True)
    out: dict[str, dict[str, float]] = {}
    for name, elements in region_elements(model).items():
        if elements.size == 0:
            continue
        values, w = b[elements], weights[elements]
        entry = {"p99_T": weighted_percentile(values, w, P99)}
        if name.startswith("stator"):
            entry = {"mean_T": float(np.sum(values * w) / np.sum(w)), **entry}
        out[name] = entry
    per_element = np.sqrt(np.sum(b**2 * weights, axis=1) / weights.sum(axis=1))
    k = int(np.argmax(per_element))
    mesh = model.mesh.mesh
    x, y = mesh.p[:, mesh.t[:3, k]].mean(axis=1)
    if model.mesh.rotor_element[k]:
        turn = solution.step * model.step_angle
        x, y = x * math.cos(turn) - y * math.sin(turn), x * math.sin(turn) + y * math.cos(turn)
    out["local_peak"] = {"max_T": float(per_element[k]), "x_mm": float(x * 1e3),
                         "y_mm": float(y * 1e3)}
    return out
