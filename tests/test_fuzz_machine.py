"""Property-based test of the machine pipeline: random machine tables either mesh or fail
with fluxlab's own error, never with another exception and never by hanging.

Each drawn table goes to a separate worker process (``spawn``) that validates it with
:func:`fluxlab.spec.machine_file.machine_from_dict` and meshes it with
:func:`fluxlab.mesh.machine_mesh.build_mesh` on a coarse mesh. The worker runs under a
hard wall-clock limit: a Python alarm cannot interrupt gmsh while it is inside its C++
mesher, killing a process can. A worker that crashes (a segfault inside gmsh) is also a failure.

Tables start from the demo machine's file and are varied: most draws are physically
plausible so that a good share is meshed; some are mutated with wrong types, bad values,
missing or unknown keys. Generation is derandomised (fixed seed, no example database), so
CI sees the same examples on every run.

A meshed sector must hold exactly the regions the table implies, each element in one
region, positive areas, part and annulus areas within 1 % of their closed forms, each
slot's winding area near its closed form, every barrier out to its rib circle, and the
same node count on both copies of the sliding circle. The tests at the end pin the bugs
this test found.
"""

from __future__ import annotations

import copy
import math
import multiprocessing
import sys
import traceback
from datetime import timedelta
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, event, given, settings
from hypothesis import strategies as st
from paths import GEOMETRIES, demo_table

if sys.version_info >= (3, 11):
    import tomllib
else:
    import tomli as tomllib

DEMO_RAW: dict = demo_table()

#: Hard wall limit per example, s. A coarse mesh here takes 0.1-8 s (measured); a draw
#: that has not answered after this long is taken as a hang (common practice, no source).
HANG_LIMIT_S = 90.0
#: Hypothesis deadline per example: far above a coarse mesh, below the hang limit; a hang
#: guard, not a speed check (the issue asks for both bounds).
DEADLINE = timedelta(seconds=60)

#: Area tolerance of a meshed part against its closed-form annulus sector (issue
#: requirement: 1 %). The mesh's straight edges cut every circular boundary; with the
#: coarse size below (at most 0.08 of the outer radius) a chord of angle theta loses a
#: fraction theta^2/6 ~ 0.1 % of the disc it bounds (circle-segment area, elementary
#: geometry), well inside 1 %.
AREA_TOL = 0.01
#: Coarse element size as a fraction of the stator outer radius (see AREA_TOL).
COARSE_FRACTION = 0.08


# ------------------------------------------------------------------------ drawing tables
def _r(x: float, digits: int = 2) -> float:
    """Round a drawn length as a designer would type it."""
    return round(float(x), digits)


