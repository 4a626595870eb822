"""Physical plausibility before meshing: every length against the machine's size, values
that vanish in SI units, non-finite numbers, and the mesh's element estimate against
``mesh.max_elements``, each refused at validation with a message that names every key
entering the failed limit.

The bad cases are the ones fuzzing found (the tables of tests/test_fuzz_machine.py); the
property test runs 1,000 random tables through the loader and the element estimate only.
"""

from __future__ import annotations

import copy
import dataclasses
import math
import re
import time

import pytest
from hypothesis import HealthCheck, Phase, assume, event, given, settings
from hypothesis import strategies as st
from paths import GEOMETRIES, demo_table
from test_fuzz_machine import Worker, check_meshed, mutated_tables, plausible_tables

from fluxlab.errors import MeshError, SpecError
from fluxlab.machine.winding import machine_symmetry
from fluxlab.mesh.machine_mesh import (
    MAX_ELEMENTS,
    build_mesh,
    element_limit,
    estimated_elements,
    mesh_size_problems,
)
from fluxlab.spec.machine_file import machine_from_dict


def _problems(raw: dict) -> list[str]:
    with pytest.raises(SpecError) as info:
        machine_from_dict(raw, GEOMETRIES)
    return info.value.problems


def _set(raw: dict, path: str, value) -> dict:
    """``raw`` with the key at ``section.key`` or ``rotor.barriers.<i>.key`` set."""
    node = raw
    *parents, last = path.split(".")
    for part in parents:
        node = node[int(part)] if isinstance(node, list) else node[part]
    node[last] = value
    return raw


def _one_naming(problems: list[str], *texts: str) -> str:
    """The one problem that holds every text; fails when there is none."""
    hits = [p for p in problems if all(t in p for t in texts)]
    assert hits, (texts, problems)
    return hits[0]


# ------------------------------------------------------------------------ the bad cases
# (path, value, texts the message must hold, texts no message may hold)
BAD_CASES = [
    # overflowed in the mesher after passing validation
    ("stator.outer_diameter_mm", 1e308,
     ["stator.outer_diameter_mm = 1e+308", "at most 20000"], []),
    # 5e-324 mm is 0 m: a post became "no post", the steel floor vanished
    ("rotor.barriers.1.post_mm", 5e-324,
     ["rotor.barriers[1].post_mm = 5e-324", "vanishes", "0 or at least 0.001 mm"], []),
    ("rotor.min_steel_mm", 5e-324, ["rotor.min_steel_mm = 5e-324", "vanishes"], []),
    ("rotor.barriers.0.end_angle_deg", 5e-324,
     ["rotor.barriers[0].end_angle_deg = 5e-324", "vanishes"], []),
    ("stator.tip_height_mm", 1e-300, ["stator.tip_height_mm = 1e-300", "at least 0.001 mm"], []),
    # a 9 um gap meshed into 514k nodes (over 60 s)
    ("stator.airgap_mm", 0.009, ["stator.airgap_mm = 0.009", "at least 0.05 mm"], []),
    # OverflowError in the barrier placement
    ("rotor.barriers.1.depth_mm", 1e308,
     ["rotor.barriers[1].depth_mm = 1e+308", "stator.bore_diameter_mm = 136"], []),
    # NaN was "must be float, got float"
    ("stator.airgap_mm", math.nan, ["stator.airgap_mm = nan: must be a finite number, got nan"],
     ["must be float"]),
    ("stator.bore_diameter_mm", -math.inf, ["must be a finite number, got -inf"], []),
    ("stator.bore_diameter_mm", 10**400, ["must be a finite number", "401 digits"], []),
    # a tooth wider than the slot pitch blamed stator.slot_opening_mm
    ("stator.tooth_width_mm", 12.5,
     ["stator.tooth_width_mm = 12.5", "leaves no slot body", "stator.slots = 36",
      "stator.bore_diameter_mm = 136", "stator.tip_height_mm = 1", "12.03 mm"], []),
    ("stator.tooth_width_mm", 11.9,
     ["stator.slot_opening_mm = 2.8", "stator.tooth_width_mm = 11.9", "stator.slots = 36",
      "stator.bore_diameter_mm = 136", "stator.tip_height_mm = 1"], []),
    ("stator.tooth_width_mm", 1.0,  # thin teeth: the tooth width, not the opening
     ["stator.tooth_width_mm = 1", "rotor.min_steel_mm = 2", "stator.slots = 36"],
     ["slot_opening_mm"]),
    # an air gap of 1e6 mm blamed rotor.shaft_diameter_mm
    ("stator.airgap_mm", 1e6,
     ["stator.airgap_mm = 1000000.0", "stator.outer_diameter_mm = 210"], ["shaft_diameter_mm"]),
    ("stator.airgap_mm", 20.0,
     ["stator.airgap_mm = 20.0", "0.1 x stator.bore_diameter_mm = 136", "13.6 mm"],
     ["shaft_diameter_mm"]),
    # a width of 1e12 blamed depth_mm
    ("rotor.barriers.1.width_mm", 1e12,
     ["rotor.barriers[1].width_mm = 1000000000000.0", "stator.bore_diameter_mm = 136"],
     ["depth_mm"]),
    ("rotor.barriers.1.width_mm", 100.0,  # inside the bore: the q-axis limit, every key
     ["rotor.barriers[1].depth_mm = 17", "rotor.barriers[1].width_mm / 2",
      "rotor.tangential_rib_mm", "100 / 2 + 0.8 = 50.8 mm"], []),
    ("machine.stack_length_mm", 4000.0,
     ["machine.stack_length_mm = 4000.0", "stator.outer_diameter_mm = 210", "2100"], []),
    ("mesh.max_elements", 10, ["mesh.max_elements = 10: must be at least 1000"], []),
    ("winding.turns_per_coil", 10**30, ["winding.turns_per_coil", "at most 10000"], []),
]


