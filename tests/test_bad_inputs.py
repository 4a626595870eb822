"""A corpus of bad inputs, each run through the command line in its own process.

Every case must end with a non-zero exit code, one clear message naming the offending key,
argument or path, and no traceback. The cases fail before any finite-element solve (that is
part of what is tested: a bad output folder is found before minutes of solves), so the
processes are short. To keep the file quick on two cores, the corpus runs in a few
processes (``python -c`` with :data:`_RUNNER`), each calling the command line's ``main``
for a batch of cases with stderr captured per case; an exception ``main`` lets through is
recorded as its traceback, as the command would print it. The process-level behaviours
(``-v``, a closed pipe, the scheduler timeout) run as ``python -m fluxlab`` each.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "geometries" / "demo_fan_drive.toml"


@dataclass(frozen=True)
class Case:
    name: str
    argv: tuple[str, ...]
    expect: tuple[str, ...]  # each must be in stderr
    code: int | None = None  # the exit code, when it is fixed


_RUNNER = """
import contextlib, io, json, sys, traceback
from fluxlab.cli import main
out = []
for argv in json.loads(sys.argv[1]):
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        try:
            code = main(argv)
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else 1
        except BaseException:
            traceback.print_exc()
            code = 99
    out.append([code, err.getvalue()])
