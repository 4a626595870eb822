"""The ``fluxlab`` command line: one module per subcommand.

Each subcommand module has ``add_args(parser)`` and ``run(args) -> int``; the front end only
parses, calls the library and writes files.

Errors: a :class:`~fluxlab.errors.FluxlabError` (a bad machine or sweep file, an unusable
output folder, a failed mesh or solve) is printed as a message, exit code 1. An option
value the library refuses is checked before any work by :func:`option_problem`, with the
library's own checks, and printed as one line, exit code 2. An operating-system error (a
path that exists, is a folder, or is not writable; an unreachable scheduler) is printed as
one line naming the path or address, exit code 1. ``-v`` adds the traceback to each of
these. Any other exception is a bug and keeps its traceback.

A closed pipe on stdout (``fluxlab check m.toml | head -1``) ends the command quietly with
exit code 141 (128 + SIGPIPE), what a shell reports for a Unix tool stopped the same way:
the output was cut short, so it is no success, but there is nothing to tell the user.
"""

from __future__ import annotations

import argparse
import logging
import math
import os
import sys
import traceback
from collections.abc import Callable

from fluxlab.envelope import envelope_settings
from fluxlab.errors import FluxlabError
from fluxlab.fem.linsolve import choose
from fluxlab.spec.machine_file import load_machine
from fluxlab.studies.evaluate import StudySettings
from fluxlab.version import __version__

__all__ = ["main", "option_problem"]

_COMMANDS = ("check", "mesh", "solve", "evaluate", "sweep", "optimize", "compare", "envelope",
             "export", "stress")


def _parser() -> argparse.ArgumentParser:
    from importlib import import_module

    parser = argparse.ArgumentParser(
        prog="fluxlab",
        description="Evaluate flux-barrier rotors of synchronous reluctance machines "
        "with a 2-D nonlinear magnetostatic finite-element model.",
    )
    parser.add_argument("--version", action="version", version=f"fluxlab {__version__}")
    parser.add_argument("-v", "--verbose", action="store_true", help="log progress details")
    sub = parser.add_subparsers(dest="command", required=True)
    for name in _COMMANDS:
        module = import_module(f".{name}", __name__)
        p = sub.add_parser(name, help=module.__doc__.splitlines()[0],
                           description=module.__doc__)
        module.add_args(p)
        p.set_defaults(handler=module.run)
    return parser


def _linear_solver(name: str) -> None:
    try:
        choose(name)
    except ImportError as err:  # an optional backend that is not installed
        raise ValueError(f"{name!r} is not available here ({err})") from err


def _finite(value: float) -> None:
    if not math.isfinite(value):
        raise ValueError(f"{value!r} must be a finite number")


def _at_least_one(value: int | None) -> None:
    if value is not None and value < 1:
        raise ValueError(f"must be at least 1, got {value}")


def _positive(value: float) -> None:
    _finite(value)
    if not value > 0:
        raise ValueError(f"{value!r} must be positive")


def _non_negative(value: float) -> None:
    _finite(value)
    if not value >= 0:
        raise ValueError(f"{value!r} must be at least 0")


def _option_checks(args) -> list[tuple[str, Callable[[], object]]]:
    """(options, check) pairs for the values of ``args`` a user typed; a check raises
    ValueError on a value it refuses."""
    checks: list[tuple[str, Callable[[], object]]] = []
    if getattr(args, "linear_solver", None) is not None:
        checks.append(("--linear-solver", lambda: _linear_solver(args.linear_solver)))
    for name in ("workers", "best", "positions", "points", "speed_points",
                 "inductance_points"):
        if args.command in ("evaluate", "envelope", "sweep", "optimize") and hasattr(args, name):
            flag = "--" + name.replace("_", "-")
            checks.append((flag, lambda name=name: _at_least_one(getattr(args, name))))
    if args.command == "evaluate":
        checks.append(("--studies, --angle-step-deg, --inductance-points",
                       lambda: StudySettings(studies=args.studies,
                                             angle_step_deg=args.angle_step_deg,
                                             inductance_points=args.inductance_points)))
    elif args.command == "envelope":
        # the cross-checks need the machine (its current limit); reading it is fast
        checks.append(("--points, --positions, --max-current-A, --speed-points, "
                       "--loss-samples",
                       lambda: envelope_settings(
                           load_machine(args.machine), map_points=args.points,
                           map_positions=args.positions, map_max_current_A=args.max_current_A,
                           speed_points=args.speed_points, loss_samples=args.loss_samples)))
    elif args.command == "stress" and args.speed_rpm is not None:
        checks.append(("--speed-rpm", lambda: _non_negative(args.speed_rpm)))
    elif args.command == "solve":
        checks.append(("--current-A", lambda: _positive(args.current_A)))
        for name in ("current_angle_deg", "position_deg"):
            flag = "--" + name.replace("_", "-")
            checks.append((flag, lambda name=name: _finite(getattr(args, name))))
    return checks


def option_problem(args) -> str | None:
    """One line naming the first command-line option value the library refuses, else None.

    The library raises a plain ValueError for a bad argument, as it cannot tell a value a
    user typed from a programmer's mistake; :func:`main` must not catch ValueError around
    the whole command (that would print bugs as messages), so the options are checked here
    first, with the library's own checks. A :class:`FluxlabError` (the machine file named
    on the command line is invalid) is raised as it is.
    """
    for options, check in _option_checks(args):
        try:
            check()
        except FluxlabError:
            raise
        except ValueError as err:
            return f"{options}: {err}"
    return None


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit code (0 ok, 1 fluxlab error, 2 usage)."""
    args = _parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING,
        format="%(levelname)s %(name)s: %(message)s",
    )
    from threadpoolctl import threadpool_limits

    def fail(message: str, code: int) -> int:
        if args.verbose:
            traceback.print_exc()
        print(f"fluxlab {args.command}: error: {message}", file=sys.stderr)
        return code

    try:
        problem = option_problem(args)
        if problem is not None:
            return fail(problem, 2)
        # one BLAS thread: on few cores the pools fight with the sparse factorisation
        with threadpool_limits(limits=1):
            code = args.handler(args)
        sys.stdout.flush()  # a closed pipe shows here, not in the interpreter's exit
        return code
    except BrokenPipeError:
        # the reader went away: silence further output (the final flush included)
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 141
    except FluxlabError as err:
        text = str(err)
        if text.startswith("- ") and "\n" not in text:  # one problem: one line
            text = text[2:]
        return fail(("\n" if "\n" in text else "") + text, 1)
    except OSError as err:
        return fail(_os_message(err), 1)
    except KeyboardInterrupt:
        print(f"fluxlab {args.command}: interrupted", file=sys.stderr)
        return 130


def _os_message(err: OSError) -> str:
    """One line for an operating-system error, naming its path when it has one."""
    what = {FileExistsError: "exists", IsADirectoryError: "is a folder, not a file",
            NotADirectoryError: "a part of the path is not a folder",
            PermissionError: "permission denied", FileNotFoundError: "no such file or folder"}
    reason = what.get(type(err)) or err.strerror or str(err) or type(err).__name__
    if err.filename is not None:
        return f"{err.filename}: {reason}"
    return f"{reason} ({type(err).__name__})"
