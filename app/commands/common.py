"""Pieces several commands share: the parser's error shape, argument groups, grid parsing,
reading a table with its notes, number formatting, the progress line and file-error wording."""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
from pathlib import Path

import numpy as np

from core import defaults
from core.errors import ParameterError, message
from core.files import write_atomic
from core.table import exclude_rows, read_table, transform_table

__all__ = [
    "EXIT_BAD_INPUT", "OUTPUT_OPTIONS", "STDOUT", "Parser", "Progress", "add_blank_rows", "add_data_args",
    "add_degree_lambda", "add_fold_args", "add_folds", "add_force", "add_json", "add_out", "add_penalty_args",
    "add_reader_args", "add_repeats", "add_seed", "add_sheet", "add_transform_args", "check_cells", "describe_os_error", "fmt",
    "load_rows", "output_paths", "parse_degrees", "parse_grid", "read_data", "reader_options", "text_out",
    "write_json", "write_output",
]

EXIT_BAD_INPUT = 2

# Options naming a file or folder a command writes; every other path a command opens is read.
OUTPUT_OPTIONS = ("json", "out", "save", "save_stats", "images", "report")
STDOUT = "-"         # as an output path: write to standard output instead of a file


class Parser(argparse.ArgumentParser):
    """An argument parser whose own errors also exit 2 with the ``error:`` line shape."""

    def error(self, text):
        self.print_usage(sys.stderr)
        sys.stderr.write(f"error: {text}\n")
        raise SystemExit(EXIT_BAD_INPUT)


# ---- option values ---------------------------------------------------------------------------

def parse_degrees(spec: str) -> list[int]:
    """'0-15', '3', '1,2,5' or '2-4,8' -> sorted degrees."""
    top = defaults.MAX_DEGREE
    pairs = []
    try:
        for part in str(spec).split(","):
            part = part.strip()
            a, _, b = part.partition("-") if "-" in part[1:] else (part, "", part)
            pairs.append((int(a), int(b)))
    except ValueError:
        raise ParameterError(message("Option --degrees", "a range like 0-15 or a list like 1,2,5", repr(spec))) from None
    out = set()
    for a, b in pairs:
        if not (0 <= a <= top and 0 <= b <= top):     # bounds first: never build a huge range
            raise ParameterError(message("Option --degrees", f"degrees from 0 to {top}", repr(spec)))
        if b < a:
            raise ParameterError(message("Option --degrees", "ranges written low-high, like 0-15", repr(spec)))
        out.update(range(a, b + 1))
    return sorted(out)


def parse_grid(spec: str, *, log: bool, option: str) -> np.ndarray:
    """'START:STOP:COUNT' -> a log (or linear) grid; a single number -> that number."""
    try:
        parts = [float(p) for p in str(spec).split(":")]
    except ValueError:
        raise ParameterError(message(f"Option {option}", "START:STOP:COUNT or one number", repr(spec))) from None
    if len(parts) == 1:
        return np.array(parts)
    if len(parts) != 3 or not all(map(math.isfinite, parts)) or parts[2] != int(parts[2]) or parts[2] < 1:
        raise ParameterError(message(f"Option {option}", "START:STOP:COUNT with a whole COUNT", repr(spec)))
    if parts[2] > defaults.MAX_GRID:
        raise ParameterError(message(f"Option {option}", f"a COUNT of at most {defaults.MAX_GRID}", repr(spec)))
    a, b, c = parts
    if log:
        if a <= 0 or b <= 0:
            raise ParameterError(message(f"Option {option}", "positive START and STOP for a log grid (add 0 with --with-zero)", repr(spec)))
        return np.logspace(math.log10(a), math.log10(b), int(c))
    return np.linspace(a, b, int(c))


# ---- argument groups -------------------------------------------------------------------------
# Each helper adds its options in a fixed order: the order is what `--help` and usage lines show.

def add_blank_rows(p):
    p.add_argument("--blank-rows", choices=["refuse", "skip"], default="refuse",
                   help="rows with a blank selected cell: refuse the file (default) or skip them (recorded)")


def add_sheet(p, help=None):
    p.add_argument("--sheet", help=help)


def add_reader_args(p):
    """How the data file is read: --sheet, --no-header, --skip-rows, --comment."""
    add_sheet(p, help="worksheet of an .xlsx file (default: the first)")
    p.add_argument("--no-header", action="store_true",
                   help="the first row is data, not column names; columns are then named 1, 2, ...")
    p.add_argument("--skip-rows", type=int, default=0, metavar="N",
                   help="leave out N lines (sheet rows) above the header; they still count in row numbers")
    p.add_argument("--comment", metavar="CHAR",
                   help="leave out lines that start with CHAR (e.g. '#'); they still count in row numbers")


def reader_options(args) -> dict:
    """The reader keywords of ``core.table.read_table`` from the parsed options."""
    return {"sheet": args.sheet, "header": not args.no_header, "skip_rows": args.skip_rows,
            "comment": args.comment}