def _good_slots(poles: int, bore_mm: float) -> list[int]:
    """Slot numbers a designer would try for ``poles`` and a bore: 6..72, a balanced
    three-phase star of slots, Q / (3 gcd(Q, p)) integer (the rule stated in
    fluxlab.machine.winding), a sector of at most half the machine, a slot pitch of 5 mm or more.

    Only a bias towards valid machines; the validation itself decides.
    """
    p = poles // 2
    out = []
    for q in range(6, 73, 3):
        t = math.gcd(q, p)
        symmetric = (q // t) % 2 == 0 or t >= 2
        if q % (3 * t) == 0 and symmetric and math.pi * bore_mm / q >= 5.0:
            out.append(q)
    return out or [6 * p]


def _unit(draw, lo: float, hi: float) -> float:
    return draw(st.floats(lo, hi, allow_nan=False, allow_infinity=False))


def _barriers(draw, poles: int, r_rotor: float, r_shaft: float, rib: float,
              min_rib: float, min_steel: float) -> tuple[str, list[dict]]:
    """0..5 nested barriers spread between the rotor surface and the shaft, mm and deg.

    Depths split a share of the radial room into equal pitches; end angles split the half
    pole pitch left after the steel at the d-axis, pulled in where a barrier would come
    near the d-axis; widths take a share of the smaller pitch.
    """
    n = draw(st.integers(0, 5))
    if n == 0:
        return draw(st.sampled_from(["arc", "u"])), []
    shape = draw(st.sampled_from(["arc", "u"]))
    half_pole = math.pi / poles
    radial = (r_rotor - r_shaft - 2 * min_steel - rib) * _unit(draw, 0.4, 0.9) / n
    angular = (half_pole - min_steel / r_rotor) / (n + 1)
    out = []
    for i in range(n):
        width = min(radial, 0.7 * r_rotor * angular) * _unit(draw, 0.25, 0.6)
        depth = rib + width / 2 + radial * (i + _unit(draw, 0.3, 0.7))
        end = angular * (i + _unit(draw, 0.6, 1.0)) - width / r_rotor
        for _ in range(12):  # pull the ends in until the barrier keeps off the d-axis
            if _d_axis_clearance(shape, half_pole, r_rotor - depth,
                                 r_rotor - rib - width / 2, end) > width / 2 + min_steel:
                break
            end *= 0.85
        b = {"depth_mm": _r(depth), "end_angle_deg": _r(math.degrees(max(end, 0.02))),
             "width_mm": _r(width)}
        if draw(st.booleans()):
            b["post_mm"] = _r(_unit(draw, min_rib, max(min_rib, min(2.0, 0.5 * r_rotor * angular))))
        out.append(b)
    return shape, out


def _d_axis_clearance(shape: str, half_pole: float, r_axis: float, r_end: float,
                      end: float) -> float:
    """Rough distance of a barrier's centre line from the d-axis, mm (generator bias only:
    U legs parallel to the q-axis, an arc through the q-axis point and the end points)."""
    end_x, end_y = r_end * math.cos(end), r_end * math.sin(end)
    if shape == "u":
        xs, ys = np.array([r_axis, end_x]), np.array([end_y, end_y])
    elif end_x <= r_axis:
        return -1.0  # no arc through these points; let the validation say so
    else:
        centre = (r_end**2 - r_axis**2) / (2 * (end_x - r_axis))
        t = np.linspace(0.0, math.atan2(end_y, centre - end_x), 50)
        xs, ys = centre - (centre - r_axis) * np.cos(t), (centre - r_axis) * np.sin(t)
    return float(np.min(xs * math.sin(half_pole) - ys * math.cos(half_pole)))


@st.composite
def plausible_tables(draw) -> dict:
    """A machine table near a real design: the demo with its dimensions redrawn (mm, deg)."""
    raw = copy.deepcopy(DEMO_RAW)
    poles = draw(st.sampled_from([2, 4, 6, 8, 10]))
    bore = _r(_unit(draw, 60.0, 200.0), 1)
    slots = draw(st.sampled_from(_good_slots(poles, bore)))
    integral = slots % (3 * poles) == 0  # q = Q / (3 * 2p) a whole number
    layers = draw(st.sampled_from([2, 2, 1])) if integral else 2
    tau = slots / poles
    pitch = max(1, round(tau) - (0 if layers == 1 else draw(st.integers(0, 2))))
    outer = _r(bore * _unit(draw, 1.35, 1.8), 1)
    gap = _r(_unit(draw, 0.3, 1.2))
    slot_pitch = math.pi * bore / slots
    min_steel = _r(_unit(draw, 1.0, min(2.5, 0.3 * slot_pitch)))
    stator = {
        "slots": slots,
        "outer_diameter_mm": outer,
        "bore_diameter_mm": bore,
        "airgap_mm": gap,
        "slot_opening_mm": _r(slot_pitch * _unit(draw, 0.15, 0.35)),
        "tip_height_mm": _r(_unit(draw, 0.5, 1.5)),
        "slot_depth_mm": _r((outer - bore) / 2 * _unit(draw, 0.3, 0.7)),
        "slot_bottom": draw(st.sampled_from(["round", "flat"])),
    }
    if draw(st.booleans()):
        stator["tooth_width_mm"] = _r(slot_pitch * _unit(draw, 0.4, 0.6))
    else:
        stator["slot_width_mm"] = _r(slot_pitch * _unit(draw, 0.35, 0.55))
    if stator["slot_bottom"] == "flat" and draw(st.booleans()):
        stator["bottom_fillet_mm"] = _r(slot_pitch * _unit(draw, 0.0, 0.2))
    r_rotor = bore / 2 - gap
    shaft = _r(2 * r_rotor * _unit(draw, 0.2, 0.45), 1)
    rib = _r(_unit(draw, 0.4, 1.2))
    min_rib = _r(_unit(draw, 0.3, rib))
    shape, barriers = _barriers(draw, poles, r_rotor, shaft / 2, rib, min_rib, min_steel)
    rotor: dict[str, Any] = {
        "shaft_diameter_mm": shaft,
        "barrier_shape": shape,
        "tangential_rib_mm": rib,
        "min_rib_mm": min_rib,
        "min_steel_mm": min_steel,
    }
    if barriers:
        rotor["barriers"] = barriers
    raw["machine"]["poles"] = poles
    raw["stator"] = stator
    raw["winding"].update(layers=layers, coil_pitch_slots=pitch)
    raw["rotor"] = rotor
    return raw


#: Values of the wrong kind or out of range, all of them representable in TOML.
WILD_VALUES = st.one_of(
    st.sampled_from([0, -1, -3.5, 0.0, 1e9, 3.5, True, "12", "", [1, 2], {"x": 1},
                     math.nan, math.inf, -math.inf, 10**30, 1e308, 5e-324, 1e-300, 1e12]),
    st.floats(-1e3, 1e4, allow_nan=False),
    st.integers(-10, 500),
)


def _paths(raw: dict) -> list[tuple]:
    """Every (container, key) pair of a table, barriers included."""
    out = []
    for name, section in raw.items():
        out.append((raw, name))
        if isinstance(section, dict):
            for key, value in section.items():
                out.append((section, key))
                if isinstance(value, list):
                    for index, item in enumerate(value):
                        out.append((value, index))
                        if isinstance(item, dict):
                            out.extend((item, k) for k in item)
    return out


@st.composite
def mutated_tables(draw) -> dict:
    """A plausible table with one to three mutations: a bad value, a deleted key or
    barrier, an unknown key or section or one barrier more, a scaled value (valid type,
    implausible size)."""
    raw = draw(plausible_tables())
    for _ in range(draw(st.integers(1, 3))):
        container, key = draw(st.sampled_from(_paths(raw)))
        kind = draw(st.sampled_from(["value", "value", "scale", "scale", "delete", "add"]))
        if kind == "value":
            container[key] = draw(WILD_VALUES)
        elif kind == "scale" and isinstance(container[key], (int, float)) \
                and not isinstance(container[key], bool):
            factor = draw(st.sampled_from([1e-3, 0.1, 0.5, 0.9, 1.1, 2.0, 10.0, 1e4]))
            scaled = container[key] * factor
            container[key] = round(scaled) if isinstance(container[key], int) else scaled
        elif kind == "delete":
            del container[key]
        elif isinstance(container, list):
            container.append(copy.deepcopy(container[-1]))  # one more barrier
        else:
            container["colour_mm" if container is not raw else "paint"] = 1.0
    return raw


def machine_tables() -> st.SearchStrategy[dict]:
    """Three quarters plausible tables, one quarter mutated ones; then the coarse mesh."""
    return st.one_of(plausible_tables(), plausible_tables(), plausible_tables(),
                     mutated_tables()).map(_coarse)


def _coarse(raw: dict) -> dict:
    """Override the mesh section: coarse elements, one layer per half gap, 4 steps/slot."""
    raw = copy.deepcopy(raw)
    outer = raw.get("stator", {}).get("outer_diameter_mm") if isinstance(
        raw.get("stator"), dict) else None
    size = 20.0
    if isinstance(outer, (int, float)) and not isinstance(outer, bool) and math.isfinite(outer):
        size = min(50.0, max(0.05, round(COARSE_FRACTION * outer / 2, 1)))
    raw["mesh"] = {"size_mm": size, "airgap_layers": 1, "steps_per_slot": 4,
                   "element_order": 1}
    return raw


# ------------------------------------------------------------------------ worker process
def evaluate(raw: dict) -> dict:
    """Validate and mesh one table; return a plain, picklable summary.

    ``stage`` is ``"spec"`` (validation raised), ``"mesh"`` (meshing raised) or
    ``"meshed"``. ``unexpected`` holds the traceback of an exception that is not a
    :class:`fluxlab.errors.FluxlabError`.
    """
    from fluxlab.errors import FluxlabError
    from fluxlab.mesh.machine_mesh import build_mesh
    from fluxlab.spec.machine_file import machine_from_dict

    def failed(stage: str, err: BaseException) -> dict:
        expected = isinstance(err, FluxlabError)
        return {"stage": stage, "error": type(err).__name__, "message": str(err)[:2000],
                "unexpected": None if expected else traceback.format_exc()}

    try:
        spec = machine_from_dict(raw, GEOMETRIES)
    except Exception as err:  # noqa: BLE001 - the test sorts the error kinds
        return failed("spec", err)
    try:
        machine = build_mesh(spec)
    except Exception as err:  # noqa: BLE001
        return failed("mesh", err)
    return {"stage": "meshed", **_summary(machine)}


def _summary(machine) -> dict:
    mesh = machine.mesh
    p = mesh.p[:, mesh.t]
    area = 0.5 * abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0])
                     - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))
    owner = np.zeros(mesh.t.shape[1], dtype=int)
    for elements in machine.regions.values():
        owner[elements] += 1
    sliding = {part: len(np.unique(mesh.facets[:, mesh.boundaries[f"sliding_{part}"]]))
               for part in ("rotor", "stator")}
    radius = np.hypot(*mesh.p)
    reach = {k: float(radius[mesh.t[:, v]].max()) for k, v in machine.regions.items()
             if k.startswith("barrier_")}
    return {
        "barrier_reach": reach,
        "elements": int(mesh.t.shape[1]),
        "min_area": float(area.min()),
        "owners": (int(owner.min()), int(owner.max())),
        "region_elements": {k: int(len(v)) for k, v in machine.regions.items()},
        "region_area": {k: float(area[v].sum()) for k, v in machine.regions.items()},
        "rotor_area": float(area[machine.rotor_element].sum()),
        "stator_area": float(area[~machine.rotor_element].sum()),
        "sector_angle": float(machine.sector_angle),
        "sliding_nodes": sliding,
        "sliding_divisions": int(machine.sliding_divisions),
        "sliding_radius": float(machine.sliding_radius),
    }


