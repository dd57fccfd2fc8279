"""The choice file: one JSON document with everything to reproduce and audit a chosen curve.

Loading refuses NaN/Infinity literals, validates against the schema
(``core.choice_schema``, shipped as ``choice_schema.json``) with the jsonschema
library, then checks that the numbers agree with each other (degree vs
coefficient count); loading never runs code and never unpickles. Files written
by curvewright 0.1 (format version 1) are read with today's names
(``core.choice_legacy``) and say so in ``notices``. Predictions use the stable
Legendre form (``core.curve.Curve``) from the stored floats, so a loaded choice
predicts bit for bit what the in-memory fit predicted.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .basis import Domain
from .choice_legacy import upgrade_v1
from .choice_schema import FORMAT, VERSION, schema
from .curve import Curve
from .errors import DataError, message
from .files import write_atomic
from .fit import band_limits

__all__ = ["Choice", "SCHEMA", "FORMAT", "VERSION", "build_choice", "make_choice", "rule_of", "score"]

SCHEMA = schema()


def _field(err) -> str:
    path = "/".join(str(p) for p in err.absolute_path)
    return path or "(top level)"


def _refuse_constant(name: str):
    raise DataError(message("Choice file", "finite numbers (JSON has no NaN or Infinity)", name))


@dataclass(frozen=True)
class Choice:
    """A validated choice document (``doc`` is the parsed JSON, always in today's version).

    ``notices`` says what was done to read it (for example, an older version mapped).
    """

    doc: dict
    notices: tuple = ()

    @classmethod
    def from_dict(cls, doc) -> "Choice":
        import jsonschema

        if not isinstance(doc, dict):
            raise DataError(message("Choice file", "a JSON object", type(doc).__name__))
        notices = ()
        if doc.get("format") == FORMAT and doc.get("version") == 1:
            doc = upgrade_v1(doc)
            notices = ("This choice file was written by curvewright 0.1 (format version 1); it was read with "
                       "today's names (rules 'lowest'/'simplest', coefficient rows power/value/standard_error). "
                       "Every number is as written.",)
        elif doc.get("format") == FORMAT and doc.get("version") != VERSION:
            raise DataError(message("Choice file field 'version'", f"1 or {VERSION}", repr(doc.get("version")),
                                    "This file was written by another version of curvewright"))
        errors = sorted(jsonschema.Draft202012Validator(SCHEMA).iter_errors(doc), key=lambda e: list(e.absolute_path))
        if errors:
            e = errors[0]
            raise DataError(message(f"Choice file field '{_field(e)}'", "a value matching the schema",
                                    e.message[:200]))
        m = doc["model"]
        if len(m["legendre_coefficients"]) != m["degree"] + 1:
            raise DataError(message("Choice file field 'model/legendre_coefficients'",
                                    f"{m['degree'] + 1} numbers for degree {m['degree']}",
                                    len(m["legendre_coefficients"])))
        v = doc["validation"]
        if not math.isclose(v["cv_rmse"], math.sqrt(v["cv_mse"]), rel_tol=1e-9):
            raise DataError(message("Choice file field 'validation/cv_rmse'", "the square root of cv_mse",
                                    v["cv_rmse"], "The file has been edited; re-export it"))
        return cls(doc, notices)

    @classmethod
    def from_json(cls, text: str) -> "Choice":
        try:
            doc = json.loads(text, parse_constant=_refuse_constant)
        except json.JSONDecodeError as exc:
            raise DataError(message("Choice file", "valid JSON", f"{exc.msg} at line {exc.lineno}")) from None
        return cls.from_dict(doc)

    @classmethod
    def load(cls, path) -> "Choice":
        p = Path(path)
        if not p.is_file():
            raise DataError(message(f"Choice file '{p}'", "an existing file", "nothing at that path"))
        try:
            text = p.read_bytes().decode("utf-8")
        except UnicodeDecodeError:
            raise DataError(message("Choice file", "valid JSON", "bytes that are not UTF-8 text")) from None
        return cls.from_json(text)

    @property
    def domain(self) -> Domain:
        d = self.doc["model"]["domain"]
        return Domain(float(d["center"]), float(d["half_width"]))

    @property
    def legendre(self) -> np.ndarray:
        return np.array(self.doc["model"]["legendre_coefficients"], dtype=float)

    @property
    def curve(self) -> Curve:
        """The saved curve in the stable form."""
        return Curve(self.domain, self.legendre, through_origin=not self.doc["model"]["intercept"])

    @property
    def x_range(self) -> tuple[float, float]:
        lo, hi = self.doc["data"]["x_range"]
        return float(lo), float(hi)

    @property
    def has_band(self) -> bool:
        """Whether the file carries what a band needs (the coefficient covariance)."""
        return self.doc["model"]["uncertainty"] is not None

    def predict(self, x, band: str | None = None, coverage: float = 0.95):
        """Predictions at raw x from the stable form (bit-identical to the fit's).

        ``band`` ("curve": where the curve lies; "reading": where one new reading lies)
        is available for choices that store the coefficient covariance; returns
        (prediction, low, high).
        """
        yhat = self.curve(x)
        if band is None:
            return yhat
        t = self.domain.map(np.asarray(x, dtype=float))
        u = self.doc["model"]["uncertainty"]
        cov = None if u is None else np.array(u["legendre_covariance"], dtype=float)
        sd = None if u is None else u["residual_sd"]
        df = None if u is None else u["residual_df"]
        return (yhat, *band_limits(yhat, t, cov, sd, df, band, coverage))

    def to_sklearn(self):
        """A fitted scikit-learn Pipeline predicting the same curve.

        ``PolynomialFeatures(d, include_bias=False) -> StandardScaler -> Ridge``
        with the scaler set to the identity and the ridge holding the raw-x power
        coefficients, so it evaluates a0 + a1 x + ... + ad x^d. Raw powers round
        for x far from zero or high degree, so agreement with ``predict`` is to
        float rounding of that power form, not bit for bit.
        """
        from sklearn.linear_model import Ridge
        from sklearn.pipeline import Pipeline
        from sklearn.preprocessing import PolynomialFeatures, StandardScaler

        m = self.doc["model"]
        d = m["degree"]
        a = np.zeros(d + 1)
        for row in m["power_coefficients"]:
            a[row["power"]] = row["value"]
        X0 = np.zeros((1, 1))
        poly = PolynomialFeatures(max(d, 1), include_bias=False).fit(X0)
        n_feat = max(d, 1)
        scaler = StandardScaler()
        scaler.mean_ = np.zeros(n_feat)
        scaler.scale_ = np.ones(n_feat)
        scaler.var_ = np.ones(n_feat)
        scaler.n_features_in_ = n_feat
        scaler.n_samples_seen_ = int(self.doc["data"]["rows_used"])
        ridge = Ridge(alpha=m["lambda"], fit_intercept=True)
        ridge.coef_ = a[1:] if d >= 1 else np.zeros(1)
        ridge.intercept_ = float(a[0])
        ridge.n_features_in_ = n_feat
        return Pipeline([("polynomialfeatures", poly), ("standardscaler", scaler), ("ridge", ridge)])

    def to_dict(self) -> dict:
        return json.loads(json.dumps(self.doc))

    def to_json(self) -> str:
        return json.dumps(self.doc, indent=2, allow_nan=False)

    def save(self, path, *, force: bool = False) -> Path:
        return write_atomic(path, self.to_json() + "\n", force=force)


def make_choice(x, y, surface, degree: int, lam: float, *, rule: str, data: dict, weights=None,
                weight_column=None, weight_kind=None, notes: str = "", version: str = "0.1.0",
                groups_from=None, folds_given_by=None) -> Choice:
    """The choice for (degree, lambda) of a sweep over rows x, y (the same rows the sweep saw).

    Refits on the sweep's training rows (the sealed rows stay out; with ``x=None``
    the fit comes from the sweep's statistics, for streamed files), takes the CV
    numbers from the sweep's statistics, and records the recommendation and the
    sealed-test audit record. ``weight_kind`` is "relative" or "uncertainty".
    """
    from .fit import fit as _fit
    from .fit import fit_from_engine

    eng = surface.engine
    if x is None:   # streamed rows: the fit comes from the statistics
        f = fit_from_engine(eng, degree, lam)
        rows, xr = eng.n_train, list(f.x_range)
    else:
        train = ~eng.plan.test_mask
        x = np.asarray(x, dtype=float)[train]
        y = np.asarray(y, dtype=float)[train]
        w = None if weights is None else np.asarray(weights, dtype=float)[train]
        # the curvature penalty integrates over the sweep's range: refit with the sweep's domain
        dom = eng.domain if eng.penalty == "curvature" else None
        f = _fit(x, y, degree, lam, weights=w, intercept=surface.intercept, penalty=eng.penalty, mix=eng.mix,
                 domain=dom)
        rows, xr = int(x.size), [float(x.min()), float(x.max())]
    m, se, _ = eng.cv_summary(degree, [lam])
    info = {**surface.folds, "recommendation": {k: v.to_dict() for k, v in surface.recommended.items()},
            "sealed_test": surface.sealed.to_dict(), "groups_from": groups_from, "folds_given_by": folds_given_by}
    data = {"excluded_rows": [], **data, "rows_used": rows, "x_range": xr}
    return build_choice(fit=f, surface_info=info, rule=rule,
                        cv={"cv_mse": float(m[0]), "cv_mse_se": float(se[0]), "train_mse": f.train_mse},
                        data=data, notes=notes, weight_column=weight_column, weight_kind=weight_kind,
                        version=version)


def rule_of(surface, degree: int, lam: float) -> str:
    """'lowest' or 'simplest' when (degree, lambda) is that recommendation, else 'manual'."""
    for name, rec in surface.recommended.items():
        if rec.degree == degree and math.isclose(rec.lam, lam, rel_tol=1e-9, abs_tol=0.0):
            return name
    return "manual"


def _finite_or_none(v):
    return float(v) if v is not None and np.isfinite(v) else None


def build_choice(*, fit, surface_info: dict, rule: str, cv: dict, data: dict, notes: str = "",
                 weight_column=None, weight_kind=None, version: str = "0.1.0") -> Choice:
    """Assemble and validate a choice document from a FitOutcome and validation numbers.

    ``cv`` holds cv_mse, cv_mse_se, train_mse; ``surface_info`` the fold scheme
    (scheme, k, repeats, seed), the recommendations and the sealed-test record.
    """
    kind = weight_kind if weight_column else None
    doc = {
        "format": FORMAT, "version": VERSION,
        "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "software": {"name": "curvewright", "version": version},
        "data": data,
        "model": {"degree": fit.degree, "lambda": fit.lam, "penalty": fit.penalty, "mix": fit.mix,
                  "intercept": fit.intercept,
                  "weighting": {"column": weight_column, "kind": kind},
                  "reduced_chi_square": _finite_or_none(fit.reduced_chi_square) if kind == "uncertainty" else None,
                  "domain": fit.domain.to_dict(),
                  "legendre_coefficients": [float(v) for v in fit.legendre],
                  "power_coefficients": fit.power_rows(),
                  "uncertainty": None if fit.legendre_cov is None else {
                      "residual_sd": fit.residual_sd, "residual_df": fit.residual_df,
                      "legendre_covariance": np.asarray(fit.legendre_cov).tolist()}},
        "validation": {"scheme": surface_info["scheme"], "k": surface_info["k"],
                       "repeats": surface_info["repeats"], "seed": surface_info["seed"],
                       "groups_from": surface_info.get("groups_from"),
                       "folds_given_by": surface_info.get("folds_given_by"),
                       "cv_mse": float(cv["cv_mse"]), "cv_rmse": math.sqrt(float(cv["cv_mse"])),
                       "cv_mse_se": _finite_or_none(cv["cv_mse_se"]),
                       "train_mse": float(cv["train_mse"]), "effective_df": float(fit.effective_df),
                       "rule": rule, "recommendation": surface_info["recommendation"],
                       "sealed_test": surface_info["sealed_test"]},
        "notes": notes,
    }
    return Choice.from_dict(json.loads(json.dumps(doc, allow_nan=False)))


def score(choice: Choice, x, y) -> dict:
    """Scores of a saved curve on new labelled rows: RMSE, MAE, max |error|, bias (mean of y - yhat)."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    e = y - choice.predict(x)
    lo, hi = choice.x_range
    outside = (x < lo) | (x > hi)
    return {"n": int(x.size), "rmse": float(np.sqrt(np.mean(e ** 2))), "mae": float(np.mean(np.abs(e))),
            "max_abs_error": float(np.max(np.abs(e))), "bias": float(np.mean(e)),
            "outside_fitted_range": int(outside.sum()),
            "x_range": [float(x.min()), float(x.max())], "fitted_x_range": [lo, hi]}
