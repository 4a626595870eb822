"""The search loop: pymoo's NSGA-II asked for one generation at a time, told its scores.

pymoo's ask-and-tell interface lets fluxlab evaluate each generation as one batch through
its own executors and store. Each search variable is the parameter's place in its range,
in [0, 1] (mapped to file units by :func:`fluxlab.optimize.designs.design_values`).

Resuming: the algorithm draws from its own seeded generator (``numpy.random.default_rng``)
and nothing else, so a rerun with the same seed asks for the same designs as long as it is
told the same scores, which the store gives back without evaluating again. The replay is
exact for the same fluxlab source, pymoo and numpy versions and the same file; a change of
any of them can change the designs asked for (and fluxlab's source is part of each key).

Reference: K. Deb, A. Pratap, S. Agarwal, T. Meyarivan, "A fast and elitist multiobjective
genetic algorithm: NSGA-II", IEEE Trans. Evolutionary Computation 6(2), 2002 (pymoo's NSGA2,
with its constraint-domination rule for infeasible designs).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from fluxlab.optimize.optfile import SearchSpec

__all__ = ["initial_points", "run_search"]

#: ``(generation, X) -> (F, G)``: scores of a generation's points X (rows in [0, 1]^d).
BatchScorer = Callable[[int, np.ndarray], tuple[np.ndarray, np.ndarray]]


def initial_points(search: SearchSpec, n_var: int, first: np.ndarray | None) -> np.ndarray:
    """The first generation: ``first`` (the base machine's point, say), then a Latin
    hypercube of the rest drawn with the search's seed (scipy.stats.qmc)."""
    from scipy.stats import qmc

    rows = [] if first is None else [np.asarray(first, float)]
    count = search.population - len(rows)
    try:
        sampler = qmc.LatinHypercube(n_var, rng=search.seed)
    except TypeError:  # scipy < 1.15 names the generator argument `seed`
        sampler = qmc.LatinHypercube(n_var, seed=search.seed)
    return np.vstack([*rows, sampler.random(count)]) if count > 0 else np.vstack(rows)


def _algorithm(search: SearchSpec, initial: np.ndarray):
    from pymoo.algorithms.moo.nsga2 import NSGA2

    if search.algorithm != "nsga2":  # optfile.ALGORITHMS lists what is handled here
        raise ValueError(f"search.algorithm = {search.algorithm!r}: not handled")
    return NSGA2(pop_size=search.population, sampling=initial, eliminate_duplicates=True)


def run_search(search: SearchSpec, n_var: int, n_obj: int, n_constr: int,
               score_batch: BatchScorer, first: np.ndarray | None = None) -> int:
    """Run ``search.generations`` generations; returns the number of generations run.

    The first generation starts from ``first`` (a point in [0, 1]^n_var, the base machine's)
    and a Latin hypercube (:func:`initial_points`).

    ``score_batch(generation, X)`` evaluates the points of one generation (generation 1 is
    the initial population) and returns ``F`` (n, n_obj, minimised) and ``G`` (n, n_constr,
    <= 0 satisfied).
    """
    from pymoo.core.evaluator import Evaluator
    from pymoo.core.problem import Problem
    from pymoo.problems.static import StaticProblem

    problem = Problem(n_var=n_var, n_obj=n_obj, n_ieq_constr=n_constr, xl=0.0, xu=1.0)
    algorithm = _algorithm(search, initial_points(search, n_var, first))
    algorithm.setup(problem, termination=("n_gen", search.generations), seed=search.seed,
                    verbose=False)
    generation = 0
    while algorithm.has_next():
        generation += 1
        population = algorithm.ask()
        F, G = score_batch(generation, np.asarray(population.get("X"), float))
        Evaluator().eval(StaticProblem(problem, F=F, G=G), population)
        algorithm.tell(infills=population)
    return generation
