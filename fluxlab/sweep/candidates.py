"""Candidates of a sweep: the resolved machine table of each plan point and its content key.

The key is the SHA-256 of the canonical JSON (sorted keys, no spaces) of the resolved
machine table, the studies and the fluxlab version, so a result is reused exactly when the
same machine is evaluated the same way by the same code. A non-default evaluator (a test
hook) is part of the key too, so fake results never stand in for real ones.
"""

from __future__ import annotations

import copy
import hashlib
import json
from dataclasses import dataclass

from ..keypath import set_path
from .plan import plan_points
from .sweepfile import SweepSpec

__all__ = ["DEFAULT_EVALUATOR", "Candidate", "canonical_json", "candidate_key", "make_candidates"]

DEFAULT_EVALUATOR = "fluxlab.evaluate:evaluate"


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


def candidate_key(machine: dict, studies: str, evaluator: str | None = None) -> str:
    """The content key (64 hex digits) of a machine table evaluated with ``studies``."""
    from .. import __version__

    content = {"machine": machine, "studies": studies, "fluxlab_version": __version__}
    if evaluator not in (None, DEFAULT_EVALUATOR):
        content["evaluator"] = evaluator
    return hashlib.sha256(canonical_json(content).encode("ascii")).hexdigest()


def make_candidates(sweep: SweepSpec, evaluator: str | None = None) -> list[Candidate]:
    """Resolve every plan point of ``sweep`` into a :class:`Candidate` (no validation yet).

    ``evaluator`` overrides the sweep file's own evaluator reference in the key.
    """
    ref = evaluator if evaluator is not None else sweep.evaluator
    out = []
    for number, values in enumerate(plan_points(sweep)):
        machine = copy.deepcopy(sweep.base_raw)
        for path, value in values.items():
            set_path(machine, path, value)
        out.append(Candidate(number, values, machine, candidate_key(machine, sweep.studies, ref)))
    return out
