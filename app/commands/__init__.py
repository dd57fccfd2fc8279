"""The ``curvewright`` commands: one module per command, registered here in the order the
command line lists them.

Each module exposes ``add_parser(subparsers)``, which adds the command's sub-parser and returns
it, and ``run(args, out) -> int``, which does the work, prints to ``out`` (notes and warnings to
stderr) and returns the exit code. Shared argument groups and helpers live in ``common``.
"""

from __future__ import annotations

from importlib import import_module

__all__ = ["COMMANDS"]

# Command name -> module. The order is the order of `curvewright --help`.
COMMANDS = {name: import_module(f"{__name__}.{name}")
            for name in ("fit", "sweep", "learn", "apply", "invert", "check", "code", "report", "schema", "open")}
