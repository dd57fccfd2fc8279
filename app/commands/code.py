"""``curvewright code``: code that deploys a saved curve (C99, Python, a spreadsheet formula or a lookup
table), with a test-vector CSV beside it (x and the value ``curvewright apply`` gives there)."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from core.codegen import LANGS

from .common import STDOUT, add_force, add_out, write_output


def add_parser(subparsers):
    p = subparsers.add_parser("code", help="write code that evaluates a saved curve (C, Python, spreadsheet, table)")
    p.add_argument("choice", help="choice file (JSON)")
    p.add_argument("--lang", choices=LANGS, required=True,
                   help="c: a C99 function; python: one dependency-free function; spreadsheet: one formula of a "
                        "cell; table: x/y rows for linear interpolation within a stated error")
    add_out(p, help="file to write (default, or '-': standard output); test vectors go beside it as "
                    "<name>.vectors.csv")
    p.add_argument("--name", default="curve_eval", help="function name for c and python (default curve_eval)")
    p.add_argument("--range-guard", action="store_true",
                   help="c and python: return NaN outside the calibrated x range instead of extrapolating")
    p.add_argument("--cell", default="A1", help="spreadsheet: the cell holding x (default A1)")
    p.add_argument("--max-error", type=float,
                   help="table: largest interpolation error allowed, in y units (default: a tenth of the smallest "
                        "SD of one reading over the range)")
    add_force(p, help="overwrite existing output files")
    return p


def run(args, out) -> int:
    from core.choice import Choice
    from core import codegen

    c = Choice.load(args.choice)
    for note in c.notices:
        print(f"note: {note}", file=sys.stderr)
    if args.lang == "c":
        text = codegen.c_source(c, name=args.name, range_guard=args.range_guard)
    elif args.lang == "python":
        text = codegen.python_source(c, name=args.name, range_guard=args.range_guard)
    elif args.lang == "spreadsheet":
        text = codegen.spreadsheet_formula(c, cell=args.cell) + "\n"
    else:
        text, info = _table_text(c, args.max_error)
        print(f"note: {info['rows']} rows, {info['spacing']}: linear interpolation stays within "
              f"{info['max_error']:.3g} ({info['bound_basis']}; measured worst {info['measured_max_error']:.3g}).",
              file=sys.stderr)
    to_file = args.out and args.out != STDOUT
    vec_path = None
    if to_file:
        vec_path = Path(args.out).with_name(Path(args.out).stem + ".vectors.csv")
        if os.path.lexists(vec_path) and not args.force:      # refuse before writing anything
            from core.errors import message
            from core.files import FileExistsRefused

            raise FileExistsRefused(message(f"Output '{vec_path}' (the test vectors)", "a path that does not exist yet",
                                            "an existing file", "Choose another name or pass --force to overwrite"))
    write_output(args.out or STDOUT, text, force=args.force, out=out)
    if to_file:
        xs, ys = codegen.test_vectors(c)
        write_output(vec_path, "x,expected\n" + "".join(f"{a!r},{b!r}\n" for a, b in zip(xs.tolist(), ys.tolist())),
                     force=args.force, out=out)
        print(f"wrote {args.lang} code to {args.out} and {xs.size} test vectors to {vec_path}", file=sys.stderr)
    else:
        print("note: test vectors are written beside the code when --out names a file.", file=sys.stderr)
    if c.transforms[1].name == "log":
        print("note: the curve was fitted to ln(y): the code returns the median of y at x.", file=sys.stderr)
    return 0


def _table_text(c, max_error):
    from core import codegen

    xs, ys, info = codegen.lookup_table(c, max_error=max_error)
    head = [f"# {line}" for line in codegen.header_lines(c)]
    head.append(f"# linear interpolation between rows stays within {info['max_error']!r} "
                f"({info['bound_basis']}; measured worst {info['measured_max_error']!r}); rows in "
                f"{info['spacing']}")
    rows = "".join(f"{a!r},{b!r}\n" for a, b in zip(xs.tolist(), ys.tolist()))
    return "\n".join(head) + "\nx,y\n" + rows, info