def _serve(conn) -> None:
    """Worker loop: evaluate tables until told to stop (None)."""
    while True:
        raw = conn.recv()
        if raw is None:
            return
        conn.send(evaluate(raw))


class Worker:
    """One spawned worker process with a hard time limit per table; replaced when it hangs
    or dies. ``spawn``, not ``fork``: forking a process that holds BLAS or gmsh threads can
    deadlock the child (DEVELOPERS.md, Speed)."""

    def __init__(self) -> None:
        self._ctx = multiprocessing.get_context("spawn")
        self._start()

    def _start(self) -> None:
        self._conn, child = self._ctx.Pipe()
        self._proc = self._ctx.Process(target=_serve, args=(child,), daemon=True)
        self._proc.start()
        child.close()

    def _restart(self) -> None:
        self._proc.kill()
        self._proc.join()
        self._conn.close()
        self._start()

    def run(self, raw: dict, limit_s: float) -> dict:
        self._conn.send(raw)
        if not self._conn.poll(limit_s):
            self._restart()
            raise AssertionError(f"no answer within {limit_s} s: validation or meshing hangs")
        try:
            return self._conn.recv()
        except EOFError:
            self._proc.join()
            code = self._proc.exitcode
            self._start()
            raise AssertionError(f"the worker process died (exit code {code}): a crash "
                                 "inside validation or gmsh") from None

    def close(self) -> None:
        try:
            self._conn.send(None)
            self._proc.join(10)
        finally:
            if self._proc.is_alive():
                self._proc.kill()
                self._proc.join()