def add_data_args(p, need_y=True):
    """The data file and its columns: data, --x, --y, --weights, --uncertainty, --blank-rows, --sheet,
    --no-header, --skip-rows, --comment, --through-origin, --exclude."""
    p.add_argument("data", help="CSV/TSV, .xlsx or .parquet file with a header row")
    p.add_argument("--x", required=True, help="x column (name or 1-based position)")
    if need_y:
        p.add_argument("--y", required=True, help="response column (name or 1-based position)")
    p.add_argument("--weights", help="weight column (positive)")
    p.add_argument("--uncertainty", help="standard-uncertainty column u (weight = 1/u^2)")
    add_blank_rows(p)
    add_reader_args(p)
    p.add_argument("--through-origin", action="store_true", help="fit a curve through the origin (no constant term)")
    p.add_argument("--exclude", default="", help="spreadsheet rows to leave out, e.g. 7,19 (recorded)")
    add_transform_args(p)


def add_transform_args(p):
    """--x-transform and --y-transform: fit the polynomial in transformed variables (recorded)."""
    from core.transforms import NAMES

    p.add_argument("--x-transform", choices=NAMES, default="none",
                   help="fit in ln(x), 1/x or sqrt(x) instead of x (e.g. 1/T for a thermistor); recorded")
    p.add_argument("--y-transform", choices=NAMES, default="none",
                   help="fit ln(y), 1/y or sqrt(y) instead of y; predictions are mapped back (under log, the "
                        "median of y); recorded")


def add_degree_lambda(p):
    """One configuration: --degree (required) and --lambda (stored as ``lam``)."""
    p.add_argument("--degree", type=int, required=True)
    p.add_argument("--lambda", dest="lam", type=float, default=0.0)


def add_penalty_args(p):
    p.add_argument("--penalty", choices=["curvature", "ridge", "lasso", "elastic"], default=defaults.PENALTY,
                   help="curvature (default): penalize the curve's bending, never its slope; ridge, lasso, "
                        "elastic: penalize the standardized power coefficients")
    p.add_argument("--mix", type=float, default=0.5, help="elastic net: share of the L1 term")


def add_folds(p):
    p.add_argument("--folds", type=int, default=defaults.FOLDS)


def add_repeats(p, default):
    p.add_argument("--repeats", type=int, default=default)


def add_seed(p):
    p.add_argument("--seed", type=int, default=defaults.SEED)


def add_fold_args(p, repeats):
    """--folds, --repeats and --seed together, for commands that take them in a row."""
    add_folds(p)
    add_repeats(p, repeats)
    add_seed(p)


def add_json(p, help=None):
    p.add_argument("--json", help=(help or "write the result as JSON here") + " ('-': standard output, and the "
                   "printed text goes to standard error)")


def add_out(p, help=None, default=None):
    p.add_argument("--out", default=default, help=help)


def check_cells(options: str, counts: dict) -> None:
    """Refuse, before any work, a request whose product of counts exceeds ``defaults.MAX_CELLS``."""
    total = math.prod(counts.values())
    if total > defaults.MAX_CELLS:
        raise ParameterError(message(
            f"Options {options}", f"at most {defaults.MAX_CELLS:,} cells to score "
            f"({' x '.join(counts)})", " x ".join(f"{v:,}" for v in counts.values()) + f" = {total:,}",
            "Use fewer " + ", ".join(list(counts)[:-1]) + " or " + list(counts)[-1]))


def add_force(p, help=None):
    p.add_argument("--force", action="store_true", help=help)


# ---- reading and writing ---------------------------------------------------------------------

def read_data(args, extra=None):
    """The table named by the data-file arguments; exclusions, notes and dropped rows go to stderr."""
    table = read_table(args.data, x=args.x, y=args.y, weights=args.weights,
                       uncertainty=args.uncertainty, blank_rows=args.blank_rows, **reader_options(args),
                       **(extra or {}))
    if getattr(args, "exclude", ""):
        try:
            rows = [int(v) for v in args.exclude.split(",") if v.strip()]
        except ValueError:
            raise ParameterError(message("Option --exclude", "row numbers like 7,19", repr(args.exclude))) from None
        table = exclude_rows(table, rows)
        print(f"note: excluded row(s) {', '.join(map(str, table.excluded_rows))} on request "
              "(recorded in outputs).", file=sys.stderr)
    for note in table.notices:
        print(f"note: {note}", file=sys.stderr)
    if table.rows_dropped:
        print(f"note: skipped {len(table.rows_dropped)} row(s) with blank cells "
              f"(rows {', '.join(map(str, table.rows_dropped[:10]))}"
              f"{' ...' if len(table.rows_dropped) > 10 else ''}).", file=sys.stderr)
    table = transform_table(table, getattr(args, "x_transform", "none"), getattr(args, "y_transform", "none"))
    if table.transforms != ("none", "none"):
        from core.transforms import get

        tx, ty = (get(n) for n in table.transforms)
        print(f"note: fitting {ty.label(table.y.name if table.y else 'y')} as a polynomial in "
              f"{tx.label(table.x.name)}; errors and residuals are in those units"
              + (" (back-transformed predictions are medians of y)" if ty.name == "log" else "") + ".",
              file=sys.stderr)
    return table


