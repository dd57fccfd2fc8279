"""``curvewright schema``: the choice file's JSON Schema, printed or written to a file."""

from __future__ import annotations

import json

from core.files import write_atomic

from .common import add_force, add_out


def add_parser(subparsers):
    p = subparsers.add_parser("schema", help="print the choice file's JSON Schema")
    add_out(p, help="write it to a file instead")
    add_force(p)
    return p


def run(args, out) -> int:
    from core.choice import SCHEMA

    text = json.dumps(SCHEMA, indent=2)
    if args.out:
        write_atomic(args.out, text + "\n", force=args.force)
    else:
        print(text, file=out)
    return 0
