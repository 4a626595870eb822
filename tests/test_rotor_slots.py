"""Barrier ends placed at the rotor slot pitch: ``rotor.rotor_slots_per_pole_pair`` (n_r).

The rule (published, cited from memory: A. Vagati et al., "Design of low-torque-ripple
synchronous reluctance motors", IEEE Trans. Ind. Appl., 1998): the barrier ends are
equivalent rotor slots, equally spaced at alpha_r = 360 / (p n_r) mechanical degrees, the
d-axis midway between the two ends that flank it. The expected angles are written here in
closed form, from the d-axis, independently of fluxlab.geometry.barrier_ends.
"""

from __future__ import annotations

import math

import pytest
from paths import DEMO, demo_table

from fluxlab.cli import main
from fluxlab.errors import SpecError
from fluxlab.geometry.barrier_ends import slot_pitch_end_angles, slot_pitch_problems
from fluxlab.spec.machine_file import machine_from_dict, replace_path

KEY = "rotor.rotor_slots_per_pole_pair"
#: coil pitch in slots of the demo's 36 slots that suits each pole count (short pitch)
COIL_PITCH = {2: 16, 4: 8, 6: 5}


def expected_deg(poles: int, n_r: int, count: int) -> list[float]:
    """End angles, deg from the q-axis, barrier 0 (outermost) first: the ends sit at
    (k + 1/2) alpha_r from the d-axis, the innermost barrier at k = 0; the q-axis lies a
    half pole pitch, 90 / p deg, from the d-axis."""
    p = poles // 2
    alpha = 360.0 / (p * n_r)
    from_d = [(k + 0.5) * alpha for k in range(count)]  # innermost barrier first
    return [90.0 / p - a for a in reversed(from_d)]


def table(poles: int, n_r, keep: list[int], drop_ends: bool = True) -> dict:
    """The demo machine with ``poles``, the demo barriers ``keep`` and n_r."""
    raw = demo_table()
    raw["machine"]["poles"] = poles
    raw["winding"]["coil_pitch_slots"] = COIL_PITCH[poles]
    raw["rotor"]["barriers"] = [raw["rotor"]["barriers"][i] for i in keep]
    if drop_ends:
        for b in raw["rotor"]["barriers"]:
            del b["end_angle_deg"]
    raw["rotor"]["rotor_slots_per_pole_pair"] = n_r
    return raw


def problems_of(raw: dict) -> list[str]:
    with pytest.raises(SpecError) as info:
        machine_from_dict(raw)
    return info.value.problems


# (poles, n_r, demo barriers kept): each loads (checked by the geometry)
CASES = [
    (4, 5, [2]),
    (4, 20, [2]),
    (4, 10, [1, 2]),
    (4, 22, [1, 2]),
    (4, 12, [0, 1, 2]),
    (4, 14, [0, 1, 2]),
    (4, 22, [0, 1, 2]),
    (6, 12, [1, 2]),
    (6, 14, [0, 1, 2]),
    (6, 9, [0, 2]),
    (2, 3, [2]),
]


@pytest.mark.parametrize("poles,n_r,keep", CASES)
def test_end_angles_follow_the_rotor_slot_pitch(poles, n_r, keep):
    spec = machine_from_dict(table(poles, n_r, keep))
    got = [math.degrees(b.end_angle) for b in spec.rotor.barriers]
    assert got == pytest.approx(expected_deg(poles, n_r, len(keep)), abs=1e-9)
    assert spec.rotor.rotor_slots_per_pole_pair == n_r
    # the raw table stays as written: n_r, no end angle
    assert all("end_angle_deg" not in b for b in spec.raw["rotor"]["barriers"])


@pytest.mark.parametrize("poles", [2, 4, 6, 8, 12])
@pytest.mark.parametrize("n_r", [7, 11, 14, 19, 30])
def test_ends_are_one_pitch_apart_across_the_d_axis(poles, n_r):
    count = (n_r + 1) // 4  # as many as fit: n_r >= 4 count - 1
    p = poles // 2
    alpha, half_pole = 360.0 / (p * n_r), 90.0 / p
    got = [math.degrees(a) for a in slot_pitch_end_angles(p, n_r, count)]
    assert got == pytest.approx(expected_deg(poles, n_r, count), abs=1e-9)
    # neighbours one slot pitch apart; the innermost end and its mirror image in the
    # next pole (about the d-axis) also one pitch apart: the d-axis lies midway
    assert [b - a for a, b in zip(got, got[1:])] == pytest.approx([alpha] * (count - 1))
    assert 2 * (half_pole - got[-1]) == pytest.approx(alpha)
    assert 0 < got[0] and slot_pitch_problems(poles, n_r, count) == []


