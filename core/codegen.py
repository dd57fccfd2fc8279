"""Code that deploys a saved curve: C99, Python, a spreadsheet formula, or an x/y lookup table.

Every form evaluates the curve the choice file holds, in raw units (transforms included):

* **C99** and **Python** evaluate the stable form exactly as curvewright does: t = (u - center) /
  half_width, then Clenshaw's recurrence on the Legendre coefficients in numpy's order of
  operations, so they agree with ``curvewright apply`` to rounding (about 1e-15 relative).
* **spreadsheet**: one formula of a cell reference: Horner's rule in the centred-and-scaled
  variable (x - c) / s of the file's centred power form, which keeps the digits the choice file
  states (``model.power_form.centred.digits``); refused when fewer than 10 survive.
* **table**: x, y rows on a uniform step chosen so that linear interpolation between rows stays
  within a stated bound (default: a tenth of the smallest SD of one reading over the range; for an
  unweighted fit, of the residual SD). The step comes from the interpolation error bound
  h^2 / 8 max|f''| and is then checked on a dense grid; the bound and the measured worst error are
  written in the file.

Numbers are written with 17 significant digits, which round-trip a double exactly.
"""

from __future__ import annotations

import math

import numpy as np

from .errors import ParameterError, message

__all__ = ["c_source", "python_source", "spreadsheet_formula", "lookup_table", "test_vectors", "header_lines", "LANGS",
           "MAX_TABLE_ROWS"]

LANGS = ("c", "python", "spreadsheet", "table")
MAX_TABLE_ROWS = 200_000


def _num(v: float) -> str:
    return repr(float(v)) if math.isfinite(v) else "nan"


def header_lines(choice) -> list[str]:
    m = choice.doc["model"]
    tx, ty = choice.transforms
    lo, hi = choice.x_range
    lines = [f"curvewright curve, choice digest {choice.doc['digest']['value']}",
             f"degree {m['degree']}, lambda {m['lambda']:.6g} ({m['penalty']} penalty)",
             f"calibrated x range [{_num(lo)}, {_num(hi)}] ({choice.doc['data']['x_column']} -> "
             f"{choice.doc['data']['y_column']})"]
    if not (tx.identity and ty.identity):
        lines.append(f"fitted as {ty.label('y')} = polynomial in {tx.label('x')}"
                     + ("; the result is the median of y" if ty.name == "log" else ""))
    lines.append("Check it against the test vectors written beside it before use.")
    return lines


_C_FORWARD = {"none": "{v}", "log": "log({v})", "sqrt": "sqrt({v})", "reciprocal": "1.0 / {v}"}
_C_INVERSE = {"none": "{v}", "log": "exp({v})", "sqrt": "{v} * {v}", "reciprocal": "1.0 / {v}"}
_PY_FORWARD = {"none": "{v}", "log": "math.log({v})", "sqrt": "math.sqrt({v})", "reciprocal": "1.0 / {v}"}
_PY_INVERSE = {"none": "{v}", "log": "math.exp({v})", "sqrt": "{v} * {v}", "reciprocal": "1.0 / {v}"}
_XL_FORWARD = {"none": "{v}", "log": "LN({v})", "sqrt": "SQRT({v})", "reciprocal": "(1/{v})"}
_XL_INVERSE = {"none": "{v}", "log": "EXP({v})", "sqrt": "({v})^2", "reciprocal": "1/({v})"}


