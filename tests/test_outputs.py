"""Output folders: the manifest, refusing to mix machines, --overwrite, stale files, compare's
consistency check and one sweep at a time per folder."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from fluxlab.cli import main
from fluxlab.cli.compare import check_folder_consistent
from fluxlab.report.manifest import MANIFEST_NAME, OutputFolderError, machine_hash
from fluxlab.spec.machine_file import load_machine
from fluxlab.sweep import STORE_NAME, ResultStore

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "geometries" / "demo_fan_drive.toml"


def _coarse(folder: Path, name: str = "coarse.toml", title: str | None = None) -> Path:
    text = DEMO.read_text().replace("size_mm = 3.0", "size_mm = 7.0")
    if title is not None:
        text = text.replace('name = "FD-75 fan drive (demo)"', f'name = "{title}"')
    path = folder / name
    path.write_text(text)
    return path


def _manifest(folder: Path) -> dict:
    return json.loads((folder / MANIFEST_NAME).read_text())


@pytest.fixture(scope="module")
def meshed(tmp_path_factory):
    """A mesh output folder of the coarse demo machine."""
    tmp = tmp_path_factory.mktemp("outputs")
    machine = _coarse(tmp)
    out = tmp / "out"
    assert main(["mesh", str(machine), "--out", str(out)]) == 0
    return tmp, machine, out


def test_manifest_lists_what_was_written(meshed):
    _, machine, out = meshed
    m = _manifest(out)
    spec = load_machine(machine)
    assert m["command"] == "mesh" and m["machine"] == spec.name
    assert m["identity"] == machine_hash(spec.raw, spec.base_dir)
    assert m["files"] == sorted(["mesh.vtu", "regions.json", "mesh.png", "mesh.svg"])
    for name in m["files"]:
        assert (out / name).is_file()


def test_machine_hash_covers_bh_files(tmp_path):
    curve = tmp_path / "curve.csv"
    raw = {"materials": {"rotor": {"bh_csv": "curve.csv"}}}
    curve.write_text("H_A_per_m,B_T\n0,0\n100,1\n")
    first = machine_hash(raw, tmp_path)
    curve.write_text("H_A_per_m,B_T\n0,0\n100,1.1\n")
    assert machine_hash(raw, tmp_path) != first


def test_another_machine_is_refused_then_overwritten(meshed, tmp_path, capsys):
    _, _, out = meshed
    folder = tmp_path / "out"
    folder.mkdir()
    for name in _manifest(out)["files"] + [MANIFEST_NAME]:
        (folder / name).write_bytes((out / name).read_bytes())
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    other = _coarse(tmp_path, "other.toml", title="another machine")
    assert main(["mesh", str(other), "--out", str(folder)]) == 1
    err = capsys.readouterr().err
    assert f"--out {folder}" in err and "--overwrite" in err and "another machine" in err
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before  # nothing lost
    assert main(["mesh", str(other), "--out", str(folder), "--overwrite"]) == 0
    assert _manifest(folder)["machine"] == "another machine"


def test_stale_files_of_the_earlier_run_are_removed(meshed, tmp_path):
    _, machine, out = meshed
    folder = tmp_path / "out"
    (folder / "sub").mkdir(parents=True)
    (folder / "sub" / "old_table.csv").write_text("stale")
    (folder / "old.png").write_text("stale")
    (folder / "mine.txt").write_text("not fluxlab's")
    old = dict(_manifest(out), files=["old.png", "sub/old_table.csv", "../outside.txt"])
    (tmp_path / "outside.txt").write_text("never touched")
    (folder / MANIFEST_NAME).write_text(json.dumps(old))
    assert main(["mesh", str(machine), "--out", str(folder)]) == 0
    assert not (folder / "old.png").exists() and not (folder / "sub").exists()
    assert (folder / "mine.txt").read_text() == "not fluxlab's"
    assert (tmp_path / "outside.txt").read_text() == "never touched"
    assert "old.png" not in _manifest(folder)["files"]


def test_compare_accepts_a_consistent_folder_and_refuses_mixed_ones(tmp_path):
    folder = tmp_path / "eval"
    folder.mkdir()
    (folder / "summary.json").write_text("{}")
    (folder / "torque_vs_position.csv").write_text("position_deg,torque_Nm\n0,1\n")
    manifest = {"command": "evaluate", "identity": "a" * 64,
                "files": ["summary.json", "torque_vs_position.csv"]}
    (folder / MANIFEST_NAME).write_text(json.dumps(manifest))
    check_folder_consistent(folder)
    (folder / "torque_vs_current_angle.csv").write_text("current_angle_deg,torque_Nm\n0,0\n")
    with pytest.raises(OutputFolderError, match="torque_vs_current_angle.csv: not listed"):
        check_folder_consistent(folder)
    (folder / "torque_vs_current_angle.csv").unlink()
    (folder / "envelope").mkdir()
    (folder / "envelope" / MANIFEST_NAME).write_text(json.dumps(
        {"command": "envelope", "identity": "b" * 64, "files": []}))
    with pytest.raises(OutputFolderError, match="different machines"):
        check_folder_consistent(folder)


_SWEEP_SCRIPT = """
import sys
from fluxlab.errors import FluxlabError
from fluxlab.sweep import run_sweep
try:
    run_sweep(sys.argv[1], sys.argv[2], workers=1, evaluator="fake_evaluator:fake_evaluate")
except FluxlabError as err:
    print(err, file=sys.stderr)
    sys.exit(3)
"""


def test_two_sweeps_into_one_folder_never_evaluate_twice(tmp_path):
    sweep = tmp_path / "sweep.toml"
    sweep.write_text(f'base = "{DEMO}"\nstudies = "point"\n[[parameters]]\n'
                     'path = "rotor.barriers[0].width_mm"\nlow = 2.5\nhigh = 3.5\nsteps = 4\n')
    out = tmp_path / "out"
    env = dict(os.environ, FLUXLAB_FAKE_EVAL_DELAY_S="0.7",
               PYTHONPATH=os.pathsep.join([str(ROOT / "tests"),
                                           os.environ.get("PYTHONPATH", "")]))
    procs = [subprocess.Popen([sys.executable, "-c", _SWEEP_SCRIPT, str(sweep), str(out)],
                              env=env, cwd=ROOT, stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True) for _ in range(2)]
    results = [(p.wait(timeout=120), p.stderr.read()) for p in procs]
    codes = sorted(code for code, _ in results)
    assert codes == [0, 3], results
    refused = next(err for code, err in results if code == 3)
    assert "another sweep is running" in refused and str(out) in refused
    with ResultStore(out / STORE_NAME) as store:
        rows = store.results()
    assert len(rows) == 4
    assert all(r.status == "done" and r.attempts == 1 for r in rows)
    # the lock went with the process: a later sweep runs, and evaluates nothing again
    rerun = subprocess.run([sys.executable, "-c", _SWEEP_SCRIPT, str(sweep), str(out)],
                           env=env, cwd=ROOT, capture_output=True, text=True, timeout=120)
    assert rerun.returncode == 0, rerun.stderr
    with ResultStore(out / STORE_NAME) as store:
        assert [r.attempts for r in store.results()] == [1, 1, 1, 1]