@pytest.mark.parametrize("path,value,texts,absent", BAD_CASES,
                         ids=[f"{c[0]}={c[1]!r:.12}" for c in BAD_CASES])
def test_bad_value_names_every_key_of_its_limit(path, value, texts, absent):
    problems = _problems(_set(demo_table(), path, value))
    _one_naming(problems, *texts)
    for text in absent:
        assert not any(text in p for p in problems), (text, problems)


def test_odd_pole_number_is_reported_once():
    problems = _problems(_set(demo_table(), "machine.poles", 3))
    assert sum("machine.poles = 3" in p for p in problems) == 1, problems


# ------------------------------------------------------------------------ element limit
#: Every key that enters the element estimate (fluxlab.mesh.machine_mesh.estimated_elements)
#: with the demo's value, as the message must show it.
ESTIMATE_KEYS = ["mesh.size_mm = 3", "stator.outer_diameter_mm = 5000", "stator.airgap_mm = 0.5",
                 "mesh.airgap_layers = 2", "stator.bore_diameter_mm = 136",
                 "rotor.tangential_rib_mm = 0.8",
                 "rotor.barriers[].post_mm = [0] 0, [1] 1, [2] 1.5",
                 "mesh.rib_size_mm = unset", "rotor.barriers[].width_mm = [0] 3, [1] 4.5, [2] 6",
                 "machine.poles = 4", "stator.slots = 36", f"mesh.max_elements = {MAX_ELEMENTS}"]


def test_large_machine_is_refused_at_validation_naming_every_estimate_key():
    # a 5 m stator at the demo's 3 mm elements meshed for minutes; now `fluxlab check`
    # refuses it
    raw = _set(demo_table(), "stator.outer_diameter_mm", 5000.0)
    message = _one_naming(_problems(raw), *ESTIMATE_KEYS, "triangles")
    # the largest share first: the bulk, from the size over the outer diameter
    assert message.index("bulk") < message.index("air gap") < message.index("ribs")


def test_max_elements_key_moves_the_limit():
    raw = _set(demo_table(), "stator.outer_diameter_mm", 5000.0)
    raw["mesh"]["max_elements"] = 2_000_000
    spec = machine_from_dict(raw, GEOMETRIES)
    assert element_limit(spec) == 2_000_000
    raw["mesh"]["max_elements"] = 1_000_000  # the estimate is about 1.3e6
    _one_naming(_problems(raw), "mesh.max_elements = 1000000", "triangles")


def test_demo_estimate_is_far_under_the_default_limit():
    spec = machine_from_dict(demo_table(), GEOMETRIES)
    assert element_limit(spec) == MAX_ELEMENTS
    assert mesh_size_problems(spec) == []
    _, angle, _ = machine_symmetry(spec.stator.slots, spec.poles)
    assert sum(estimated_elements(spec, angle).values()) < MAX_ELEMENTS / 5


def test_mesher_refuses_a_spec_changed_in_code():
    # a spec built or changed in code skips validation: build_mesh checks the estimate
    # again before gmsh, whose mesher cannot be interrupted
    spec = machine_from_dict(demo_table(), GEOMETRIES)
    spec = dataclasses.replace(spec, mesh=dataclasses.replace(spec.mesh, size=5e-5))
    with pytest.raises(MeshError, match="mesh.size_mm = 0.05"):
        build_mesh(spec)


# ------------------------------------------------------------------------ property test
#: Values of a numeric key a table built in code may hold: non-finite, beyond the float
#: range, subnormal, vanishing in SI units, far too large or small.
EXTREME = st.sampled_from([math.nan, math.inf, -math.inf, 1e308, -1e308, 5e-324, 1e-310,
                           1e-300, -0.0, 1e-4, 1e12, 10**30, 10**400, 2**63])


def _numeric_paths(raw: dict) -> list[tuple[dict, str]]:
    out = []
    for section in raw.values():
        if not isinstance(section, dict):
            continue
        for key, value in section.items():
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                out.append((section, key))
            elif isinstance(value, list):
                out += [(b, k) for b in value if isinstance(b, dict) for k in b]
    return out


