"""fluxlab: 2-D nonlinear magnetostatic evaluation of synchronous reluctance rotors."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("fluxlab")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"

__all__ = ["__version__"]