print(json.dumps(out))
"""


def _run_batch(argvs: list[tuple[str, ...]]) -> list[tuple[int, str]]:
    result = subprocess.run([sys.executable, "-c", _RUNNER, json.dumps(argvs)],
                            capture_output=True, text=True, timeout=120, cwd=ROOT)
    assert result.returncode == 0, result.stderr
    return [tuple(r) for r in json.loads(result.stdout.strip().splitlines()[-1])]


def _run(argv, env=None, timeout=120) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "fluxlab", *argv], capture_output=True,
                          text=True, timeout=timeout, cwd=ROOT, env=env)


def _machine_text(**replace) -> str:
    text = DEMO.read_text()
    for old, new in replace.items():
        assert old in text, old
        text = text.replace(old, new)
    return text


def _unwritable(tmp: Path) -> Path:
    """A folder path that cannot be created or written."""
    if os.geteuid() == 0:  # root writes anywhere on a normal file system
        return Path("/sys/fluxlab_no_such_folder")
    locked = tmp / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    return locked / "out"


def _corpus(tmp: Path) -> list[Case]:
    m = tmp / "good.toml"
    m.write_text(DEMO.read_text())
    files = {
        "nonutf8.toml": b'[machine]\nname = "caf\xe9"\n',
        "empty.toml": b"",
        "syntax.toml": b"[machine\nname = 1\n",
        "latin1_sweep.toml": b'name = "\xff"\nbase = "good.toml"\n',
    }
    for name, data in files.items():
        (tmp / name).write_bytes(data)
    (tmp / "folder.toml").mkdir()

    def machine(name: str, **replace) -> str:
        (tmp / name).write_text(_machine_text(**replace))
        return str(tmp / name)

    def sweep(name: str, text: str) -> str:
        (tmp / name).write_text(text)
        return str(tmp / name)

    params = ('[[parameters]]\npath = "rotor.barriers[0].width_mm"\nlow = 2.5\nhigh = 3.5\n'
              "steps = 2\n")
    existing = tmp / "a_file.txt"
    existing.write_text("keep me\n")
    unwritable = str(_unwritable(tmp))
    other_out = tmp / "other_machine_out"
    other_out.mkdir()
    (other_out / "fluxlab_manifest.json").write_text(json.dumps(
        {"command": "solve", "identity": "0" * 64, "machine": "someone else", "files": []}))
    plain = tmp / "plain_folder"
    plain.mkdir()
    mixed = tmp / "mixed_eval"
    mixed.mkdir()
    (mixed / "summary.json").write_text(json.dumps({"torque_mean_Nm": 1.0}))
    (mixed / "torque_vs_position.csv").write_text("position_deg,torque_Nm\n0,1\n")
    (mixed / "fluxlab_manifest.json").write_text(json.dumps(
        {"command": "evaluate", "identity": "1" * 64, "files": ["summary.json"]}))
    two = tmp / "two_machines"
    (two / "envelope").mkdir(parents=True)
    (two / "summary.json").write_text(json.dumps({"torque_mean_Nm": 1.0}))
    (two / "fluxlab_manifest.json").write_text(json.dumps(
        {"command": "evaluate", "identity": "1" * 64, "files": ["summary.json"]}))
    (two / "envelope" / "fluxlab_manifest.json").write_text(json.dumps(
        {"command": "envelope", "identity": "2" * 64, "files": []}))
    solve_out = tmp / "solve_out"
    s = str(m)
    out = str(tmp / "out")
    good_sweep = sweep("good_sweep.toml", f'base = "good.toml"\n{params}')

    cases = [
        # -- machine files, through check
        Case("missing machine", ("check", str(tmp / "nope.toml")), ("nope.toml", "no such")),
        Case("folder as machine", ("check", str(tmp / "folder.toml")),
             ("folder.toml", "is a folder")),
        Case("non-UTF-8 machine", ("check", str(tmp / "nonutf8.toml")),
             ("nonutf8.toml", "not UTF-8")),
        Case("empty machine", ("check", str(tmp / "empty.toml")), ("machine",)),
        Case("TOML syntax error", ("check", str(tmp / "syntax.toml")),
             ("syntax.toml", "not valid TOML")),
        Case("string for a number", ("check", machine("t1.toml", **{
            "airgap_mm = 0.5": 'airgap_mm = "half"'})), ("stator.airgap_mm",)),
        Case("negative air gap", ("check", machine("t2.toml", **{
            "airgap_mm = 0.5": "airgap_mm = -0.5"})), ("stator.airgap_mm = -0.5",)),
        Case("zero turns", ("check", machine("t3.toml", **{
            "turns_per_coil = 9": "turns_per_coil = 0"})), ("winding.turns_per_coil",)),
        Case("negative stack", ("check", machine("t4.toml", **{
            "stack_length_mm = 160.0": "stack_length_mm = -160.0"})),
             ("machine.stack_length_mm",)),
        Case("unknown section", ("check", machine("t5.toml", **{
            "[mesh]": "[cooling]\nfan = 1\n\n[mesh]"})), ("cooling",)),
        Case("unknown key", ("check", machine("t6.toml", **{
            "poles = 4": "poles = 4\ncolour = 'red'"})), ("colour",)),
        Case("odd poles", ("check", machine("t7.toml", **{"poles = 4": "poles = 5"})),
             ("poles",)),
        Case("unknown material", ("check", machine("t8.toml", **{
            'stator = "M400-50A"': 'stator = "unobtainium"'})), ("unobtainium",)),
        Case("missing B-H file", ("check", machine("t9.toml", **{
            'rotor = "M400-50A"': 'rotor = { bh_csv = "missing_curve.csv" }'})),
             ("missing_curve.csv",)),
        Case("fill factor above one", ("check", machine("t10.toml", **{
            "fill_factor = 0.42": "fill_factor = 1.5"})), ("winding.fill_factor",)),
        Case("boolean slots", ("check", machine("t11.toml", **{
            "slots = 36": "slots = true"})), ("stator.slots",)),
        Case("barrier past the shaft", ("check", machine("t12.toml", **{
            "depth_mm = 28.0": "depth_mm = 60.0"})), ("rotor.barriers[2]",)),
        Case("no argument", ("check",), ("machine",), 2),
        # -- output folders
        Case("mesh --out is a file", ("mesh", s, "--out", str(existing)),
             ("--out", "a_file.txt", "not a folder")),
        Case("solve --out is a file", ("solve", s, "--current-A", "10", "--out", str(existing)),
             ("--out", "a_file.txt")),
        Case("evaluate --out is a file", ("evaluate", s, "--out", str(existing)),
             ("--out", "a_file.txt")),
        Case("envelope --out is a file", ("envelope", s, "--out", str(existing)),
             ("--out", "a_file.txt")),
        Case("sweep --out is a file", ("sweep", good_sweep, "--out", str(existing)),
             ("--out", "a_file.txt")),
        Case("evaluate --out under a file", ("evaluate", s, "--out", str(existing / "sub")),
             ("--out", "a_file.txt")),
        Case("mesh unwritable --out", ("mesh", s, "--out", unwritable), ("--out", unwritable)),
        Case("evaluate unwritable --out", ("evaluate", s, "--out", unwritable),
             ("--out", unwritable)),
        Case("envelope unwritable --out", ("envelope", s, "--out", unwritable),
             ("--out", unwritable)),
        Case("sweep unwritable --out", ("sweep", good_sweep, "--out", unwritable),
             ("--out", unwritable)),
        Case("solve into another machine's folder",
             ("solve", s, "--current-A", "10", "--out", str(other_out)),
             ("--out", "other_machine_out", "--overwrite")),
        Case("evaluate into a folder of another command",
             ("evaluate", s, "--out", str(other_out)), ("other_machine_out", "fluxlab solve")),
        Case("compare --out is a folder", ("compare", str(plain), "--out", str(plain)),
             ("--out", "plain_folder", "is a folder")),
        Case("compare unwritable --out", ("compare", str(plain), "--out",
                                          unwritable + "/c.pdf"), ("--out", unwritable)),
        Case("compare missing folder", ("compare", str(tmp / "no_folder")), ("no_folder",)),
        Case("compare non-evaluate folder", ("compare", str(plain), "--out",
                                             str(tmp / "c.pdf")), ("plain_folder",)),
        Case("compare unlisted torque CSV", ("compare", str(mixed), "--out", str(tmp / "c.pdf")),
             ("torque_vs_position.csv", "not listed")),
        Case("compare two machines in a folder", ("compare", str(two), "--out",
                                                  str(tmp / "c.pdf")),
             ("two_machines", "different machines")),
        Case("compare a solve folder", ("compare", str(other_out), "--out", str(tmp / "c.pdf")),
             ("other_machine_out", "fluxlab solve")),
        # -- currents and numbers of solve
        Case("negative current", ("solve", s, "--current-A", "-5", "--out", str(solve_out)),
             ("--current-A",), 2),
        Case("zero current", ("solve", s, "--current-A", "0", "--out", str(solve_out)),
             ("--current-A",), 2),
        Case("NaN current", ("solve", s, "--current-A", "nan", "--out", str(solve_out)),
             ("--current-A",), 2),
        Case("infinite current", ("solve", s, "--current-A", "inf", "--out", str(solve_out)),
             ("--current-A",), 2),
        Case("text current", ("solve", s, "--current-A", "ten", "--out", str(solve_out)),
             ("--current-A",), 2),
        Case("infinite angle", ("solve", s, "--current-A", "5", "--current-angle-deg", "inf",
                                "--out", str(solve_out)), ("--current-angle-deg",), 2),
        Case("NaN position", ("solve", s, "--current-A", "5", "--position-deg", "nan",
                              "--out", str(solve_out)), ("--position-deg",), 2),
        Case("solve without --current-A", ("solve", s, "--out", str(solve_out)),
             ("--current-A",), 2),
        # -- workers and counts
        Case("evaluate --workers 0", ("evaluate", s, "--out", out, "--workers", "0"),
             ("--workers",), 2),
        Case("evaluate --workers -2", ("evaluate", s, "--out", out, "--workers", "-2"),
             ("--workers",), 2),
        Case("envelope --workers 0", ("envelope", s, "--out", out, "--workers", "0"),
             ("--workers",), 2),
        Case("sweep --workers 0", ("sweep", good_sweep, "--out", out, "--workers", "0"),
             ("--workers",), 2),
        Case("sweep --workers -1", ("sweep", good_sweep, "--out", out, "--workers", "-1"),
             ("--workers",), 2),
        Case("sweep --best 0", ("sweep", good_sweep, "--out", out, "--best", "0"),
             ("--best",), 2),
        Case("evaluate --positions 0", ("evaluate", s, "--out", out, "--positions", "0"),
             ("--positions",), 2),
        Case("evaluate --inductance-points 0",
             ("evaluate", s, "--out", out, "--inductance-points", "0"),
             ("--inductance-points",), 2),
        Case("evaluate --angle-step-deg 0",
             ("evaluate", s, "--out", out, "--angle-step-deg", "0"), ("--angle-step-deg",), 2),
        Case("evaluate --studies bogus", ("evaluate", s, "--out", out, "--studies", "bogus"),
             ("--studies",), 2),
        Case("envelope --positions 0", ("envelope", s, "--out", out, "--positions", "0"),
             ("--positions",), 2),
        Case("envelope --points 1", ("envelope", s, "--out", out, "--points", "1"),
             ("--points",), 2),
        Case("envelope --max-current-A below the limit",
             ("envelope", s, "--out", out, "--max-current-A", "5"), ("--max-current-A",), 2),
        Case("envelope --speed-points 0",
             ("envelope", s, "--out", out, "--speed-points", "0"), ("--speed-points",), 2),
        Case("envelope --loss-samples -1",
             ("envelope", s, "--out", out, "--loss-samples", "-1"), ("--loss-samples",), 2),
        Case("envelope --workers text", ("envelope", s, "--out", out, "--workers", "many"),
             ("--workers",), 2),
        Case("envelope with a missing machine", ("envelope", str(tmp / "gone.toml"), "--out",
                                                 out), ("gone.toml",)),
        # -- sweep files and the scheduler
        Case("missing sweep file", ("sweep", str(tmp / "nosweep.toml"), "--out", out),
             ("nosweep.toml", "no such")),
        Case("non-UTF-8 sweep file", ("sweep", str(tmp / "latin1_sweep.toml"), "--out", out),
             ("latin1_sweep.toml", "not UTF-8")),
        Case("sweep base non-UTF-8", ("sweep", sweep("s1.toml",
                                                     f'base = "nonutf8.toml"\n{params}'),
                                      "--out", out), ("nonutf8.toml", "not UTF-8")),
        Case("sweep base missing", ("sweep", sweep("s2.toml", f'base = "none.toml"\n{params}'),
                                    "--out", out), ("base",)),
        Case("sweep bad plan name", ("sweep", sweep(
            "s3.toml", f'base = "good.toml"\n[plan]\nkind = "sobol"\n{params}'), "--out", out),
             ("sobol",)),
        Case("sweep unknown key", ("sweep", sweep(
            "s4.toml", f'base = "good.toml"\ncolour = 1\n{params}'), "--out", out),
             ("colour",)),
        Case("sweep low above high", ("sweep", sweep(
            "s5.toml", 'base = "good.toml"\n[[parameters]]\npath = '
            '"rotor.barriers[0].width_mm"\nlow = 3.5\nhigh = 2.5\n'), "--out", out),
             ("low",)),
        Case("sweep path of no key", ("sweep", sweep(
            "s6.toml", 'base = "good.toml"\n[[parameters]]\npath = "rotor.nothing"\nlow = 1\n'
            'high = 2\n'), "--out", out), ("rotor.nothing",)),
        Case("sweep without parameters", ("sweep", sweep("s7.toml", 'base = "good.toml"\n'),
                                          "--out", out), ("parameters",)),
        Case("sweep bad studies", ("sweep", sweep(
            "s8.toml", f'base = "good.toml"\nstudies = "everything"\n{params}'), "--out", out),
             ("studies",)),
        Case("sweep TOML syntax", ("sweep", str(tmp / "syntax.toml"), "--out", out),
             ("syntax.toml", "not valid TOML")),
        Case("unreachable scheduler", ("sweep", good_sweep, "--out", str(tmp / "sched"),
                                       "--scheduler", "tcp://127.0.0.1:1"),
             ("--scheduler", "tcp://127.0.0.1:1", "cannot connect")),
        Case("scheduler not an address", ("sweep", good_sweep, "--out", str(tmp / "sched2"),
                                          "--scheduler", "nowhere"),
             ("--scheduler", "nowhere")),
        # -- the command line itself
        Case("unknown command", ("frobnicate",), ("frobnicate",), 2),
        Case("unknown option", ("check", s, "--colour"), ("--colour",), 2),
    ]
    return cases


@pytest.fixture(scope="module")
def corpus_results(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("bad_inputs")
    cases = _corpus(tmp)
    batches = [cases[i::3] for i in range(3)]
    with ThreadPoolExecutor(max_workers=3) as pool:
        done = list(pool.map(lambda b: _run_batch([c.argv for c in b]), batches))
    by_case = {c.name: r for b, rs in zip(batches, done, strict=True)
               for c, r in zip(b, rs, strict=True)}
    results = [by_case[c.name] for c in cases]
    yield list(zip(cases, results, strict=True)), tmp
    locked = tmp / "locked"
    if locked.exists():
        locked.chmod(0o700)


def test_corpus_is_large_enough(corpus_results):
    cases, _ = corpus_results
    assert len(cases) >= 50
    assert len({c.name for c, _ in cases}) == len(cases)
    for command in ("check", "mesh", "solve", "evaluate", "envelope", "sweep", "compare"):
        assert any(c.argv[:1] == (command,) for c, _ in cases), command


def test_every_bad_input_is_one_clear_message(corpus_results):
    cases, _ = corpus_results
    problems = []
    for case, (code, err) in cases:
        bad = []
        if code == 0:
            bad.append("exit code 0")
        if case.code is not None and code != case.code:
            bad.append(f"exit code {code}, expected {case.code}")
        if "Traceback" in err:
            bad.append("a traceback")
        bad += [f"{word!r} not named" for word in case.expect if word not in err]
        if bad:
            problems.append(f"{case.name}: {', '.join(bad)}\n    stderr: {err.strip()[-400:]}")
    assert not problems, "\n".join(problems)


def test_nothing_is_written_or_lost(corpus_results):
    cases, tmp = corpus_results
    assert (tmp / "a_file.txt").read_text() == "keep me\n"  # an --out file is never replaced
    assert not (tmp / "solve_out").exists()  # refused currents: nothing done
    assert not (tmp / "c.pdf").exists()


def test_verbose_adds_the_traceback(tmp_path):
    existing = tmp_path / "f.txt"
    existing.write_text("x")
    quiet = _run(["mesh", str(DEMO), "--out", str(existing)])
    loud = _run(["-v", "mesh", str(DEMO), "--out", str(existing)])
    assert quiet.returncode == loud.returncode == 1
    assert "Traceback" not in quiet.stderr and "Traceback" in loud.stderr
    assert quiet.stderr.strip().splitlines()[-1] == loud.stderr.strip().splitlines()[-1]


def test_closed_pipe_ends_quietly():
    """``fluxlab check m.toml | head -0``: no traceback, exit code 141 (128 + SIGPIPE)."""
    proc = subprocess.Popen([sys.executable, "-m", "fluxlab", "check", str(DEMO)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=ROOT)
    proc.stdout.close()  # the reader goes away before the first line
    err = proc.stderr.read().decode()
    assert proc.wait(timeout=120) == 141
    assert err == ""


def test_scheduler_refusal_is_quick(tmp_path):
    import time

    sweep = tmp_path / "s.toml"
    sweep.write_text(f'base = "{DEMO}"\n[[parameters]]\npath = "rotor.barriers[0].width_mm"\n'
                     "low = 2.5\nhigh = 3.5\nsteps = 2\n")
    start = time.monotonic()
    # a non-routable address (TEST-NET-1, RFC 5737): no answer at all, not even a refusal
    result = _run(["sweep", str(sweep), "--out", str(tmp_path / "o"), "--scheduler",
                   "tcp://192.0.2.1:8786"])
    assert result.returncode == 1 and "--scheduler tcp://192.0.2.1:8786" in result.stderr
    assert time.monotonic() - start < 20  # 5 s connect limit, not Dask's 30 s
    assert "Traceback" not in result.stderr
