"""Machine file loading and validation: every bad input names its key, value and limit."""

import copy
import math

import numpy as np
import pytest
from paths import GEOMETRIES

from fluxlab.errors import SpecError
from fluxlab.spec.machine_file import load_machine, machine_from_dict, replace_path


def _broken(raw: dict, path: str, value) -> dict:
    """A copy of ``raw`` with the key at a dotted path (``rotor.barriers.1.width_mm``) set."""
    out = copy.deepcopy(raw)
    node = out
    *parents, last = path.split(".")
    for part in parents:
        node = node[int(part)] if isinstance(node, list) else node[part]
    if value is _DELETE:
        del node[last]
    else:
        node[last] = value
    return out


_DELETE = object()


def _problems(raw: dict) -> list[str]:
    with pytest.raises(SpecError) as info:
        machine_from_dict(raw, GEOMETRIES)
    return info.value.problems


@pytest.mark.parametrize("name", sorted(p.name for p in GEOMETRIES.glob("*.toml")
                                        if not p.name.startswith(("sweep", "optimize"))))
def test_bundled_machines_load(name):
    spec = load_machine(GEOMETRIES / name)
    assert spec.poles % 2 == 0 and spec.stator.slots > 0


def test_units_are_converted_to_si(demo_raw):
    spec = machine_from_dict(demo_raw, GEOMETRIES)
    assert spec.stator.bore_diameter == pytest.approx(demo_raw["stator"]["bore_diameter_mm"] / 1e3)
    b = demo_raw["rotor"]["barriers"][1]
    assert spec.rotor.barriers[1].end_angle == pytest.approx(math.radians(b["end_angle_deg"]))
    assert spec.stack_length == pytest.approx(demo_raw["machine"]["stack_length_mm"] / 1e3)


def test_spec_is_immutable(demo_raw):
    spec = machine_from_dict(demo_raw, GEOMETRIES)
    with pytest.raises(AttributeError):
        spec.poles = 6


def test_replace_path_returns_a_revalidated_copy(demo_raw):
    spec = machine_from_dict(demo_raw, GEOMETRIES)
    other = replace_path(spec, "rotor.barriers[1].end_angle_deg", 22.0)
    assert other.rotor.barriers[1].end_angle == pytest.approx(math.radians(22.0))
    stated = demo_raw["rotor"]["barriers"][1]["end_angle_deg"]
    assert spec.rotor.barriers[1].end_angle == pytest.approx(math.radians(stated))
    with pytest.raises(SpecError, match=r"rotor.barriers\[1\].width_mm"):
        replace_path(spec, "rotor.barriers[1].width_mm", -1.0)
    with pytest.raises(SpecError, match="has no rotor.nothing"):
        replace_path(spec, "rotor.nothing.width_mm", 1.0)