def c_source(choice, *, name: str = "curve_eval", range_guard: bool = False) -> str:
    """A C99 translation unit defining ``double name(double x)`` (and the range as macros)."""
    if not name.isidentifier():
        raise ParameterError(message("Option --name", "a C identifier (letters, digits, _)", repr(name)))
    tx, ty = choice.transforms
    dom = choice.domain
    coef = choice.legendre
    lo, hi = choice.x_range
    up = name.upper()
    out = ["/*"] + [f" * {line}" for line in header_lines(choice)] + [
        " * Evaluates the stable form: t = (u - center) / half_width, then Clenshaw's recurrence on the",
        " * Legendre coefficients. C99; link with -lm.", " */", "#include <math.h>", "",
        f"#define {up}_X_MIN {_num(lo)}", f"#define {up}_X_MAX {_num(hi)}", "",
        f"static const double {name}_coef[{coef.size}] = {{", *[f"    {_num(c)}," for c in coef], "};", "",
        f"double {name}(double x)", "{"]
    if range_guard:
        out += [f"    if (!(x >= {up}_X_MIN && x <= {up}_X_MAX)) return NAN;   /* outside the calibrated range */"]
    out += [f"    const double u = {_C_FORWARD[tx.name].format(v='x')};",
            f"    const double t = (u - {_num(dom.center)}) / {_num(dom.half_width)};"]
    out += _clenshaw_lines(coef.size, f"{name}_coef", "    ", c_style=True)
    out += [f"    return {_C_INVERSE[ty.name].format(v='v')};", "}", ""]
    return "\n".join(out)


def _clenshaw_lines(n: int, arr: str, ind: str, c_style: bool) -> list[str]:
    """numpy.polynomial.legendre.legval's recurrence, statement for statement (so the rounding matches)."""
    decl = "double " if c_style else ""
    semi = ";" if c_style else ""
    if n == 1:
        return [f"{ind}{'const double ' if c_style else ''}v = {arr}[0]{semi}"]
    lines = [f"{ind}{decl}c0 = {arr}[{n - 2}]{semi}", f"{ind}{decl}c1 = {arr}[{n - 1}]{semi}"]
    if n > 2:
        lines += [f"{ind}{decl}tmp{semi}" if c_style else f"{ind}tmp = 0.0", f"{ind}{decl}nd = {float(n)!r}{semi}"]
        if c_style:
            lines += [f"{ind}for (int i = 3; i <= {n}; i++) {{",
                      f"{ind}    tmp = c0;", f"{ind}    nd = nd - 1.0;",
                      f"{ind}    c0 = {arr}[{n} - i] - (c1 * (nd - 1.0)) / nd;",
                      f"{ind}    c1 = tmp + (c1 * t * (2.0 * nd - 1.0)) / nd;", f"{ind}}}"]
        else:
            lines += [f"{ind}for i in range(3, {n + 1}):", f"{ind}    tmp = c0", f"{ind}    nd = nd - 1.0",
                      f"{ind}    c0 = {arr}[{n} - i] - (c1 * (nd - 1.0)) / nd",
                      f"{ind}    c1 = tmp + (c1 * t * (2.0 * nd - 1.0)) / nd"]
    lines.append(f"{ind}{'const double ' if c_style else ''}v = c0 + c1 * t{semi}")
    return lines


def python_source(choice, *, name: str = "curve_eval", range_guard: bool = False) -> str:
    """One dependency-free Python function ``name(x) -> float`` (the math module only)."""
    if not name.isidentifier():
        raise ParameterError(message("Option --name", "a Python identifier", repr(name)))
    tx, ty = choice.transforms
    dom = choice.domain
    coef = choice.legendre
    lo, hi = choice.x_range
    doc = ["    \"\"\"" + header_lines(choice)[0] + "."] + [f"    {line}" for line in header_lines(choice)[1:]] + \
        ["    Stable form: t = (u - center) / half_width, Clenshaw's recurrence on Legendre coefficients.", "    \"\"\""]
    out = [f"def {name}(x):", *doc, "    import math", "",
           f"    coef = ({', '.join(_num(c) for c in coef)},)"]
    if range_guard:
        out += [f"    if not ({_num(lo)} <= x <= {_num(hi)}):", "        return math.nan  # outside the calibrated range"]
    out += [f"    u = {_PY_FORWARD[tx.name].format(v='x')}", f"    t = (u - {_num(dom.center)}) / {_num(dom.half_width)}"]
    out += _clenshaw_lines(coef.size, "coef", "    ", c_style=False)
    out += [f"    return {_PY_INVERSE[ty.name].format(v='v')}", ""]
    return "\n".join(out)