def load_rows(args, y=None, *, frame=False, weights=None, uncertainty=None):
    """Validated x (and y, and a weight or uncertainty column) of the data file (notes to stderr), plus,
    with ``frame``, every column of the kept rows (for apply's output), matched by spreadsheet row."""
    from core.table import read_frame

    t = read_table(args.data, x=args.x, y=y, weights=weights, uncertainty=uncertainty, blank_rows=args.blank_rows,
                   require_spread=False, **reader_options(args))
    for note in t.notices:
        print(f"note: {note}", file=sys.stderr)
    if t.rows_dropped:
        print(f"note: skipped {len(t.rows_dropped)} row(s) with blank cells "
              f"(rows {', '.join(map(str, t.rows_dropped[:10]))}{' ...' if len(t.rows_dropped) > 10 else ''}).",
              file=sys.stderr)
    if not frame:
        return t, None
    rows, _ = read_frame(args.data, **reader_options(args))
    return t, rows.loc[t.row_numbers].reset_index(drop=True)


def write_output(path, text: str, *, force: bool, out) -> Path | None:
    """``text`` to the file ``path`` (atomic; refuses to overwrite unless ``force``), or to ``out``
    when ``path`` is "-"; returns the path written, None for standard output."""
    if str(path) == STDOUT:
        out.write(text if text.endswith("\n") else text + "\n")
        out.flush()
        return None
    return write_atomic(path, text, force=force)


def write_json(path, doc, *, force: bool, out=None) -> Path | None:
    """``doc`` as indented JSON at ``path`` (atomic; refuses to overwrite unless ``force``), or on
    standard output for "-"."""
    return write_output(path, json.dumps(doc, indent=2), force=force, out=out or sys.stdout)


def text_out(args, out):
    """Where a command prints its text: ``out``, or stderr when --json sends the JSON to standard output."""
    return sys.stderr if str(getattr(args, "json", None)) == STDOUT else out


def output_paths(args) -> list[str]:
    """The paths a parsed command line writes to (the options in OUTPUT_OPTIONS that it has)."""
    return [str(v) for v in (getattr(args, k, None) for k in OUTPUT_OPTIONS) if v and str(v) != STDOUT]


def describe_os_error(exc: OSError, outputs=()) -> str:
    """The ``error:`` text for a path the operating system refused (permissions, a folder, ...).

    A path that is one of ``outputs``, the hidden temporary written beside one, or a hidden
    temporary inside an output folder is reported as that output; any other path was being read.
    """
    path = exc.filename2 if exc.filename2 is not None else exc.filename
    if path is None:
        return message("A file, folder or network address", "one that can be used",
                       str(exc) or type(exc).__name__)
    path = os.fsdecode(path)
    output, into_folder = _output_for(path, outputs)
    if isinstance(exc, IsADirectoryError):
        got, fix = "a folder", ("Give a file name inside the folder" if output else "Give the path of a file")
    elif isinstance(exc, PermissionError):
        got, fix = "permission denied", ("Choose a folder you may write to, or change its permissions" if output
                                         else "Change the file's permissions or copy it somewhere readable")
    elif isinstance(exc, NotADirectoryError):
        got, fix = "a path through something that is not a folder", "Check the path"
    elif isinstance(exc, FileNotFoundError):
        got, fix = "nothing at that path", "Check the path"
    else:
        got, fix = (exc.strerror or str(exc) or type(exc).__name__).lower(), "Check the path"
    if output:
        what = "a folder that can be written into" if into_folder else "a file that can be written"
        return message(f"Output '{output}'", what, got, fix)
    return message(f"File '{path}'", "a file that can be read", got, fix)


def _output_for(path: str, outputs) -> tuple[str | None, bool]:
    """(the output ``path`` belongs to or None, whether that output is a folder written into)."""
    p = Path(os.path.abspath(path))
    for out in outputs:
        o = Path(os.path.abspath(out))
        if p == o or (p.parent == o.parent and p.name.startswith(f".{o.name}.")):
            return out, False
        if p.parent == o and p.name.startswith("."):
            return out, True
    return None, False


# ---- printing --------------------------------------------------------------------------------

def fmt(v) -> str:
    """A number with 10 significant digits; '-' for none, NaN or infinity."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    return f"{v:.10g}"


class Progress:
    """Rows done, rate and time left on one terminal line (stderr)."""

    def __init__(self):
        self.last = 0.0

    def __call__(self, done, total, seconds):
        if seconds - self.last < 0.5 and done < total:
            return
        self.last = seconds
        rate = done / seconds if seconds > 0 else float("inf")
        left = (total - done) / rate if rate > 0 else 0.0
        sys.stderr.write(f"\rstatistics: {done:,}/{total:,} rows, {rate:,.0f} rows/s, {left:.0f} s left   ")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()