@pytest.fixture(scope="module")
def worker():
    w = Worker()
    yield w
    w.close()


# ------------------------------------------------------------------------ checks
def _expected_regions(raw: dict, sector_angle: float) -> set[str]:
    """Region names a meshed sector must hold, from the table alone."""
    turns = sector_angle / (2 * math.pi)
    poles = round(raw["machine"]["poles"] * turns)
    slots = round(raw["stator"]["slots"] * turns)
    layers = raw["winding"].get("layers", 2)
    names = {"shaft", "rotor_iron", "airgap_rotor", "airgap_stator", "stator_iron",
             "slot_opening"}
    if poles:
        names |= {f"barrier_{i}" for i in range(len(raw["rotor"].get("barriers", [])))}
    names |= {f"slot_{k}_layer_{j}" for k in range(slots) for j in range(layers)}
    return names


def _chord_loss(r_in: float, r_out: float, size: float) -> float:
    """Bound on the relative area a ring sector loses to straight element edges of length up
    to ``size`` (at most a twelfth of a circle, gmsh_part's curvature setting): a chord of
    angle theta cuts R^2 theta^3 / 12 off its arc, so an arc of angle phi loses
    phi R^2 theta^2 / 12 over an area phi (R_o^2 - R_i^2) / 2 (elementary geometry). A few
    tenths of a per cent for this file's sizes (at most COARSE_FRACTION of the outer
    radius); the tables of tests/test_plausibility.py reach 20 mm on a 90 mm radius
    (1.2 %)."""
    def theta(r: float) -> float:
        return min(size / r, 2 * math.pi / 12) if r > 0 else 0.0

    return sum(r**2 * theta(r) ** 2 for r in (r_in, r_out)) / (6 * (r_out**2 - r_in**2))


