"""fluxlab: 2-D nonlinear magnetostatic evaluation of synchronous reluctance rotors.

The names a script needs::

    spec = load_machine("machine.toml")      # validated, SI units
    model = build_model(spec)                # mesh + assembly, once per candidate
    result = evaluate(spec)                  # all studies, no files
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("fluxlab")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"

from .errors import (  # noqa: E402
    ConvergenceError,
    FluxlabError,
    GeometryError,
    MaterialError,
    MeshError,
    SpecError,
    WindingError,
)
from .evaluate import Evaluation, StudySettings, evaluate  # noqa: E402
from .mesh import build_mesh  # noqa: E402
from .model import build_model  # noqa: E402
from .operating_point import averaged_point, solve_point  # noqa: E402
from .solver import solve_field  # noqa: E402
from .spec import load_machine, machine_from_dict  # noqa: E402
from .studies import (  # noqa: E402
    inductance_curves,
    torque_vs_current_angle,
    torque_vs_position,
)
from .sweep import run_sweep  # noqa: E402

__all__ = [
    "__version__",
    "load_machine",
    "machine_from_dict",
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
