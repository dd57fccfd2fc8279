"""A choice file is tamper-evident as a whole: a digest over its content and consistency checks.

* ``digest``: SHA-256 of the canonical JSON (sorted keys, no spaces, floats written so that
  they read back exactly) of every field but the free-text ``notes`` and the digest itself.
  Any edit to a number (a coefficient, the domain, a covariance, a CV error, the sealed record)
  changes it; the file is then refused, naming the digest, and nothing is computed from it.
* the coefficient count matches the degree; the raw-x power form and the centred power form
  equal the stable Legendre form (evaluated exactly, in rational arithmetic, at points across
  the data range, to 1e-9 of the curve's size); the covariance is square of the right size,
  symmetric and positive semi-definite; cv_rmse is the square root of cv_mse.
"""

from __future__ import annotations

import hashlib
import json
import math
from fractions import Fraction

import numpy as np

from .basis import Domain
from .curve import Curve
from .errors import DataError, message
from .transforms import get as get_transform

__all__ = ["content_digest", "check_integrity"]


def content_digest(doc: dict) -> str:
    """SHA-256 (hex) of the canonical JSON of every field but ``notes`` and ``digest``."""
    body = {k: v for k, v in doc.items() if k not in ("notes", "digest")}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), allow_nan=False, ensure_ascii=True)
    return hashlib.sha256(text.encode("ascii")).hexdigest()


def _refuse(field: str, expected: str, got, fix: str = "The file has been edited; export the choice again"):
    raise DataError(message(f"Choice file field '{field}'", expected, got, fix))


def _exact_poly(coef, x: float) -> Fraction:
    acc = Fraction(0)
    for c in reversed(list(coef)):
        acc = acc * Fraction(x) + Fraction(c)
    return acc


def check_integrity(doc: dict) -> None:
    """Refuse a schema-valid document whose parts disagree with each other or with its digest."""
    m, v = doc["model"], doc["validation"]
    d = m["degree"]
    if len(m["legendre_coefficients"]) != d + 1:
        _refuse("model/legendre_coefficients", f"{d + 1} numbers for degree {d}", len(m["legendre_coefficients"]))
    powers = sorted(r["power"] for r in m["power_coefficients"])
    if powers != list(range(0 if m["intercept"] else 1, d + 1)):
        _refuse("model/power_coefficients", f"one row for each power up to {d}", f"powers {powers}")
    dom = Domain(float(m["domain"]["center"]), float(m["domain"]["half_width"]))
    curve = Curve(dom, m["legendre_coefficients"], through_origin=not m["intercept"])
    lo, hi = sorted(get_transform(m["transforms"]["x"]).forward(np.asarray(doc["data"]["x_range"], dtype=float)))
    xs = np.linspace(lo, hi, 9)
    ref = curve(xs)
    scale = max(float(np.max(np.abs(ref))), 1e-300)
    raw = [0.0] * (d + 1)
    for r in m["power_coefficients"]:
        raw[r["power"]] = r["value"]
    cf = m["power_form"]["centred"]
    for field, coef, shift, div in (("model/power_coefficients", raw, 0.0, 1.0),
                                    ("model/power_form/centred", cf["coefficients"], cf["center"], cf["scale"])):
        s = [(x - shift) / div if div != 1.0 or shift else x for x in xs.tolist()]
        worst = max(abs(float(_exact_poly(coef, v)) - f) for v, f in zip(s, ref.tolist()))
        # what rounding each stored coefficient to double precision can move the curve by (large for a raw
        # power form of offset x, whose terms cancel), plus a margin
        rounding = max(float(sum(abs(a) * abs(v) ** k for k, a in enumerate(coef))) for v in s) * 8e-16
        if worst > 1e-9 * scale + rounding:
            _refuse(f"model/legendre_coefficients' and '{field}", "the same curve from both forms",
                    f"curves differing by up to {worst:.3g}")
    u = m["uncertainty"]
    if u is not None:
        rows = u["legendre_covariance"]
        if len(rows) != d + 1 or any(len(r) != d + 1 for r in rows):
            _refuse("model/uncertainty/legendre_covariance", f"a {d + 1} x {d + 1} matrix",
                    f"{len(rows)} rows of lengths {sorted({len(r) for r in rows})}")
        cov = np.asarray(rows, dtype=float)
        table = u["reading"]["u_table"]
        if table is not None and len(table["x"]) != len(table["u"]):
            _refuse("model/uncertainty/reading/u_table", "as many u values as x values",
                    f"{len(table['u'])} and {len(table['x'])}")
        if not np.allclose(cov, cov.T, rtol=1e-12, atol=0.0):
            _refuse("model/uncertainty/legendre_covariance", "a symmetric matrix", "an unsymmetric one")
        ev = np.linalg.eigvalsh(cov)
        if ev.min() < -1e-10 * max(float(ev.max()), 1e-300):
            _refuse("model/uncertainty/legendre_covariance", "a positive semi-definite matrix",
                    f"an eigenvalue of {ev.min():.3g}")
    if not math.isclose(v["cv_rmse"], math.sqrt(v["cv_mse"]), rel_tol=1e-9):
        _refuse("validation/cv_rmse", "the square root of cv_mse", v["cv_rmse"])
    # last: any other edit (the specific checks above name the field where they can)
    if doc.get("digest", {}).get("value") != content_digest(doc):
        _refuse("digest", "the SHA-256 of the file's content", "a different value")