def _annulus_sector(r_in: float, r_out: float, angle: float) -> float:
    """Area of a ring sector, m^2: angle/2 (r_out^2 - r_in^2) (elementary geometry)."""
    return 0.5 * angle * (r_out**2 - r_in**2)


def _slot_body_area(st_: dict) -> tuple[float, float] | None:
    """Closed-form area of one slot body (all layers), m^2, and the area of the discs whose
    arcs bound it (for the chord tolerance); None where no closed form is written here
    (filleted slot with parallel teeth).

    Derived from the slot description in fluxlab.geometry.stator, not from its code:
    parallel slot of width w, or parallel teeth of width t (slot side at t/2 from the
    tooth centre line, which is at half a slot pitch a = pi/Q from the slot axis); a round
    bottom is the circle tangent to both sides and to the slot's deepest point.
    """
    mm = 1e-3
    r_bore = st_["bore_diameter_mm"] / 2 * mm
    x_top = r_bore + st_["tip_height_mm"] * mm
    x_bottom = r_bore + st_["slot_depth_mm"] * mm
    round_bottom = st_.get("slot_bottom", "round") == "round"
    f = st_.get("bottom_fillet_mm", 0.0) * mm
    if "slot_width_mm" in st_:
        w = st_["slot_width_mm"] * mm
        if round_bottom:
            radius = w / 2
            return w * (x_bottom - radius - x_top) + math.pi * radius**2 / 2, math.pi * radius**2
        # flat: each filleted corner loses a square f^2 minus a quarter disc
        return w * (x_bottom - x_top) - 2 * (1 - math.pi / 4) * f**2, math.pi * f**2
    a, t = math.pi / st_["slots"], st_["tooth_width_mm"] * mm

    def half(x: float) -> float:  # distance of the side line from the slot axis at x
        return (x * math.sin(a) - t / 2) / math.cos(a)

    if not round_bottom:
        if f > 0:
            return None
        return (x_bottom - x_top) * (half(x_top) + half(x_bottom)), 0.0
    # tangency: centre c on the axis at distance R = x_bottom - c from the side line,
    # c sin(a) - t/2 = R, so the sides end at c - R sin(a); beyond that chord the cap is
    # the disc minus its near segment of central angle pi - 2a
    c = (x_bottom + t / 2) / (1 + math.sin(a))
    radius = x_bottom - c
    x_end = c - radius * math.sin(a)
    phi = math.pi - 2 * a
    cap = math.pi * radius**2 - radius**2 * (phi - math.sin(phi)) / 2
    return (x_end - x_top) * (half(x_top) + half(x_end)) + cap, math.pi * radius**2


#: Chord loss of a curved slot boundary: gmsh is set to at least 12 elements per full
#: circle (Mesh.MeshSizeFromCurvature in fluxlab.mesh.gmsh_part), and an inscribed regular
#: 12-gon lacks 1 - 3/pi = 4.5 % of its disc (polygon area (n/2) sin(2 pi/n) R^2).
CHORD_LOSS = 1 - 3 / math.pi