@st.composite
def mesh_sections(draw) -> dict:
    """A mesh section from coarse to far too fine, sometimes with its own element limit."""
    mesh = {"size_mm": draw(st.sampled_from([0.05, 0.3, 1.0, 3.0, 8.0, 20.0, 50.0])),
            "airgap_layers": draw(st.integers(1, 8)),
            "steps_per_slot": draw(st.sampled_from([4, 12, 24])),
            "element_order": 1}
    if draw(st.booleans()):
        mesh["rib_size_mm"] = draw(st.sampled_from([0.01, 0.1, 0.5, 2.0]))
    if draw(st.booleans()):
        mesh["max_elements"] = draw(st.sampled_from([1000, 50_000, MAX_ELEMENTS, 20_000_000]))
    return mesh


@st.composite
def machine_tables(draw) -> dict:
    """The fuzz harness's tables (plausible or mutated) with a drawn mesh section, and
    sometimes one numeric value replaced by an extreme one."""
    raw = copy.deepcopy(draw(st.one_of(plausible_tables(), mutated_tables())))
    raw["mesh"] = draw(mesh_sections())
    if draw(st.integers(0, 3)) == 0:
        paths = _numeric_paths(raw)
        if paths:
            container, key = draw(st.sampled_from(paths))
            container[key] = draw(EXTREME)
    return raw


PROPERTY = settings(
    max_examples=1000,
    deadline=2000,  # ms per example: validation takes milliseconds, never meshing
    derandomize=True,
    database=None,
    phases=(Phase.explicit, Phase.generate),
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
#: A message opens with the key (or section) it is about: ``stator.airgap_mm = ...``,
#: ``rotor.barriers[1]: ...``, ``stator: give exactly one ...``.
KEY_FIRST = re.compile(r"^[A-Za-z_][\w]*(\[\d+\])?(\.[A-Za-z_]\w*(\[\d+\])?)*( = |: |\b)")


@PROPERTY
@given(raw=machine_tables())
def test_random_tables_give_a_spec_within_the_limit_or_one_spec_error(raw):
    try:
        spec = machine_from_dict(raw, GEOMETRIES)
    except SpecError as err:  # any other exception fails the test
        assert err.problems and all(isinstance(p, str) and KEY_FIRST.match(p)
                                    for p in err.problems), err.problems
        assert len(set(err.problems)) == len(err.problems), err.problems
        event("refused")
        return
    event("accepted")
    _, angle, _ = machine_symmetry(spec.stator.slots, spec.poles)
    terms = estimated_elements(spec, angle)
    assert all(math.isfinite(v) and v >= 0 for v in terms.values()), terms
    assert sum(terms.values()) <= element_limit(spec)
    lengths = [spec.stator.outer_diameter, spec.stator.bore_diameter, spec.stator.airgap,
               spec.rotor.shaft_diameter, spec.rotor.tangential_rib, spec.rotor.min_steel,
               spec.mesh.size, *(b.width for b in spec.rotor.barriers)]
    assert all(1e-6 <= x < 20.0 for x in lengths), lengths  # 1 um floor, 20 m stator


# ------------------------------------------------------------------------ meshing a sample
#: Time bound per mesh, s per 100k estimated triangles: measured 2-6.3 s per 100k made
#: triangles on the project's 2-core machine, 9 s for a mesh graded from 50 mm to a
#: 0.035 mm gap element (222k triangles in 20 s while other jobs ran); 20 s leaves a
#: margin of about 2 (common practice, no source).
SECONDS_PER_100K = 20.0
#: Added to the bound, s: worker start-up and imports (measured about 3 s) and load.
SECONDS_FLOOR = 30.0


@pytest.fixture(scope="module")
def worker():
    w = Worker()
    yield w
    w.close()


@pytest.mark.slow
@settings(PROPERTY, max_examples=10, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                 HealthCheck.filter_too_much])
@given(raw=machine_tables())
def test_accepted_tables_mesh_within_the_element_limit(worker, raw):
    try:
        spec = machine_from_dict(raw, GEOMETRIES)
    except SpecError:
        assume(False)
    _, angle, _ = machine_symmetry(spec.stator.slots, spec.poles)
    estimate = sum(estimated_elements(spec, angle).values())
    assume(estimate <= MAX_ELEMENTS)  # a file's larger limit is the user's choice of time
    bound = SECONDS_FLOOR + SECONDS_PER_100K * estimate / 1e5
    start = time.perf_counter()
    out = worker.run(raw, bound)  # kills the worker and fails past the bound
    seconds = time.perf_counter() - start
    assert out["stage"] == "meshed", out
    assert out["elements"] <= element_limit(spec), (out["elements"], estimate)
    event(f"{out['elements'] // 50_000 * 50}k-{out['elements'] // 50_000 * 50 + 50}k "
          f"triangles, {seconds:.0f} s")
    check_meshed(raw, out)
