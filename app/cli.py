"""The ``curvewright`` command line: builds the parser from the command registry and runs one command.

Each command lives in its own module under ``app.commands``. Bad input exits with code 2 and a
one-paragraph ``error:`` message on stderr, never a traceback.
"""

from __future__ import annotations

import argparse
import sys
import warnings

import core
from core.errors import CurvewrightError, NumericalWarning

from .commands import COMMANDS
from .commands.common import EXIT_BAD_INPUT, Parser, describe_os_error, output_paths, parse_degrees, parse_grid

__all__ = ["EXIT_BAD_INPUT", "build_parser", "main", "parse_degrees", "parse_grid"]


def build_parser() -> argparse.ArgumentParser:
    """The top-level parser with one sub-parser per registered command."""
    p = Parser(prog="curvewright", description="Choose how flexible a fitted curve may be.")
    p.add_argument("--version", action="version", version=f"curvewright {core.__version__}")
    sub = p.add_subparsers(dest="command", required=True, parser_class=Parser)
    for module in COMMANDS.values():
        module.add_parser(sub)
    return p


def main(argv=None, out=None) -> int:
    """Run one command; returns its exit code (2 for bad input, with the message on stderr)."""
    out = out or sys.stdout
    args = build_parser().parse_args(argv)
    run = COMMANDS[args.command].run
    caught: list = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", NumericalWarning)
            code = run(args, out)
        _print_warnings(caught)
        return code
    except CurvewrightError as exc:   # before OSError: the refusal to overwrite is both
        _print_warnings(caught)
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:            # a file the system would not let us read or write
        print(f"error: {describe_os_error(exc, output_paths(args))}", file=sys.stderr)
        return EXIT_BAD_INPUT


def _print_warnings(caught) -> None:
    """Numerical warnings once each, in the order they arose."""
    for w in dict.fromkeys(str(c.message) for c in caught if issubclass(c.category, NumericalWarning)):
        print(f"warning: {w}", file=sys.stderr)


if __name__ == "__main__":
    raise SystemExit(main())