def check_meshed(raw: dict, out: dict) -> None:
    """Sanity of a meshed sector against numbers taken from the table, not the code."""
    mm = 1e-3
    st_ = raw["stator"]
    r_bore, r_out = st_["bore_diameter_mm"] / 2 * mm, st_["outer_diameter_mm"] / 2 * mm
    r_rotor = r_bore - st_["airgap_mm"] * mm
    r_slide = r_rotor + st_["airgap_mm"] / 2 * mm  # the middle of the gap (README, Model)
    phi = out["sector_angle"]
    regions = out["region_elements"]
    assert set(regions) == _expected_regions(raw, phi)
    assert min(regions.values()) > 0, regions
    assert out["owners"] == (1, 1), "every element must lie in exactly one region"
    assert out["min_area"] > 0
    assert out["sliding_radius"] == pytest.approx(r_slide, rel=1e-12)
    # one node list shared by both copies of the sliding circle: divisions + 1 nodes each
    n = out["sliding_divisions"] + 1
    assert out["sliding_nodes"] == {"rotor": n, "stator": n}
    area = out["region_area"]
    barriers = sum(v for k, v in area.items() if k.startswith("barrier_"))
    slots = sum(v for k, v in area.items() if k.startswith("slot_"))
    cases = {
        "rotor part": (out["rotor_area"], 0, r_slide),
        "stator part": (out["stator_area"], r_slide, r_out),
        "rotor steel + barriers + shaft": (
            area["rotor_iron"] + barriers + area["shaft"], 0, r_rotor),
        "rotor air gap": (area["airgap_rotor"], r_rotor, r_slide),
        "stator air gap": (area["airgap_stator"], r_slide, r_bore),
        "stator steel + slots": (area["stator_iron"] + slots, r_bore, r_out),
    }
    size = raw.get("mesh", {}).get("size_mm", 4.0) * mm
    for name, (got, r_in, r_out_) in cases.items():
        want = _annulus_sector(r_in, r_out_, phi)
        tolerance = AREA_TOL + _chord_loss(r_in, r_out_, size)
        assert got == pytest.approx(want, rel=tolerance), (name, got, want, tolerance)
    # every barrier ends a tangential rib below the rotor surface (its ends are clipped
    # by that circle: fluxlab/geometry/rotor.py); mesh nodes lie on the circle, so 1 um
    # is round-off, not mesh error
    r_rib = r_rotor - raw["rotor"]["tangential_rib_mm"] * mm
    for name, reach in out["barrier_reach"].items():
        assert reach == pytest.approx(r_rib, abs=1e-6), (name, "stops short of its rib",
                                                         reach, r_rib)
    # each slot's winding area against its closed form: catches a slot shape that leaks
    # into the tooth tips or the gap, which the sums above cannot see (later regions win)
    body = _slot_body_area(st_)
    if body is not None:
        want, curved = body
        layers = raw["winding"].get("layers", 2)
        for k in range(round(st_["slots"] * phi / (2 * math.pi))):
            got = sum(area[f"slot_{k}_layer_{j}"] for j in range(layers))
            # 0.5 %: the straight parts (common practice, no source); plus the chord loss
            # of the curved parts, which only removes area
            assert want * (1 - 0.005) - CHORD_LOSS * curved <= got <= want * (1 + 0.005), (
                f"slot {k}", got, want)


def check_table(worker: Worker, raw: dict) -> dict:
    """Run one table through the worker and apply the property; returns the outcome."""
    out = worker.run(raw, HANG_LIMIT_S)
    if out["stage"] != "meshed":
        assert out["unexpected"] is None, (
            f"{out['stage']} stage raised {out['error']}, not a FluxlabError:\n"
            f"{out['unexpected']}")
        event(f"{out['stage']}: {out['error']}")
        return out
    check_meshed(raw, out)
    event("meshed")
    return out


