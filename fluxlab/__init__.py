"""fluxlab: 2-D nonlinear magnetostatic evaluation of synchronous reluctance rotors.

The names a script needs::

    spec = load_machine("machine.toml")      # validated, SI units
    model = build_model(spec)                # mesh + assembly, once per candidate
    result = evaluate(spec)                  # all studies, no files
"""

from .errors import (
    ConvergenceError,
    FluxlabError,
    GeometryError,
    MaterialError,
    MeshError,
    SpecError,
    WindingError,
)
from .evaluate import Evaluation, StudySettings, evaluate
from .mesh import build_mesh
from .model import build_model
from .operating_point import averaged_point, solve_point
from .solver import solve_field
from .spec import load_machine, machine_from_dict, replace_path
from .studies import (
    inductance_curves,
    torque_vs_current_angle,
    torque_vs_position,
)
from .sweep import run_sweep
from .version import __version__

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
