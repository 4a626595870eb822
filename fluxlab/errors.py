"""The one error family of fluxlab.

Every error a user can cause derives from :class:`FluxlabError`, so a script can catch
them all at once; each subclass names the pipeline stage that found the problem.

:class:`SpecError` and its subclasses mean "this machine or sweep file is invalid": a value
a user wrote, named with its key, the value and the limit. A sweep stores such a candidate
as rejected and never retries it. A wrong call from Python code (an argument of the wrong
type or value, a bad array shape) is a plain :class:`TypeError` or :class:`ValueError`
naming the argument and the value, never one of these classes.
"""

__all__ = [
    "FluxlabError",
    "SpecError",
    "GeometryError",
    "MeshError",
    "MaterialError",
    "WindingError",
    "ConvergenceError",
]


class FluxlabError(Exception):
    """Base class of every error fluxlab raises on bad input or failed computation."""


class SpecError(FluxlabError, ValueError):
    """A machine or sweep file has invalid keys or values.

    ``problems`` holds every message found, so all of them are reported together.
    """

    def __init__(self, problems: list[str] | str):
        self.problems = [problems] if isinstance(problems, str) else list(problems)
        super().__init__("\n".join(f"- {p}" for p in self.problems))


class GeometryError(SpecError):
    """The machine's dimensions do not make a valid geometry (overlaps, thin steel)."""


class MeshError(FluxlabError):
    """gmsh failed, or a mesh (or the ties built on its boundaries) fails fluxlab's checks."""


class MaterialError(FluxlabError, ValueError):
    """A material name, B-H curve or material file is invalid, or a material lacks data.

    Not a :class:`SpecError`: material data need not come from a machine file. Reading a
    machine file turns it into one of the file's :class:`SpecError` problems.
    """


class WindingError(SpecError):
    """The slot, pole and winding numbers do not make a balanced three-phase winding."""


class ConvergenceError(FluxlabError):
    """The nonlinear solver did not reach its tolerance.

    ``history`` holds the residual norms of every iteration made.
    """

    def __init__(self, message: str, history: list[float] | None = None):
        self.history = list(history or [])
        super().__init__(message)