FUZZ = settings(
    derandomize=True,  # the same examples on every run: CI is not flaky
    database=None,
    deadline=DEADLINE,
    # no shrinking: a hanging draw would be re-run for every shrink step; the failing
    # table is printed whole and reproduces by itself since generation is derandomised
    phases=(Phase.explicit, Phase.generate),
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


@settings(FUZZ, max_examples=60)
@given(raw=machine_tables())
def test_random_machines_mesh_or_raise_fluxlab_error(worker, raw):
    check_table(worker, raw)


@pytest.mark.slow
@settings(FUZZ, max_examples=400)
@given(raw=machine_tables())
def test_many_random_machines_mesh_or_raise_fluxlab_error(worker, raw):
    check_table(worker, raw)


# ------------------------------------------------------------------------ regressions
# Bugs the fuzzer found, pinned with hand-made tables (run in this process).
PUMP = GEOMETRIES / "demo_pump_6p54s.toml"


def _in_process(raw: dict) -> dict:
    out = evaluate(_coarse(raw))
    assert out["stage"] == "meshed", out
    check_meshed(raw, out)
    return out


@pytest.mark.parametrize("depth_mm", [5.0, 6.5], ids=["reaches-the-gap", "reaches-the-tips"])
def test_round_bottom_of_a_shallow_wide_slot_stays_in_the_slot(depth_mm):
    # A round-bottom parallel slot whose body (depth - tip height) is shorter than its
    # width: the bottom circle used to be added whole, so its near half reached back through
    # the tooth tips (6.5 mm: wrong slot area) or across the sliding circle (5 mm: MeshError).
    with PUMP.open("rb") as f:
        raw = tomllib.load(f)
    raw["stator"].update(slot_bottom="round", slot_depth_mm=depth_mm)
    del raw["stator"]["bottom_fillet_mm"]
    st_ = raw["stator"]
    assert st_["slot_depth_mm"] - st_["tip_height_mm"] < st_["slot_width_mm"]
    out = _in_process(raw)
    # closed form, parallel slot of width w, round bottom: w (x_bottom - w/2 - x_top) +
    # pi w^2 / 8 (elementary geometry); the chord loss of the half circle is bounded above
    w = st_["slot_width_mm"] * 1e-3
    want = w * ((st_["slot_depth_mm"] - st_["tip_height_mm"]) * 1e-3 - w / 2) + math.pi * w**2 / 8
    got = out["region_area"]["slot_0_layer_0"] + out["region_area"]["slot_0_layer_1"]
    assert want * (1 - 0.005) - CHORD_LOSS * math.pi * w**2 / 4 <= got <= want * (1 + 0.005)


def test_half_machine_sector_meshes():
    # Two poles, 24 slots: the modelled sector is half the machine (pi, anti-periodic), so
    # both sector edges lie on the x-axis. The boundary classification took the end edge
    # (negative x) for the start edge and meshing failed ("sector edges do not match").
    raw = copy.deepcopy(DEMO_RAW)
    raw["machine"]["poles"] = 2
    raw["stator"]["slots"] = 24
    raw["winding"]["coil_pitch_slots"] = 10
    out = _in_process(raw)
    assert out["sector_angle"] == pytest.approx(math.pi)


@pytest.mark.parametrize("key,value", [("mesh.size_mm", 0.05), ("stator.airgap_mm", 0.001),
                                       ("stator.outer_diameter_mm", 1e6)])
def test_runaway_mesh_is_refused_before_gmsh(worker, key, value):
    # Valid tables whose mesh would have millions to billions of triangles: gmsh used to
    # run for minutes or without end (its mesher cannot be interrupted); now validation
    # refuses them naming the key (the element estimate against mesh.max_elements, the
    # smallest air gap, the largest stator). Run in the worker so that a regression hits
    # the hard time limit.
    raw = copy.deepcopy(DEMO_RAW)
    section, name = key.split(".")
    raw[section][name] = value
    out = worker.run(raw, HANG_LIMIT_S)
    assert out["stage"] == "spec" and out["error"] == "SpecError", out
    assert f"{key} = " in out["message"]


def _thin_post() -> dict:
    """The demo with a 0.06 mm post: rib elements of 0.02 mm, about 90k triangles."""
    raw = copy.deepcopy(DEMO_RAW)
    raw["rotor"]["min_rib_mm"] = 0.05
    raw["rotor"]["barriers"][2]["post_mm"] = 0.06
    return _coarse(raw)


def _estimate_ratio(raw: dict) -> float:
    from fluxlab.mesh.machine_mesh import build_mesh, estimated_elements
    from fluxlab.spec.machine_file import machine_from_dict

    spec = machine_from_dict(raw, GEOMETRIES)
    machine = build_mesh(spec)
    return sum(estimated_elements(spec, machine.sector_angle).values()) / machine.mesh.t.shape[1]


def test_element_estimate_tracks_the_demo_mesh():
    # The guard above is only useful if its estimate tracks real meshes: within a factor
    # of 3 of gmsh's count (order of magnitude, common practice, no source).
    assert 1 / 3 < _estimate_ratio(_coarse(DEMO_RAW)) < 3


def test_thin_post_is_not_refused():
    # The first estimate (a disc per rib point) put the thin-post demo at 2.4e6 triangles
    # and refused it; gmsh makes about 90k (see the slow test below).
    from fluxlab.machine.winding import machine_symmetry
    from fluxlab.mesh.machine_mesh import MAX_ELEMENTS, estimated_elements
    from fluxlab.spec.machine_file import machine_from_dict

    spec = machine_from_dict(_thin_post(), GEOMETRIES)
    _, sector_angle, _ = machine_symmetry(spec.stator.slots, spec.poles)
    assert sum(estimated_elements(spec, sector_angle).values()) < MAX_ELEMENTS


@pytest.mark.slow
def test_element_estimate_tracks_a_rib_dominated_mesh():
    assert 1 / 3 < _estimate_ratio(_thin_post()) < 3  # as in the demo test above



def _demo_with_barrier(**barrier) -> dict:
    raw = copy.deepcopy(DEMO_RAW)
    raw["rotor"]["barriers"] = [barrier]
    return raw


def _spec_problems(raw: dict) -> list[str]:
    from fluxlab.errors import SpecError
    from fluxlab.spec.machine_file import machine_from_dict

    with pytest.raises(SpecError) as info:
        machine_from_dict(_coarse(raw), GEOMETRIES)
    return info.value.problems


def test_arc_barrier_that_turns_back_before_its_rib_is_rejected():
    # Deep arc barrier, small end angle: the circle through the q-axis point and the end
    # points has its centre inside the ends, so the half ring drawn towards the shaft ends
    # about 9 mm below the rib circle: the barrier stopped short of its rib, yet passed.
    problems = _spec_problems(_demo_with_barrier(depth_mm=28.0, end_angle_deg=12.0,
                                                 width_mm=4.0))
    assert any("rotor.barriers[0].end_angle_deg = 12" in p and "above" in p
               for p in problems), problems
    # a wider end angle for the same depth reaches its rib (checked in check_meshed)
    _in_process(_demo_with_barrier(depth_mm=28.0, end_angle_deg=22.0, width_mm=4.0))


def test_arc_barrier_wider_than_its_arc_is_rejected():
    # A 12.91 mm wide barrier on a centre-line arc of a few millimetres' radius has no inner
    # edge: the shapely check saw a full disc and passed it, gmsh refused the negative disk
    # radius (MeshError after validation).
    problems = _spec_problems(_demo_with_barrier(depth_mm=8.0, end_angle_deg=6.2,
                                                 width_mm=12.91))
    assert any("rotor.barriers[0].width_mm = 12.91" in p and "rotor.min_steel_mm" in p
               for p in problems), problems


def test_slot_fillet_too_small_for_the_mesh_is_rejected():
    # A 0.01 mm fillet among 11 mm elements gave degenerate triangles (MeshError) after the
    # table had passed validation; now validation names the fillet and its limit.
    with PUMP.open("rb") as f:
        raw = tomllib.load(f)
    raw["stator"]["bottom_fillet_mm"] = 0.01
    problems = _spec_problems(raw)
    assert any("stator.bottom_fillet_mm = 0.01" in p and "mesh.size_mm" in p
               for p in problems), problems
    raw["stator"]["bottom_fillet_mm"] = 0.2
    _in_process(raw)
