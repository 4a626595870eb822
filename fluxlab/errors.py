"""The one error family of fluxlab.

Every error a user can cause derives from :class:`FluxlabError`, so a script can catch
them all at once; each subclass names the pipeline stage that found the problem.
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
    """gmsh failed or produced a mesh that fails fluxlab's checks."""


class MaterialError(FluxlabError, ValueError):
    """A material name, B-H curve or material file is invalid."""


class WindingError(SpecError):
    """The slot, pole and winding numbers do not make a balanced three-phase winding."""


class ConvergenceError(FluxlabError):
    """The nonlinear solver did not reach its tolerance.

    ``history`` holds the residual norms of every iteration made.
    """

    def __init__(self, message: str, history: list[float] | None = None):
        self.history = list(history or [])
        super().__init__(message)