# One case per kind of bad input: (path, value, text the message must contain).
BAD_CASES = [
    ("stator.bore_diameter_mm", -136.0, "stator.bore_diameter_mm = -136.0: must be greater than 0"),
    ("machine.stack_length_mm", 0.0, "machine.stack_length_mm = 0.0: must be greater than 0"),
    ("rotor.barriers.0.width_mm", 0.0, "rotor.barriers[0].width_mm = 0.0"),
    ("stator.slot_depth_mm", 36.0, "stator.slot_depth_mm = 36.0"),  # deeper than the yoke allows
    ("rotor.barriers.2.depth_mm", 44.0, "steel to the shaft"),  # barrier crosses the shaft
    ("rotor.barriers.0.depth_mm", 1.5, "crosses the air gap"),
    ("rotor.barriers.1.depth_mm", 10.0, "steel to rotor.barriers[0]"),  # barriers overlap
    ("rotor.barriers.2.end_angle_deg", 44.0, "d-axis"),  # reaches the neighbouring pole
    ("rotor.tangential_rib_mm", 0.2,
     "rotor.tangential_rib_mm = 0.2: thinner than rotor.min_rib_mm"),
    ("rotor.barriers.1.post_mm", 0.2, "rotor.barriers[1].post_mm = 0.2: thinner than"),
    ("rotor.colour", "red", "rotor.colour: unknown key"),
    ("stator.slots", "36", "stator.slots = '36': must be int, got str"),
    ("machine.poles", 4.0, "machine.poles = 4.0: must be int, got float"),
    ("machine.poles", 5, "machine.poles = 5: must be even"),
    ("stator.slots", 35, "stator.slots"),  # 35 slots and 4 poles: no three-phase winding
    ("winding.coil_pitch_slots", 40, "winding.coil_pitch_slots"),
    ("stator.slot_bottom", "square", "stator.slot_bottom = 'square': must be one of round, flat"),
    ("stator.tooth_width_mm", _DELETE, "exactly one of tooth_width_mm and slot_width_mm"),
    ("stator.slot_opening_mm", 9.0, "stator.slot_opening_mm = 9"),
    ("materials.rotor", "unobtainium", "materials.rotor"),
    ("operating.current_peak_A", _DELETE, "operating.current_peak_A: required key is missing"),
    # None only comes from dicts built in code (TOML has no null): it counts as absent
    ("operating.current_peak_A", None, "operating.current_peak_A: required key is missing"),
    ("stator.slots", np.float64(36.0), "stator.slots = 36.0: must be int, got float"),
    ("rotor.barriers.0.end_angle_deg", 95.0, "must be at most 90"),
]


@pytest.mark.parametrize("path,value,text", BAD_CASES,
                         ids=[c[0] + "=" + str(c[1]) for c in BAD_CASES])
def test_bad_input_names_key_value_and_limit(demo_raw, path, value, text):
    problems = _problems(_broken(demo_raw, path, value))
    assert any(text in p for p in problems), problems


def test_numpy_numbers_are_taken_as_python_numbers(demo_raw):
    """Sweep plans built with numpy give numpy scalars: int and float keys accept them."""
    raw = _broken(demo_raw, "stator.slots", np.int64(36))
    raw = _broken(raw, "stator.airgap_mm", np.float64(demo_raw["stator"]["airgap_mm"]))
    spec = machine_from_dict(raw, GEOMETRIES)
    assert type(spec.stator.slots) is int and spec.stator.slots == 36
    assert spec.stator.airgap == pytest.approx(demo_raw["stator"]["airgap_mm"] * 1e-3)


def test_all_problems_are_reported_together(demo_raw):
    raw = _broken(demo_raw, "stator.airgap_mm", -0.5)
    raw = _broken(raw, "winding.turns_per_coil", 0)
    raw = _broken(raw, "mesh.colour", "blue")
    problems = _problems(raw)
    assert len(problems) >= 3
    joined = "\n".join(problems)
    for key in ("stator.airgap_mm", "winding.turns_per_coil", "mesh.colour"):
        assert key in joined


def test_unknown_section_and_bad_file(tmp_path, demo_raw):
    assert any("rotr: unknown section" in p for p in _problems({**demo_raw, "rotr": {}}))
    bad = tmp_path / "bad.toml"
    bad.write_text("[machine\npoles = 4")
    with pytest.raises(SpecError, match="not valid TOML"):
        load_machine(bad)
    with pytest.raises(SpecError, match="no such machine file"):
        load_machine(tmp_path / "missing.toml")


def test_a_key_given_twice_is_named(tmp_path):
    # TOML forbids a key twice in one table (TOML 1.0 specification, "Keys"); the parser
    # reports only the line, the message also names the key.
    path = tmp_path / "twice.toml"
    path.write_text('[machine]\npoles = 4\n[stator]\nairgap_mm = 0.5\nairgap_mm = 0.6\n')
    with pytest.raises(SpecError, match=r"key airgap_mm given twice"):
        load_machine(path)
