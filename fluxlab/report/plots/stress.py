"""The rotor stress figure: von Mises over the lamination, the deformed outline, the peak."""

from __future__ import annotations

import math

import numpy as np

from fluxlab.stress.study import RotorStress
from fluxlab.stress.zones import ZONES

__all__ = ["outline_exaggeration", "plot_stress", "stress_figure"]

#: The deformed outline is drawn with its largest displacement at this share of the rotor
#: radius: visible, yet the shape still readable.
_SHOWN_SHARE = 0.03


def _copies(result: RotorStress):
    """Points (2, n) of every pole's copy of the sector and the nodal von Mises (Pa per
    (rad/s)^2, vertex values averaged), triangles, boundary node pairs, displacements."""
    mesh = result.mesh.mesh
    n = mesh.p.shape[1]
    nodal = np.bincount(mesh.t.ravel(), result.von_mises.T.ravel(), minlength=n) / np.bincount(
        mesh.t.ravel(), minlength=n)
    u = result.field.u[result.field.basis.nodal_dofs]  # (2, n) vertex displacements
    tied = np.concatenate([np.asarray((mesh.boundaries or {}).get(name, []), dtype=int)
                           for name in ("edge_start", "edge_end")])
    edges = mesh.facets[:, np.setdiff1d(mesh.boundary_facets(), tied)]  # free edges only
    pts, tris, vals, segs, disp = [], [], [], [], []
    for k in range(result.mesh.sectors):
        a = k * result.mesh.sector_angle
        rot = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
        pts.append(rot @ mesh.p)
        disp.append(rot @ u)
        tris.append(mesh.t.T + k * n)
        segs.append(edges.T + k * n)
        vals.append(nodal)
    return (np.hstack(pts), np.vstack(tris), np.concatenate(vals), np.vstack(segs),
            np.hstack(disp))


def outline_exaggeration(result: RotorStress, speed_rpm: float) -> float:
    """Factor on the displacements at ``speed_rpm`` of the drawn outline (a round 1, 2 or
    5 x 10^k)."""
    u = result.field.u[result.field.basis.nodal_dofs]
    largest = float(np.max(np.hypot(*u))) * (speed_rpm * 2 * math.pi / 60) ** 2
    if largest <= 0:
        return 1.0
    raw = _SHOWN_SHARE * result.spec.rotor_radius / largest
    power = 10 ** math.floor(math.log10(raw))
    return max(m * power for m in (1, 2, 5) if m * power <= raw)


def plot_stress(result: RotorStress, speed_rpm: float, ax=None, *, zoom_mm: float | None = None,
                colorbar: bool = True):
    """Von Mises stress (MPa) at ``speed_rpm`` over the whole lamination, the peak marked;
    drawn whole with the outline deformed by :func:`outline_exaggeration` x the displacement,
    or, with ``zoom_mm``, a square of that side around the peak with its value written
    beside it (no deformed outline: the exaggerated shift would leave the view). Returns the
    axes."""
    import matplotlib.pyplot as plt
    from matplotlib.collections import LineCollection

    ax = ax or plt.figure().add_subplot()
    w2 = (speed_rpm * 2 * math.pi / 60) ** 2
    pts, tris, vals, segs, disp = _copies(result)
    mm = 1e3
    peak = result.peak_Pa(speed_rpm) / 1e6
    shade = ax.tripcolor(pts[0] * mm, pts[1] * mm, tris, vals * w2 / 1e6, shading="gouraud",
                         cmap="viridis", vmin=0.0, vmax=peak, rasterized=True)
    factor = outline_exaggeration(result, speed_rpm)
    moved = pts + factor * w2 * disp
    ax.add_collection(LineCollection(pts.T[segs] * mm, colors="0.55", linewidths=0.5,
                                     label="lamination at rest"))
    if not zoom_mm:
        ax.add_collection(LineCollection(moved.T[segs] * mm, colors="tab:red", linewidths=0.8,
                                         label=f"deformed outline, displacement x {factor:g}"))
    x, y = result.peak_point()
    e = int(np.argmax(result.von_mises.max(axis=1)))
    where = ZONES[int(result.zone[e])].replace("_", " ")
    ax.plot(x * mm, y * mm, marker="o", ms=9, mfc="none", mec="red", mew=1.6, ls="none",
            label=f"peak {peak:.1f} MPa ({where})")
    ax.set_aspect("equal")
    if zoom_mm:
        ax.annotate(f"{peak:.1f} MPa", (x * mm, y * mm), xytext=(14, 14),
                    textcoords="offset points", color="red", fontsize=9,
                    bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.85))
        half = zoom_mm / 2
        ax.set_xlim(x * mm - half, x * mm + half)
        ax.set_ylim(y * mm - half, y * mm + half)
    else:
        r = result.spec.rotor_radius * mm * 1.04
        ax.set_xlim(-r, r)
        ax.set_ylim(-r, r)
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    if colorbar:
        ax.figure.colorbar(shade, ax=ax, shrink=0.9,
                           label="von Mises stress (MPa; shading: vertex values averaged)")
    return ax


def stress_figure(result: RotorStress, speed_rpm: float, caution: str):
    """The whole lamination and a zoom on the peak side by side, titled, with the caution."""
    import matplotlib.pyplot as plt

    fig, (whole, near) = plt.subplots(1, 2, figsize=(12, 7.2), layout="constrained")
    plot_stress(result, speed_rpm, whole, colorbar=False)  # one scale: the right one
    plot_stress(result, speed_rpm, near, zoom_mm=12 * result.spec.rotor.tangential_rib + 6.0)
    whole.set_title("whole lamination")
    near.set_title("around the peak")
    for ax in (whole, near):  # below the axes: inside, it would hide steel
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.09), fontsize=8, frameon=False)
    fig.suptitle(f"{result.spec.name}: rotor von Mises stress at {speed_rpm:g} rpm "
                 "(plane stress, lamination alone, bore free)")
    fig.get_layout_engine().set(rect=(0, 0.06, 1, 0.94))  # room for the caution below
    fig.text(0.01, 0.01, caution, fontsize=7, wrap=True, va="bottom")
    return fig
