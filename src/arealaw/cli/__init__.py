"""The ``arealaw`` command.

Each command lives in its own module with a ``register(subparsers)`` function that adds its
parser and sets ``func``; :func:`main` dispatches and turns user errors into one line and exit 2.
"""

import importlib
import os
import sys

from .._version import __version__
from ._common import USER_ERRORS, ArgumentParser, HelpFormatter, fail

__all__ = ["main"]

#: Command modules, in the order they appear in ``arealaw --help``.
COMMAND_MODULES = ("_entropy", "_run", "_results", "_fit", "_plot", "_report", "_demo",
                   "_validate")

EPILOG = """examples:
  arealaw entropy --shape 20 20 --mass 0.1 --box 10 10
  arealaw entropy --shape 100 --mass 0.01 --box 50 --renyi 2 inf --json
  arealaw entropy --potential V.npz --kinetic M.npz --sites region.txt
  arealaw <command> --help      options of one command
"""


def build_parser():
    parser = ArgumentParser(
        prog="arealaw", formatter_class=HelpFormatter, epilog=EPILOG,
        description="Ground-state entanglement of lattices of coupled harmonic oscillators.")
    parser.add_argument("--version", action="version", version=f"arealaw {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=ArgumentParser)
    for name in COMMAND_MODULES:
        importlib.import_module(f"{__name__}.{name}").register(sub)
    parser.commands = sub.choices  # command name -> its parser (for error hints)
    return parser


def main(argv=None):
    """Run the command line; returns the exit status."""
    parser = build_parser()
    args, extra = parser.parse_known_args(argv)
    if extra:  # reported by the command's own parser, which knows its options for a hint
        command = parser.commands.get(getattr(args, "command", None), parser)
        command.error(f"unrecognized arguments: {' '.join(extra)}")
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    prog = f"arealaw {args.command}"
    try:
        return int(args.func(args) or 0)
    except BrokenPipeError:
        # the reader (e.g. `| head`) has gone: stop quietly, and point stdout at /dev/null so
        # that the interpreter's final flush does not complain
        _silence_stdout()
        return 0
    except KeyboardInterrupt:
        print(f"{prog}: interrupted", file=sys.stderr)
        return 130
    except USER_ERRORS as exc:
        return fail(prog, exc)


def _silence_stdout():
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):  # stdout without a file descriptor (e.g. captured in tests)
        pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
