"""Is a recommended curve acceptable? Residual checks offered beside every recommendation.

For each pick (degree, lambda) of a surface:

* **What the penalty did**: the largest difference over the x range between the
  penalized curve and the unpenalized (least-squares) curve of the same degree, in
  units of that least-squares fit's residual SD. Informational: a penalty is meant to
  move a wiggly curve; a straight line moved by more than the noise has lost its gain.
* **Trend left in the residuals**: the runs test on the signs of the residuals ordered
  by x (Wald & Wolfowitz 1940, Ann. Math. Stat. 11, 147-162). With n+ and n- signs and
  R runs, mu = 2 n+ n- / n + 1 and var = (mu - 1)(mu - 2) / (n - 1); too few runs
  (one-sided normal p below ``ALPHA``) means a trend the curve missed.
* **Lack of fit** against pure error where x values repeat (``core.calibrate.lack_of_fit``).

A pick fails when either test's p-value is below ``ALPHA`` (0.01: our choice, stricter
than the common 0.05 so that a pass/fail flag is rarely a false alarm).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .calibrate import lack_of_fit

__all__ = ["PickCheck", "runs_test", "check_pick", "check_recommendations", "advice", "ALPHA"]

ALPHA = 0.01


def runs_test(residuals: np.ndarray) -> tuple[int, float, float] | None:
    """(runs, expected runs, one-sided p of so few runs) for residuals already ordered by x.

    Zero residuals carry no sign and are left out; None when fewer than two signs of each kind.
    """
    r = np.asarray(residuals, dtype=float)
    signs = np.sign(r[r != 0])
    n_pos, n_neg = int(np.sum(signs > 0)), int(np.sum(signs < 0))
    n = n_pos + n_neg
    if n_pos < 2 or n_neg < 2:
        return None
    runs = 1 + int(np.sum(signs[1:] != signs[:-1]))
    mu = 2.0 * n_pos * n_neg / n + 1.0
    var = (mu - 1.0) * (mu - 2.0) / (n - 1.0)
    p = float(stats.norm.cdf((runs - mu) / math.sqrt(var))) if var > 0 else 1.0
    return runs, mu, p


@dataclass(frozen=True)
class PickCheck:
    """The checks of one pick. ``passed`` is None when nothing could be tested (no rows)."""

    rule: str
    degree: int
    lam: float
    shift_sd: float | None
    runs: int | None = None
    runs_expected: float | None = None
    runs_p: float | None = None
    lack_of_fit: dict | None = None
    passed: bool | None = None
    reasons: tuple = field(default=())

    def summary(self) -> str:
        """One plain line: what the checks found."""
        parts = []
        if self.shift_sd is not None and self.lam > 0:
            parts.append(f"the penalty moves the curve by up to {self.shift_sd:.2g} residual SD from the "
                         f"least-squares curve of degree {self.degree}")
        if self.runs_p is not None:
            parts.append(f"residual signs form {self.runs} runs where about {self.runs_expected:.0f} are expected "
                         f"(p = {self.runs_p:.2g})")
        if self.lack_of_fit is not None:
            lof = self.lack_of_fit
            parts.append(f"lack of fit F = {lof['F']:.3g} on ({lof['df_lack']:g}, {lof['df_pure']:g}) df "
                         f"(p = {lof['p_value']:.2g})")
        verdict = {True: "passes", False: "fails", None: "not checked"}[self.passed]
        head = f"{self.rule} pick {verdict} the residual checks"
        if self.passed is False:
            head += " (" + "; ".join(self.reasons) + ")"
        return head + (": " + "; ".join(parts) if parts else ".")

    def to_dict(self) -> dict:
        return {"rule": self.rule, "degree": self.degree, "lambda": self.lam,
                "shift_sd": _finite(self.shift_sd), "runs": self.runs, "runs_expected": _finite(self.runs_expected),
                "runs_p": _finite(self.runs_p), "lack_of_fit": self.lack_of_fit, "passed": self.passed,
                "reasons": list(self.reasons)}


def _finite(v):
    return None if v is None or not math.isfinite(v) else float(v)


def check_pick(engine, rule: str, degree: int, lam: float, x=None, y=None, w=None) -> PickCheck:
    """Checks of one (degree, lambda) of ``engine``; ``x, y, w`` are the engine's training rows
    (without them only the penalty's shift is reported)."""
    lo = engine.domain.center - engine.domain.half_width
    grid = np.linspace(lo, lo + 2 * engine.domain.half_width, 401)
    shift = None
    if lam > 0:
        n, npar = engine.n_train, degree + (1 if engine.intercept else 0)
        if n > npar:
            sd = math.sqrt(float(engine.train_mse(degree, [0.0])[0]) * n / (n - npar))
            diff = np.max(np.abs(engine.curve(degree, lam)(grid) - engine.curve(degree, 0.0)(grid)))
            shift = float(diff / sd) if sd > 0 else (0.0 if diff == 0 else math.inf)
    else:
        shift = 0.0
    if x is None:
        return PickCheck(rule, degree, lam, shift)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    w = np.ones_like(x) if w is None else np.asarray(w, dtype=float)
    curve = engine.curve(degree, lam)
    resid = (y - curve(x)) * np.sqrt(w)
    order = np.argsort(x, kind="stable")
    rt = runs_test(resid[order])
    lof = lack_of_fit(x, y, curve, float(engine.effective_df(degree, [lam])[0]), weights=w)
    reasons = []
    if rt is not None and rt[2] < ALPHA:
        reasons.append(f"residuals trend with x: {rt[0]} runs where about {rt[1]:.0f} are expected")
    if lof is not None and lof["p_value"] < ALPHA:
        reasons.append(f"lack of fit against the scatter of repeated x (p = {lof['p_value']:.2g})")
    tested = rt is not None or lof is not None
    return PickCheck(rule, degree, lam, shift, *(rt if rt else (None, None, None)), lof,
                     (not reasons) if tested else None, tuple(reasons))


def check_recommendations(surface, x=None, y=None, w=None) -> dict:
    """``{rule: PickCheck}`` for the surface's recommendations (rows as for ``check_pick``)."""
    return {name: check_pick(surface.engine, name, rec.degree, rec.lam, x, y, w)
            for name, rec in surface.recommended.items()}


def advice(checks: dict) -> str:
    """Which rule to prefer, in one sentence, from the two picks' checks."""
    simple, low = checks.get("simplest"), checks.get("lowest")
    if simple is None or low is None or simple.passed is None:
        return "The residual checks need the rows; they were not run on statistics alone."
    if simple.passed:
        return "The simplest pick passes the residual checks: prefer it."
    if low.passed:
        return ("The simplest pick leaves structure in its residuals that the lowest-error pick does not: "
                "prefer the lowest-error pick.")
    return ("Neither pick leaves trend-free residuals: consider a higher degree, another penalty or a transform "
            "of x or y before trusting either.")
