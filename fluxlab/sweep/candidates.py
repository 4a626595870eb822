"""Candidates of a sweep: the resolved machine table of each plan point and its content key.

The key is the SHA-256 of the canonical JSON (sorted keys, no spaces) of the resolved
machine table, the studies, the fluxlab version, a digest of fluxlab's own source files
(an edited working copy keeps its version number) and of the B-H files the machine refers
to, so a result is reused exactly when the same machine is evaluated the same way by the
same code. A non-default evaluator (chosen from Python, ``run_sweep(..., evaluator=...)``;
a test double, say) is part of the key too, so its results never stand in for real ones.
"""

from __future__ import annotations

import copy
import functools
import hashlib
import json
from dataclasses import dataclass
from pathlib import Path

from fluxlab.spec.keypath import set_path
from fluxlab.sweep.plan import plan_points
from fluxlab.sweep.sweepfile import SweepSpec
from fluxlab.version import __version__

__all__ = ["DEFAULT_EVALUATOR", "Candidate", "canonical_json", "source_digest", "candidate_key",
           "make_candidates"]

DEFAULT_EVALUATOR = "fluxlab.studies.evaluate:evaluate"


@dataclass(frozen=True)
class Candidate:
    """One machine of a sweep.

    ``number`` is its place in the plan (from 0); ``values`` the varied keys in file units;
    ``machine`` the full machine table (file units) to validate and evaluate.
    """

    number: int
    values: dict
    machine: dict
    key: str


def canonical_json(obj) -> str:
    """JSON with sorted keys and no spaces: equal tables give equal text."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=True,
                      allow_nan=False)


@functools.cache
def source_digest() -> str:
    """SHA-256 of fluxlab's Python source files (paths and contents), once per process."""
    root = Path(__file__).resolve().parents[1]
    digest = hashlib.sha256()
    for path in sorted(root.rglob("*.py")):
        digest.update(path.relative_to(root).as_posix().encode() + b"\0" + path.read_bytes())
    return digest.hexdigest()


def _file_digests(machine: dict, base_dir: Path | None) -> dict:
    """SHA-256 of each B-H file the machine's materials name (absent files are left out:
    that candidate is rejected anyway)."""
    out = {}
    materials = machine.get("materials")
    for region, value in (materials.items() if isinstance(materials, dict) else ()):
        name = value.get("bh_csv") if isinstance(value, dict) else None
        if isinstance(name, str) and base_dir is not None and (base_dir / name).is_file():
            out[region] = hashlib.sha256((base_dir / name).read_bytes()).hexdigest()
    return out


def candidate_key(machine: dict, studies: str, evaluator: str | None = None,
                  base_dir: Path | None = None) -> str:
    """The content key (64 hex digits) of a machine table evaluated with ``studies``;
    ``base_dir`` is where the machine's relative file references start."""

    content = {"machine": machine, "studies": studies, "fluxlab_version": __version__,
               "source": source_digest(), "files": _file_digests(machine, base_dir)}
    if evaluator not in (None, DEFAULT_EVALUATOR):
        content["evaluator"] = evaluator
    return hashlib.sha256(canonical_json(content).encode("ascii")).hexdigest()


def make_candidates(sweep: SweepSpec, evaluator: str | None = None) -> list[Candidate]:
    """Resolve every plan point of ``sweep`` into a :class:`Candidate` (no validation yet).

    ``evaluator`` is the ``"module:function"`` reference of the evaluation function, for the
    key (None or :data:`DEFAULT_EVALUATOR`: the real evaluation).
    """
    out = []
    for number, values in enumerate(plan_points(sweep)):
        machine = copy.deepcopy(sweep.base_raw)
        for path, value in values.items():
            set_path(machine, path, value)
        key = candidate_key(machine, sweep.studies, evaluator, sweep.base_dir)
        out.append(Candidate(number, values, machine, key))
    return out
