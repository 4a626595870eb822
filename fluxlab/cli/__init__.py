"""The ``fluxlab`` command line: one module per subcommand.

Each subcommand module has ``add_args(parser)`` and ``run(args) -> int``; the front end only
parses, calls the library and writes files.
"""

from __future__ import annotations

import argparse
import logging
import sys

from ..errors import FluxlabError

__all__ = ["main"]

_COMMANDS = ("check", "mesh", "solve", "evaluate", "sweep", "compare", "envelope")


def _parser() -> argparse.ArgumentParser:
    from importlib import import_module

    from .. import __version__

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


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit code (0 ok, 1 fluxlab error, 2 usage)."""
    args = _parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING,
        format="%(levelname)s %(name)s: %(message)s",
    )
    from threadpoolctl import threadpool_limits

    try:
        # one BLAS thread: on few cores the pools fight with the sparse factorisation
        with threadpool_limits(limits=1):
            return args.handler(args)
    except FluxlabError as err:
        print(f"fluxlab {args.command}: error:\n{err}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print(f"fluxlab {args.command}: interrupted", file=sys.stderr)
        return 130
