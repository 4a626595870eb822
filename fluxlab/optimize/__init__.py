"""Optimisation: a multi-objective search over a base machine's keys, resumable.

``run_optimisation(opt_file, out_dir)`` searches with pymoo's NSGA-II at a coarse mesh,
evaluating each generation through the sweep's result store and executors (an evaluation
already stored is never repeated), then verifies the best designs at the machine's own
mesh. The parts: :mod:`.optfile` (the file), :mod:`.designs` (keys, batches through the
store), :mod:`.scoring` (objectives, constraints, dominance), :mod:`.search` (the
ask-and-tell loop), :mod:`.run`, :mod:`.tables` (history and front), :mod:`.outputs`
(figures and the comparison sheet).
"""

from fluxlab.optimize.optfile import (
    Constraint,
    Objective,
    OptimisationSpec,
    SearchSpec,
    load_optimisation,
    optimisation_from_dict,
)
from fluxlab.optimize.run import OptimisationResult, run_optimisation
from fluxlab.optimize.tables import FRONT_CSV, HISTORY_CSV

__all__ = [
    "Constraint",
    "Objective",
    "OptimisationSpec",
    "SearchSpec",
    "load_optimisation",
    "optimisation_from_dict",
    "OptimisationResult",
    "run_optimisation",
    "FRONT_CSV",
    "HISTORY_CSV",
]
