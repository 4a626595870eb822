"""fluxlab: 2-D nonlinear magnetostatic evaluation of synchronous reluctance rotors.

The names a script needs::

    spec = load_machine("machine.toml")      # validated, SI units
    model = build_model(spec)                # mesh + assembly, once per candidate
    result = evaluate(spec)                  # all studies, no files
    found = run_optimisation("opt.toml", "out/")  # search, verify: .front, .history
"""

from fluxlab.errors import (
    ConvergenceError,
    FluxlabError,
    GeometryError,
    MaterialError,
    MeshError,
    SpecError,
    WindingError,
)
from fluxlab.fem.solver import solve_field
from fluxlab.machine.model import build_model
from fluxlab.mesh.machine_mesh import build_mesh
from fluxlab.optimize import run_optimisation
from fluxlab.spec.machine_file import load_machine, machine_from_dict, replace_path
from fluxlab.studies.curves import (
    inductance_curves,
    torque_vs_current_angle,
    torque_vs_position,
)
from fluxlab.studies.evaluate import Evaluation, StudySettings, evaluate
from fluxlab.studies.operating_point import averaged_point, solve_point
from fluxlab.sweep import run_sweep
from fluxlab.version import __version__

__all__ = [
    "__version__",
    "load_machine",
    "machine_from_dict",
    "replace_path",
    "build_mesh",
    "build_model",
    "solve_field",
    "solve_point",
    "averaged_point",
    "evaluate",
    "run_sweep",
    "run_optimisation",
    "Evaluation",
    "StudySettings",
    "torque_vs_position",
    "torque_vs_current_angle",
    "inductance_curves",
    "FluxlabError",
    "SpecError",
    "GeometryError",
    "MeshError",
    "MaterialError",
    "WindingError",
    "ConvergenceError",
]
