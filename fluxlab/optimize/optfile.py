"""The optimisation file: a base machine, the keys to vary, objectives, constraints, search.

An optimisation file is TOML::

    name = "barrier ends"                # optional
    base = "demo_fan_drive.toml"         # machine file, relative to this file
    studies = "full"                     # "full" (ripple, MTPA) or "point" (rated point only)

    [fixed]                              # optional: keys set in every candidate and the base
    "operating.current_angle_deg" = 60.0

    [[parameters]]                       # as in a sweep file: a range, or values = [...]
    path = "rotor.barriers[1].end_angle_deg"
    low = 20.0
    high = 28.0

    [objectives]                         # figures of the evaluation summary, in order
    torque_mean_Nm = "max"
    torque_ripple_pct = "min"

    [constraints]                        # a figure with a lower (min) and/or upper (max) bound
    power_factor = { min = 0.65 }

    [search]
    algorithm = "nsga2"
    population = 16
    generations = 8                      # or evaluations = 128 (rounded up to generations)
    seed = 1

    [fidelity]                           # mesh overrides for the search (coarse)
    "mesh.size_mm" = 5.0

    [verify]
    best = 4                             # designs of the search front evaluated again at
                                         # the machine's own mesh

Like a sweep file, it names no code: the evaluation function is chosen from Python only.
"""

from __future__ import annotations

import copy
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from fluxlab.errors import SpecError
from fluxlab.spec.machine_file import machine_from_dict
from fluxlab.spec.tomlfile import read_toml
from fluxlab.sweep.sweepfile import (
    STUDIES,
    ParameterSpec,
    PlanSpec,
    apply_fixed,
    is_number,
    read_parameters,
)

__all__ = ["ALGORITHMS", "GOALS", "FULL_ONLY_FIGURES", "Objective", "Constraint", "SearchSpec",
           "OptimisationSpec", "optimisation_from_dict", "load_optimisation"]

ALGORITHMS = ("nsga2",)
GOALS = ("max", "min")
#: Summary figures that only full studies compute (operating-point studies leave them out).
FULL_ONLY_FIGURES = ("torque_ripple_pct", "torque_maxwell_mean_Nm", "mtpa_angle_deg",
                     "mtpa_torque_Nm", "overload_mtpa_angle_deg", "overload_mtpa_torque_Nm")
MAX_POPULATION = 10_000
MAX_GENERATIONS = 10_000
_TOP_KEYS = ("name", "base", "studies", "fixed", "parameters", "objectives", "constraints",
             "search", "fidelity", "verify")
_SEARCH_KEYS = ("algorithm", "population", "generations", "evaluations", "seed")
_BOUND_KEYS = ("min", "max")
_FIGURE = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
# how a search draws parameters: a range as a whole (no grid steps)
_SEARCH_PLAN = PlanSpec("search", None, 0)


@dataclass(frozen=True)
class Objective:
    """A summary figure to maximise (``goal = "max"``) or minimise (``"min"``)."""

    figure: str
    goal: str


@dataclass(frozen=True)
class Constraint:
    """A summary figure kept within ``low`` .. ``high`` (either may be None: no bound)."""

    figure: str
    low: float | None
    high: float | None

    def describe(self) -> str:
        """``power_factor >= 0.65`` (and/or ``<= ...``)."""
        parts = ([f"{self.figure} >= {self.low:g}"] if self.low is not None else []) + (
            [f"{self.figure} <= {self.high:g}"] if self.high is not None else [])
        return " and ".join(parts)


@dataclass(frozen=True)
class SearchSpec:
    """The algorithm (:data:`ALGORITHMS`), its population, generations and random seed."""

    algorithm: str
    population: int
    generations: int
    seed: int

    @property
    def evaluations(self) -> int:
        """The budget in evaluations: population times generations (at most; the algorithm
        leaves out duplicates of earlier candidates)."""
        return self.population * self.generations


