"""`fluxlab export`: the DXF laminations read back with ezdxf against the geometry's own areas.

The reference areas are those of the modelled sector's regions (`geometry.sector`, the
regions the mesher receives), evaluated with shapely and scaled by the number of sectors in
the machine: an independent path from the whole-lamination contours the drawing is made of.
Tolerance 0.1 %: both sides approximate arcs by polygons of 720 points per full circle
(relative area error about 1e-5); the DXF circles are exact.
"""

from __future__ import annotations

import math

import ezdxf
import numpy as np
import pytest
import shapely
from paths import GEOMETRIES

from fluxlab.cli import main
from fluxlab.geometry.csg import to_shapely
from fluxlab.geometry.sector import rotor_regions, stator_regions
from fluxlab.spec.machine_file import load_machine

MACHINES = ["demo_fan_drive", "demo_fan_drive_u", "demo_pump_6p54s", "demo_round_rotor"]


def _shoelace(points: np.ndarray) -> float:
    x, y = points[:, 0], points[:, 1]
    return 0.5 * abs(float(np.sum(x * np.roll(y, -1) - y * np.roll(x, -1))))


def _read(path):
    doc = ezdxf.readfile(path)
    msp = doc.modelspace()
    circles = {e.dxf.layer: e.dxf.radius for e in msp.query("CIRCLE")}
    polylines = {}
    for e in msp.query("LWPOLYLINE"):
        assert e.closed, f"open polyline on {e.dxf.layer}"
        polylines.setdefault(e.dxf.layer, []).append(np.array(e.get_points("xy")))
    return doc, circles, polylines


def _sector_areas(regions, names_of):
    """Sum of shapely areas of the regions whose name passes ``names_of``, m²."""
    shapes = [to_shapely(shape) for name, shape in regions if names_of(name)]
    return shapely.union_all(shapes).area if shapes else 0.0


@pytest.mark.parametrize("name", MACHINES)
def test_dxf_round_trip_areas_and_counts(name, tmp_path):
    path = GEOMETRIES / f"{name}.toml"
    spec = load_machine(path)
    assert main(["export", str(path), "--out", str(tmp_path)]) == 0
    sector = 2 * math.pi / spec.poles  # one pole: Q / 2p slots, one barrier group
    copies = spec.poles

    doc, circles, polylines = _read(tmp_path / "stator.dxf")
    assert doc.header["$INSUNITS"] == 4  # millimetres
    st = spec.stator
    assert circles["STATOR_OUTLINE"] == pytest.approx(st.outer_diameter * 500, rel=1e-12)
    assert circles["STATOR_BORE"] == pytest.approx(st.bore_diameter * 500, rel=1e-12)
    slots = polylines["SLOTS"]
    assert len(slots) == st.slots
    regions = stator_regions(spec, sector)
    slot_ref = _sector_areas(regions, lambda n: n.startswith("slot")) * copies / st.slots
    iron_ref = (_sector_areas(regions, lambda n: n == "stator_iron") * copies
                - slot_ref * st.slots)
    for contour in slots:
        assert _shoelace(contour) * 1e-6 == pytest.approx(slot_ref, rel=1e-3)
    iron_dxf = (math.pi * (circles["STATOR_OUTLINE"] ** 2 - circles["STATOR_BORE"] ** 2)
                - sum(_shoelace(c) for c in slots)) * 1e-6
    assert iron_dxf == pytest.approx(iron_ref, rel=1e-3)
    # slot k (0-based) has its axis at (k + 1/2) slot pitches from +x
    angles = sorted(math.atan2(*c.mean(axis=0)[::-1]) % (2 * math.pi) for c in slots)
    pitch = 2 * math.pi / st.slots
    np.testing.assert_allclose(angles, (np.arange(st.slots) + 0.5) * pitch, atol=1e-3)

    doc, circles, polylines = _read(tmp_path / "rotor.dxf")
    assert doc.header["$INSUNITS"] == 4
    assert circles["ROTOR_OUTLINE"] == pytest.approx(spec.rotor_radius * 1e3, rel=1e-12)
    assert circles["SHAFT_BORE"] == pytest.approx(spec.rotor.shaft_diameter * 500, rel=1e-12)
    pieces = sum(2 if b.post_width > 0 else 1 for b in spec.rotor.barriers)
    barriers = polylines.get("BARRIERS", [])
    assert len(barriers) == spec.poles * pieces
    regions = rotor_regions(spec, sector)
    barrier_ref = _sector_areas(regions, lambda n: n.startswith("barrier")) * copies
    barrier_dxf = sum(_shoelace(c) for c in barriers) * 1e-6
    if barrier_ref:
        assert barrier_dxf == pytest.approx(barrier_ref, rel=1e-3)
    else:
        assert barrier_dxf == 0.0
    rotor_ref = _sector_areas(regions, lambda n: n == "rotor_iron") * copies - barrier_ref
    rotor_dxf = math.pi * (circles["ROTOR_OUTLINE"] ** 2 - circles["SHAFT_BORE"] ** 2) * 1e-6
    assert rotor_dxf - barrier_dxf == pytest.approx(rotor_ref, rel=1e-3)
