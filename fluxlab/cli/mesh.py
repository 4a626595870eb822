"""Mesh a machine: write the mesh (VTU, for ParaView) and a picture of regions and mesh."""

from __future__ import annotations

from pathlib import Path

from fluxlab.cli._output import add_machine_and_out, open_machine_output
from fluxlab.mesh.machine_mesh import build_mesh
from fluxlab.report.figures import save_figure
from fluxlab.report.plots.mesh import plot_mesh
from fluxlab.report.point_files import write_mesh
from fluxlab.spec.machine_file import load_machine

__all__ = ["add_args", "run"]


def add_args(parser) -> None:
    add_machine_and_out(parser)


def run(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    spec = load_machine(args.machine)
    out = Path(args.out)
    output = open_machine_output(out, "mesh", spec, args.overwrite)
    machine_mesh = build_mesh(spec)
    output.clear_stale()
    written = write_mesh(machine_mesh, out)
    fig, ax = plt.subplots(figsize=(9, 9))
    plot_mesh(machine_mesh, ax=ax)
    n_nodes, n_el = machine_mesh.mesh.p.shape[1], machine_mesh.mesh.t.shape[1]
    ax.set_title(f"{spec.name}: modelled sector, {n_nodes} nodes, {n_el} triangles")
    fig.tight_layout()
    written += save_figure(fig, out, "mesh", ("png", "svg"))
    output.finish(written)
    for path in written:
        print(f"wrote {path}")
    return 0