@dataclass(frozen=True)
class OptimisationSpec:
    """A validated optimisation.

    ``base_raw`` is the base machine table with the ``fixed`` keys applied (file units);
    ``fidelity`` the mesh overrides of the search (``{}``: the machine's own mesh);
    ``verify`` how many designs of the search front are evaluated at the machine's own mesh.
    """

    name: str
    base_path: Path
    base_raw: dict
    base_dir: Path
    studies: str
    parameters: tuple[ParameterSpec, ...]
    objectives: tuple[Objective, ...]
    constraints: tuple[Constraint, ...]
    search: SearchSpec
    fidelity: dict
    verify: int
    fixed: dict

    @property
    def figures(self) -> tuple[str, ...]:
        """The figures the search needs: objectives, then constraints, each once."""
        names = [o.figure for o in self.objectives] + [c.figure for c in self.constraints]
        return tuple(dict.fromkeys(names))


def _integer(where: str, value: Any, low: int, high: int, problems: list[str]) -> int | None:
    if not isinstance(value, int) or isinstance(value, bool) or not low <= value <= high:
        problems.append(f"{where} = {value!r}: must be an integer from {low} to {high}")
        return None
    return value


def _figure_name(where: str, name: Any, studies: str, problems: list[str]) -> bool:
    if not isinstance(name, str) or not _FIGURE.fullmatch(name):
        problems.append(f"{where}: {name!r} is not a figure name (a key of the evaluation "
                        "summary, such as torque_mean_Nm)")
        return False
    if studies == "point" and name in FULL_ONLY_FIGURES:
        problems.append(f"{where}: {name} is computed by full studies only; set "
                        "studies = \"full\"")
        return False
    return True


def _read_objectives(data: Any, studies: str, problems: list[str]) -> tuple[Objective, ...]:
    if not isinstance(data, dict) or not data:
        problems.append(f"objectives = {data!r}: required, a table of figure = \"max\" or "
                        "\"min\" (e.g. torque_mean_Nm = \"max\")")
        return ()
    out = []
    for name, goal in data.items():
        if not _figure_name(f"objectives.{name}", name, studies, problems):
            continue
        if goal not in GOALS:
            problems.append(f"objectives.{name} = {goal!r}: must be \"max\" or \"min\"")
            continue
        out.append(Objective(name, goal))
    return tuple(out)


def _read_constraint(name: str, item: Any, studies: str, problems: list[str]):
    where = f"constraints.{name}"
    if not _figure_name(where, name, studies, problems):
        return None
    if not isinstance(item, dict) or not item:
        problems.append(f"{where} = {item!r}: must be a table {{ min = ... }} and/or "
                        "{ max = ... }")
        return None
    ok = True
    for key, value in item.items():
        if key not in _BOUND_KEYS:
            problems.append(f"{where}.{key}: unknown key (known keys: min, max)")
            ok = False
        elif not is_number(value):
            problems.append(f"{where}.{key} = {value!r}: must be a number")
            ok = False
    low, high = item.get("min"), item.get("max")
    if ok and low is not None and high is not None and not low < high:
        problems.append(f"{where}: min = {low!r} must be less than max = {high!r}")
        ok = False
    return Constraint(name, None if low is None else float(low),
                      None if high is None else float(high)) if ok else None


def _read_constraints(data: Any, studies: str, problems: list[str]) -> tuple[Constraint, ...]:
    if not isinstance(data, dict):
        problems.append(f"constraints = {data!r}: must be a table of figure = "
                        "{ min = ... } and/or { max = ... }")
        return ()
    found = [_read_constraint(name, item, studies, problems) for name, item in data.items()]
    return tuple(c for c in found if c is not None)


def _read_search(data: Any, problems: list[str]) -> SearchSpec:
    fallback = SearchSpec("nsga2", 2, 1, 0)
    if not isinstance(data, dict):
        problems.append(f"search = {data!r}: required, a table with population and "
                        "generations (or evaluations)")
        return fallback
    for name in data:
        if name not in _SEARCH_KEYS:
            problems.append(f"search.{name}: unknown key (known keys: {', '.join(_SEARCH_KEYS)})")
    algorithm = data.get("algorithm", "nsga2")
    if algorithm not in ALGORITHMS:
        problems.append(f"search.algorithm = {algorithm!r}: unknown (known: "
                        f"{', '.join(ALGORITHMS)})")
    population = _integer("search.population", data.get("population"), 2, MAX_POPULATION,
                          problems)
    seed = _integer("search.seed", data.get("seed", 0), 0, 2**32 - 1, problems)
    if ("generations" in data) == ("evaluations" in data):
        problems.append("search: give either generations or evaluations (the budget)")
        return fallback
    if "generations" in data:
        generations = _integer("search.generations", data["generations"], 1, MAX_GENERATIONS,
                               problems)
    else:
        evaluations = _integer("search.evaluations", data["evaluations"], 1,
                               MAX_POPULATION * MAX_GENERATIONS, problems)
        generations = (None if evaluations is None or population is None
                       else max(1, math.ceil(evaluations / population)))
    if None in (population, seed, generations):
        return fallback
    return SearchSpec(algorithm, population, generations, seed)


