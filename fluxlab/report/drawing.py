"""Lamination drawings as DXF (millimetres), written with ezdxf.

Each lamination goes to its own file: the outer circle and the inner circle (stator bore,
shaft bore) as exact CIRCLE entities, every slot or barrier piece as a closed LWPOLYLINE
(the polygon the geometry evaluates its arcs to, 720 points per full circle). One layer per
kind of contour; ``$INSUNITS`` = 4 (mm), ``$MEASUREMENT`` = 1 (metric).
"""

from __future__ import annotations

from pathlib import Path

from fluxlab.geometry.lamination import Lamination

__all__ = ["LAYERS", "write_lamination_dxf"]

_MM = 1e3  # drawing units per metre

# layer names per lamination: (outer circle, inner circle, cut-outs), and their ACI colours
LAYERS = {
    "stator": ("STATOR_OUTLINE", "STATOR_BORE", "SLOTS"),
    "rotor": ("ROTOR_OUTLINE", "SHAFT_BORE", "BARRIERS"),
}
_COLOURS = (7, 3, 1)  # white/black, green, red


def write_lamination_dxf(lamination: Lamination, path: str | Path) -> Path:
    """Write ``lamination`` to a DXF file at ``path`` in millimetres; returns the path."""
    import ezdxf
    from ezdxf import units

    doc = ezdxf.new("R2010", setup=False)
    doc.units = units.MM
    doc.header["$MEASUREMENT"] = 1
    names = LAYERS[lamination.name]
    for name, colour in zip(names, _COLOURS):
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()
    msp.add_circle((0.0, 0.0), lamination.outer_radius * _MM, dxfattribs={"layer": names[0]})
    if lamination.inner_radius > 0:
        msp.add_circle((0.0, 0.0), lamination.inner_radius * _MM,
                       dxfattribs={"layer": names[1]})
    for contour in lamination.cutouts:
        msp.add_lwpolyline(contour * _MM, format="xy", close=True,
                           dxfattribs={"layer": names[2]})
    path = Path(path)
    doc.saveas(path)
    return path