def spreadsheet_formula(choice, *, cell: str = "A1") -> str:
    """One formula of ``cell``: Horner's rule in (u - c) / s of the centred power form."""
    import re

    if not re.fullmatch(r"\$?[A-Z]{1,3}\$?[1-9][0-9]{0,6}", cell):
        raise ParameterError(message("Option --cell", "a cell reference such as A1 or $B$2", repr(cell)))
    cf = choice.doc["model"]["power_form"]["centred"]
    if cf["digits"] < 10:
        raise ParameterError(message("Spreadsheet formula", "a centred power form keeping 10 significant digits",
                                     f"{cf['digits']:g} digits", "Use --lang table or c/python (the stable form)"))
    tx, ty = choice.transforms
    u = _XL_FORWARD[tx.name].format(v=cell)
    t = f"(({u}-{_num(cf['center'])})/{_num(cf['scale'])})"
    b = [_num(v) for v in cf["coefficients"]]
    expr = b[-1]
    for c in reversed(b[:-1]):
        expr = f"{c}+{t}*({expr})"
    return "=" + _XL_INVERSE[ty.name].format(v=expr)


def _reading_sd_floor(choice, xs) -> float:
    return float(np.min(choice.prediction_sd(xs, "reading") - 0.0)) if choice.has_band else float("nan")


def lookup_table(choice, *, max_error: float | None = None) -> tuple[np.ndarray, np.ndarray, dict]:
    """(x, y, info) rows whose linear interpolation in x stays within ``max_error`` (y units) of the curve.

    Rows are equally spaced in the curve's own variable u = Tx(x) (in x itself without an x transform;
    in ln x for a log transform, which suits curves that are steep at one end). The row count starts from
    the interpolation bound h^2 / 8 max|f''| and grows until the error, measured at the quarter, half and
    three-quarter points of every interval, is within the bound.
    """
    lo, hi = choice.x_range
    tx = choice.transforms[0]
    ulo, uhi = choice.u_range
    if max_error is None:
        if not choice.has_band:
            raise ParameterError(message("Lookup table", "--max-error (no covariance to take a default from)",
                                         "none"))
        sd = choice.prediction_sd(tx.inverse(np.linspace(ulo, uhi, 2001)), "reading")
        max_error = 0.1 * float(np.min(sd))
        basis = "a tenth of the smallest SD of one reading over the range"
    else:
        basis = "as requested"
    if not (np.isfinite(max_error) and max_error > 0):
        raise ParameterError(message("Option --max-error", "a positive number", repr(max_error)))
    ug = np.linspace(ulo, uhi, 20_001)
    g = choice.predict(tx.inverse(ug))
    h = ug[1] - ug[0]
    curv = float(np.max(np.abs(np.diff(g, 2)))) / h ** 2 if g.size > 2 else 0.0
    n = 2 if curv == 0 else int(math.ceil((uhi - ulo) / math.sqrt(8 * max_error / curv))) + 1
    frac = np.array([0.25, 0.5, 0.75])
    while True:
        if n > MAX_TABLE_ROWS:
            raise ParameterError(message("Lookup table", f"at most {MAX_TABLE_ROWS:,} rows",
                                         f"more for an interpolation error of {max_error:.3g}",
                                         "Allow a larger error with --max-error, or deploy the C or Python code"))
        us = np.linspace(ulo, uhi, max(n, 2))
        xs = tx.inverse(us)
        xs[0], xs[-1] = (lo, hi) if xs[0] <= xs[-1] else (hi, lo)
        order = np.argsort(xs)
        xs = xs[order]
        ys = choice.predict(xs)
        probe = (xs[:-1, None] + frac * np.diff(xs)[:, None]).ravel()
        worst = float(np.max(np.abs(np.interp(probe, xs, ys) - choice.predict(probe))))
        if worst <= max_error:
            break
        n = int(n * 1.25) + 1
    return xs, ys, {"max_error": float(max_error), "bound_basis": basis, "measured_max_error": worst,
                    "rows": int(xs.size), "spacing": "equal steps in " + tx.label("x")}


def test_vectors(choice, points: int = 101) -> tuple[np.ndarray, np.ndarray]:
    """x across the calibrated range (both ends included) and the curve there, as ``apply`` gives it."""
    lo, hi = choice.x_range
    xs = np.linspace(lo, hi, points)
    return xs, choice.predict(xs)
