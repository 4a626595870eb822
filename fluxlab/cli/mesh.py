"""Mesh a machine: write the mesh (VTU, for ParaView) and a picture of regions and mesh."""

from __future__ import annotations

import json
from pathlib import Path

from fluxlab.mesh.machine_mesh import build_mesh
from fluxlab.report.figures import save_figure
from fluxlab.spec.machine_file import load_machine

__all__ = ["add_args", "run", "write_mesh"]


def add_args(parser) -> None:
    parser.add_argument("machine", help="machine file (TOML)")
    parser.add_argument("--out", required=True, help="output folder")


def write_mesh(machine_mesh, out: Path) -> list[Path]:
    """Write ``mesh.vtu`` (cell data ``region``, ids in ``regions.json``) to ``out``."""
    import meshio
    import numpy as np

    m = machine_mesh.mesh
    names = sorted(m.subdomains)
    region = np.zeros(m.t.shape[1], dtype=np.int32)
    for k, name in enumerate(names):
        region[m.subdomains[name]] = k
    points = np.column_stack([m.p.T, np.zeros(m.p.shape[1])]) * 1e3  # mm, for viewing
    meshio.write(
        out / "mesh.vtu",
        meshio.Mesh(points, [("triangle", m.t.T)],
                    cell_data={"region": [region],
                               "rotor_part": [machine_mesh.rotor_element.astype(np.int32)]}),
    )
    (out / "regions.json").write_text(json.dumps(
        {"units": "mm", "regions": dict(enumerate(names))}, indent=1))
    return [out / "mesh.vtu", out / "regions.json"]


def run(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from fluxlab.report.plots.mesh import plot_mesh

    spec = load_machine(args.machine)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    machine_mesh = build_mesh(spec)
    written = write_mesh(machine_mesh, out)
    fig, ax = plt.subplots(figsize=(9, 9))
    plot_mesh(machine_mesh, ax=ax)
    n_nodes, n_el = machine_mesh.mesh.p.shape[1], machine_mesh.mesh.t.shape[1]
    ax.set_title(f"{spec.name}: modelled sector, {n_nodes} nodes, {n_el} triangles")
    fig.tight_layout()
    written += save_figure(fig, out, "mesh", ("png", "svg"))
    for path in written:
        print(f"wrote {path}")
    return 0