def _read_verify(data: Any, problems: list[str]) -> int:
    if not isinstance(data, dict):
        problems.append(f"verify = {data!r}: must be a table with best = N")
        return 1
    for name in data:
        if name != "best":
            problems.append(f"verify.{name}: unknown key (known keys: best)")
    best = _integer("verify.best", data.get("best", 4), 1, MAX_POPULATION, problems)
    return 1 if best is None else best


def _check_fidelity(data: Any, raw: dict, problems: list[str]) -> dict:
    if isinstance(data, dict):
        for path in data:
            if not str(path).startswith("mesh."):
                problems.append(f"fidelity.{path}: only mesh keys (mesh.size_mm, ...) set the "
                                "fidelity")
    return apply_fixed(data, copy.deepcopy(raw), problems, where="fidelity")


def _base(data: dict, base_dir: Path, problems: list[str]) -> tuple[Path, dict]:
    base = data.get("base")
    if not isinstance(base, str):
        raise SpecError(problems + [f"base = {base!r}: required, the machine file to start from"])
    base_path = (base_dir / base).resolve()
    try:
        return base_path, read_toml(base_path, "file")
    except SpecError as err:
        raise SpecError(problems + [f"base = {base!r}: {err}"]) from err


def _validate_machine(raw: dict, base_path: Path, where: str) -> None:
    try:
        machine_from_dict(raw, base_path.parent)
    except SpecError as err:
        raise SpecError([f"{where}: {p}" for p in err.problems]) from err


def optimisation_from_dict(data: dict, base_dir: Path | str = ".") -> OptimisationSpec:
    """Validate a parsed optimisation table; ``base_dir`` is where ``base`` is looked up.

    Raises
    ------
    SpecError
        With every problem found, each naming its key: unknown keys, an invalid base machine,
        a path that names no numeric key, an unknown goal, a bound that is not a number, a
        budget that is not a positive integer, a fidelity key outside ``mesh``.
    """
    base_dir = Path(base_dir)
    if not isinstance(data, dict):
        raise SpecError(f"optimisation file: must be a table, got {type(data).__name__}")
    problems = [f"{name}: unknown key (known keys: {', '.join(_TOP_KEYS)})"
                for name in data if name not in _TOP_KEYS]
    base_path, raw = _base(data, base_dir, problems)
    fixed = apply_fixed(data.get("fixed", {}), raw, problems)
    studies = data.get("studies", "full")
    if studies not in STUDIES:
        problems.append(f"studies = {studies!r}: must be one of {', '.join(STUDIES)}")
        studies = "full"
    parameters = read_parameters(data.get("parameters"), raw, _SEARCH_PLAN, fixed, problems)
    objectives = _read_objectives(data.get("objectives"), studies, problems)
    constraints = _read_constraints(data.get("constraints", {}), studies, problems)
    search = _read_search(data.get("search"), problems)
    fidelity = data.get("fidelity", {})
    _check_fidelity(fidelity, raw, problems)
    verify = _read_verify(data.get("verify", {}), problems)
    if problems:
        raise SpecError(problems)
    _validate_machine(raw, base_path, f"base = {data['base']!r} (with the fixed keys)")
    coarse = copy.deepcopy(raw)
    apply_fixed(fidelity, coarse, problems)
    _validate_machine(coarse, base_path, "fidelity (the base machine at the search mesh)")
    return OptimisationSpec(
        name=str(data.get("name", base_path.stem)), base_path=base_path, base_raw=raw,
        base_dir=base_path.parent, studies=studies, parameters=tuple(parameters),
        objectives=objectives, constraints=constraints, search=search,
        fidelity=dict(fidelity), verify=verify, fixed=fixed)


def load_optimisation(path: str | Path) -> OptimisationSpec:
    """Read and validate an optimisation file (TOML); ``base`` is relative to the file."""
    path = Path(path)
    return optimisation_from_dict(read_toml(path, "optimisation file"), path.parent)