@pytest.mark.parametrize("poles", [2, 4, 10])
@pytest.mark.parametrize("count", [1, 2, 3, 5])
def test_least_rotor_slots_is_the_edge_of_feasibility(poles, count):
    # the outermost end must stay short of the q-axis: (count - 1/2) x 360 / (p n_r)
    # < 90 / p, so n_r = 4 count - 1 is the least that fits
    least = 4 * count - 1
    assert slot_pitch_problems(poles, least, count) == []
    (message,) = slot_pitch_problems(poles, least - 1, count)
    assert message.startswith(f"{KEY} = {least - 1}: too few rotor slots for {count}")
    assert f"need n_r at least {least}" in message


def test_too_many_barriers_for_n_r_is_refused_naming_the_key():
    (message,) = problems_of(table(4, 10, [0, 1, 2]))
    assert message.startswith(f"{KEY} = 10: too few rotor slots for 3 barriers")
    assert "machine.poles = 4" in message and "at least 11" in message


def test_infeasible_barrier_from_n_r_names_the_key_too():
    # n_r = 11 fits three ends, but the outer one at 4.09 deg is too near the q-axis for
    # the demo's barrier 0: the geometry check refuses it and names n_r
    problems = problems_of(table(4, 11, [0, 1, 2]))
    assert any(m.startswith("rotor.barriers[0].end_angle_deg = 4.091: too small")
               and f"set by {KEY} = 11" in m for m in problems), problems


def test_mixing_n_r_with_end_angles_is_refused_naming_both_keys():
    raw = table(4, 14, [0, 1, 2])
    raw["rotor"]["barriers"][1]["end_angle_deg"] = 25.03
    (message,) = problems_of(raw)
    assert message.startswith(f"{KEY} = 14 with rotor.barriers[1].end_angle_deg = 25.03: "
                              "give either")
    # every end angle given as well: still refused, all named
    message = problems_of(table(4, 14, [0, 1, 2], drop_ends=False))[0]
    assert all(f"rotor.barriers[{i}].end_angle_deg" in message for i in range(3))


def test_end_angle_missing_without_n_r_points_to_the_key():
    raw = demo_table()
    del raw["rotor"]["barriers"][2]["end_angle_deg"]
    assert problems_of(raw) == [
        f"rotor.barriers[2].end_angle_deg: required key is missing (or give {KEY} instead "
        "of every one)"
    ]


@pytest.mark.parametrize("value,text", [
    (0, "must be at least 1"),
    (-3, "must be at least 1"),
    (14.5, "must be int, got float"),
    (481, "must be at most 480"),
])
def test_bad_n_r_is_refused_with_key_and_value(value, text):
    assert problems_of(table(4, value, [0, 1, 2])) == [f"{KEY} = {value!r}: {text}"]


def test_round_rotor_with_n_r_is_refused():
    raw = table(4, 14, [])
    del raw["rotor"]["barriers"]
    (message,) = problems_of(raw)
    assert message.startswith(f"{KEY} = 14: a round rotor")


def test_without_n_r_the_file_end_angles_stay_and_n_r_is_none():
    raw = demo_table()
    spec = machine_from_dict(raw)
    assert spec.rotor.rotor_slots_per_pole_pair is None
    assert math.degrees(spec.rotor.barriers[1].end_angle) == pytest.approx(25.03)


def test_replace_path_changes_n_r_and_refuses_an_added_end_angle():
    spec = machine_from_dict(table(4, 14, [0, 1, 2]))
    other = replace_path(spec, "rotor.rotor_slots_per_pole_pair", 16)
    assert [math.degrees(b.end_angle) for b in other.rotor.barriers] == pytest.approx(
        expected_deg(4, 16, 3))
    with pytest.raises(SpecError, match=r"rotor_slots_per_pole_pair = 14 with "
                                        r"rotor\.barriers\[0\]\.end_angle_deg"):
        replace_path(spec, "rotor.barriers[0].end_angle_deg", 12.0)


def _demo_text_with_n_r(n_r: int) -> str:
    lines = [line for line in DEMO.read_text().splitlines()
             if not line.startswith("end_angle_deg")]
    at = lines.index("[rotor]") + 1
    return "\n".join(lines[:at] + [f"rotor_slots_per_pole_pair = {n_r}"] + lines[at:]) + "\n"


def test_check_prints_the_ends_and_the_slot_difference(tmp_path, capsys):
    path = tmp_path / "nr14.toml"
    path.write_text(_demo_text_with_n_r(14))
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    ends = ", ".join(f"{a:.2f}" for a in expected_deg(4, 14, 3))
    assert f"end_angle_deg = {ends} (rotor.barriers[0] first" in out
    assert ("rotor slots per pole pair n_r = 14, stator slots per pole pair Q/p = 18, "
            "difference Q/p - n_r = 4\n") in out
    # the openings are centred on the same angles
    assert " / 25.71 / " in out and " / 38.57 / " in out


def test_check_without_n_r_prints_no_slot_line(capsys):
    assert main(["check", str(DEMO)]) == 0
    assert "rotor slots per pole pair" not in capsys.readouterr().out
