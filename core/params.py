"""One declarative table of parameter constraints, checked once at the public entry points.

Each public function calls ``check(name=value, ...)`` with its arguments; the
table below says what each name accepts, and every refusal has the same shape
("Parameter 'degree': expected an integer from 0 to 30, got 31."). Inner code
trusts what has passed here. Combinations of options (a penalty and its mix,
leave-one-out with other fold options) are checked by ``combination``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import SimpleNamespace

import numpy as np

from .defaults import MAX_DEGREE, MAX_GRID
from .errors import ParameterError, message

__all__ = ["check", "combination", "PENALTIES", "RULES"]

PENALTIES = ("ridge", "curvature", "lasso", "elastic")


def _is_int(v) -> bool:
    return isinstance(v, (int, np.integer)) and not isinstance(v, (bool, np.bool_))


@dataclass(frozen=True)
class Integer:
    lo: int
    hi: int | None = None

    @property
    def text(self) -> str:
        return f"an integer >= {self.lo}" if self.hi is None else f"an integer from {self.lo} to {self.hi}"

    def __call__(self, value):
        if not _is_int(value) or value < self.lo or (self.hi is not None and value > self.hi):
            return None
        return int(value)


@dataclass(frozen=True)
class Number:
    text: str
    lo: float = -math.inf
    hi: float = math.inf
    lo_open: bool = False
    hi_open: bool = False

    def __call__(self, value):
        if isinstance(value, (bool, np.bool_)):
            return None
        try:
            v = float(value)
        except (TypeError, ValueError):
            return None
        if not math.isfinite(v):
            return None
        if v < self.lo or (self.lo_open and v == self.lo) or v > self.hi or (self.hi_open and v == self.hi):
            return None
        return v


@dataclass(frozen=True)
class OneOf:
    options: tuple

    @property
    def text(self) -> str:
        quoted = [repr(o) for o in self.options]
        return ", ".join(quoted[:-1]) + " or " + quoted[-1] if len(quoted) > 1 else quoted[0]

    def __call__(self, value):
        return value if isinstance(value, str) and value in self.options else None


@dataclass(frozen=True)
class Values:
    """A 1-d array of numbers, each accepted by ``item``, of length 1..max_len (sorted unique)."""

    item: Number
    max_len: int
    text: str

    def __call__(self, value):
        try:
            arr = np.atleast_1d(np.asarray(value, dtype=float))
        except (TypeError, ValueError):
            return None
        if arr.ndim != 1 or not 1 <= arr.size <= self.max_len:
            return None
        it = self.item
        with np.errstate(invalid="ignore"):
            ok = np.isfinite(arr) & (arr >= it.lo) & (arr <= it.hi)
            if it.lo_open:
                ok &= arr != it.lo
            if it.hi_open:
                ok &= arr != it.hi
        return np.unique(arr) if ok.all() else None


@dataclass(frozen=True)
class Degrees:
    """A non-empty collection of integer degrees 0..MAX_DEGREE (sorted unique)."""

    text: str = f"integers from 0 to {MAX_DEGREE}"

    def __call__(self, value):
        if isinstance(value, range) and len(value) > MAX_DEGREE + 1:
            return None                      # cannot all lie in 0..MAX_DEGREE; never expanded
        try:
            items = np.atleast_1d(np.asarray(value)).tolist()
        except (TypeError, ValueError):
            return None
        if not items or not all(_is_int(d) and 0 <= d <= MAX_DEGREE for d in items):
            return None
        return np.unique(np.asarray(items, dtype=int))


@dataclass(frozen=True)
class Flag:
    text: str = "True or False"

    def __call__(self, value):
        return bool(value) if isinstance(value, (bool, np.bool_)) else None


_LAMBDA = Number("finite numbers >= 0", lo=0.0)

# name -> (name shown in messages, constraint)
RULES = {
    "degree": ("degree", Integer(0, MAX_DEGREE)),
    "max_degree": ("max_degree", Integer(0, MAX_DEGREE)),
    "degrees": ("degrees", Degrees()),
    "lam": ("lambda", _LAMBDA),
    "lambdas": ("lambda", Values(_LAMBDA, MAX_GRID, f"finite numbers >= 0 (at most {MAX_GRID} of them)")),
    "folds": ("folds", Integer(2, 1000)),
    "repeats": ("repeats", Integer(1, 1000)),
    "seed": ("seed", Integer(0, 2**63 - 1)),
    "test_fraction": ("test_fraction", Number("a number in [0, 1)", lo=0.0, hi=1.0, hi_open=True)),
    "penalty": ("penalty", OneOf(PENALTIES)),
    "mix": ("mix", Number("a number in (0, 1]", lo=0.0, hi=1.0, lo_open=True)),
    "sizes": ("sizes", Values(Number("", lo=0.0, hi=1.0, lo_open=True), 1000, "fractions in (0, 1]")),
    "B": ("B", Integer(10, 100_000)),
    "coverage": ("coverage", Number("a number between 0 and 1", lo=0.0, hi=1.0, lo_open=True, hi_open=True)),
    "noise_sd": ("noise_sd", Number("a finite number >= 0", lo=0.0)),
    "intercept": ("intercept", Flag()),
    "weight_kind": ("weight_kind", OneOf(("relative", "uncertainty"))),
    "chunk_rows": ("chunk_rows", Integer(1, 100_000_000)),
}


def check(**values) -> SimpleNamespace:
    """Validate arguments by name against ``RULES``; returns the normalized values.

    Raises
    ------
    ParameterError
        "Parameter '<name>': expected <what the table says>, got <value>."
    """
    out = {}
    for name, value in values.items():
        shown, rule = RULES[name]
        got = rule(value)
        if got is None:
            raise ParameterError(message(f"Parameter '{shown}'", rule.text, _shown(value)))
        out[name] = got
    return SimpleNamespace(**out)


def _shown(value) -> str:
    text = repr(value) if isinstance(value, str) else str(value)
    return text if len(text) <= 80 else text[:77] + "..."


def combination(*, penalty: str = "ridge", mix: float = 0.5, folds=None, repeats: int = 1,
                groups=None, fold_ids=None) -> float:
    """Check options that only make sense together; returns the penalty's L1 share.

    Ridge has share 0 and the lasso 1 (``mix`` is ignored for them); the elastic
    net takes ``mix`` in (0, 1]. Leave-one-out (``folds="loo"``) scores single
    rows through the hat matrix, which needs a penalty that keeps the fit linear
    in y and has no folds to repeat, group or give explicitly.
    """
    penalty = check(penalty=penalty).penalty
    share = {"ridge": 0.0, "curvature": 0.0, "lasso": 1.0}.get(penalty)
    if share is None:
        share = check(mix=mix).mix
    if isinstance(folds, str):
        if folds != "loo":
            raise ParameterError(message("Parameter 'folds'", "an integer k or 'loo'", repr(folds)))
        clash = [name for name, bad in (("penalty='%s'" % penalty, penalty not in ("ridge", "curvature")),
                                        (f"repeats={repeats}", repeats != 1),
                                        ("groups", groups is not None),
                                        ("fold_ids", fold_ids is not None)) if bad]
        if clash:
            raise ParameterError(message(
                "Leave-one-out (folds='loo')", "a ridge or curvature penalty with single rows as folds",
                ", ".join(clash),
                "Leave-one-out uses the hat-matrix shortcut, which holds for penalties that keep the fit "
                "linear in y and scores each row alone; use k-fold cross-validation for these options"))
    elif folds is not None and fold_ids is None:
        check(folds=folds)
    return share
