"""The ``curvewright`` command line: builds the parser from the command registry and runs one command.

Each command lives in its own module under ``app.commands``. Bad input exits with code 2 and a
one-paragraph ``error:`` message on stderr, never a traceback.
"""

from __future__ import annotations

import argparse
import os
import sys
import warnings

import core
from core.errors import CurvewrightError, NumericalWarning, ParameterError, message

from .commands import COMMANDS
from .commands.common import (EXIT_BAD_INPUT, STDOUT, Parser, describe_os_error, output_paths, parse_degrees,
                              parse_grid)

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
        _standard_output(args)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", NumericalWarning)
            code = run(args, out)
        _print_warnings(caught)
        return code
    except BrokenPipeError:           # the reader of standard output stopped early (e.g. `| head`)
        try:
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())   # no second error at exit
        except (OSError, ValueError, AttributeError):
            pass
        return 1
    except CurvewrightError as exc:   # before OSError: the refusal to overwrite is both
        _print_warnings(caught)
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:            # a file the system would not let us read or write
        print(f"error: {describe_os_error(exc, output_paths(args))}", file=sys.stderr)
        return EXIT_BAD_INPUT


# Output options that may be "-" (standard output), by command; for these commands --out prints to
# standard output when it is not given, so "-" means the same.
_TO_STDOUT = {"json": ("fit", "sweep", "learn", "check"), "out": ("apply", "schema")}


def _standard_output(args) -> None:
    """Let "-" mean standard output where a command offers it; refuse it (never a file named "-")
    for every other output option."""
    for option in ("json", "out", "save", "save_stats", "images"):
        if str(getattr(args, option, None)) != STDOUT:
            continue
        if args.command in _TO_STDOUT.get(option, ()):
            if option == "out" and args.command == "schema":
                args.out = None
            continue
        flag = "--" + option.replace("_", "-")
        raise ParameterError(message(f"Option {flag}", "a file name", repr(STDOUT),
                                     f"'{args.command}' writes {flag} to a file only"))


def _print_warnings(caught) -> None:
    """Numerical warnings once each, in the order they arose."""
    for w in dict.fromkeys(str(c.message) for c in caught if issubclass(c.category, NumericalWarning)):
        print(f"warning: {w}", file=sys.stderr)


if __name__ == "__main__":
    raise SystemExit(main())
