"""Building a choice document from a sweep and a picked (degree, lambda).

What goes into the file besides the curve:

* **Uncertainty for every export.** A lambda = 0 fit carries its classical covariance; a
  penalized one (or the lasso) carries the covariance of B seeded bootstrap refits of the
  same rows (``core.uncertainty.bootstrap_covariance``), B and the seed stated; a curve
  fitted from statistics alone (a streamed file) carries the linear-smoother covariance
  for ridge and curvature, and nothing for the lasso (said in the file).
* **Which rows the curve was fitted on**: by default the rows the choice was scored on
  (cross-validation rows); on request all kept rows (cross-validation and sealed), recorded.
* **The sealed test's record**: its rows (by spreadsheet number where known), whether and
  when it was revealed, whether the exported curve differs from the one it was revealed for
  ("chosen after the sealed result was seen"), and how surprising the sealed error is next
  to the cross-validated one.
* **The recommendation checks** (``core.checks``) and **power-form honesty**: the digits the
  raw-x power form keeps over the data range and a centred-and-scaled form for firmware.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import math

import numpy as np
from scipy import stats

from .checks import advice, check_recommendations
from .choice import FORMAT, VERSION, Choice
from .choice_check import content_digest
from .curve import centred_form, power_form_digits
from .calibrate import lack_of_fit
from .errors import ParameterError, message
from .transforms import get as get_transform

__all__ = ["make_choice", "build_choice", "rule_of", "score", "bootstrap_refits", "sealed_record", "power_form_summary",
           "POWER_DIGITS_WARN"]

POWER_DIGITS_WARN = 10.0      # below this, the raw power form is flagged and the centred form offered


def bootstrap_refits(n_rows: int, B: int = 399) -> int:
    """Refits for an export's bootstrap covariance: B up to 20 000 rows, then fewer (at least 50) so the
    work stays near that of 399 refits of 20 000 rows."""
    return int(max(50, min(B, B * 20_000 // max(n_rows, 1))))


def smoother_covariance(engine, degree: int, lam: float) -> np.ndarray | None:
    """Covariance of the all-rows fit's Legendre coefficients for a quadratic penalty from the statistics:
    theta = R^-1 U diag(f) U' q with Cov(q) = s^2 I (relative weights), so Cov = s^2 R^-1 U f^2 U' R^-T,
    plus the intercept's share (the weighted mean, variance s^2 / W). None for the lasso and elastic net."""
    if engine.penalty not in ("ridge", "curvature"):
        return None
    sv = engine.full
    f = sv.factor(degree, engine.penalty)
    if f.RiU is None and degree:
        return None
    n_tr = engine.n_train
    edf = float(engine.effective_df(degree, [lam])[0])
    s2 = float(engine.train_mse(degree, [lam])[0]) * sv.W / max(n_tr - edf, 1.0)
    from .penalties import ridge_filter

    filt = ridge_filter(f.s2, np.array([lam]))[0] if degree else np.zeros(0)
    rest = s2 * (f.RiU * filt ** 2) @ f.RiU.T if degree else np.zeros((0, 0))
    if not sv.intercept:
        return rest
    J = np.vstack([np.concatenate([[1.0], -sv.mean[1:degree + 1]]),
                   np.hstack([np.zeros((degree, 1)), np.eye(degree)])])
    inner = np.zeros((degree + 1, degree + 1))
    inner[0, 0] = s2 / sv.W
    inner[1:, 1:] = rest
    return J @ inner @ J.T


def sealed_record(surface, degree: int, lam: float, cv_mse: float) -> dict:
    """The sealed test's audit record for an exported (degree, lambda)."""
    st = surface.sealed
    out = st.to_dict()
    out["rows"] = surface.engine.plan.sealed_rows
    out["chosen_after_reveal"] = bool(st.revealed and (st.degree != degree or not math.isclose(
        st.lam, lam, rel_tol=1e-12, abs_tol=0.0)))
    if st.revealed and st.n > 0 and cv_mse > 0:
        # if residuals were normal with the CV variance, n * MSE_sealed / MSE_cv ~ chi2(n): how surprising?
        ratio = st.mse / cv_mse
        out["gap"] = {"ratio_of_mse": float(ratio), "p_value": float(stats.chi2.sf(st.n * ratio, st.n))}
    return out


def make_choice(x, y, surface, degree: int, lam: float, *, rule: str, data: dict, weights=None,
                weight_column=None, weight_kind=None, notes: str = "", version: str = "0.1.0",
                groups_from=None, folds_given_by=None, refit_all: bool = False, groups=None,
                transforms=("none", "none"), x_raw=None) -> Choice:
    """The choice for (degree, lambda) of a sweep over rows x, y (the same rows the sweep saw).

    Refits on the sweep's training rows (the sealed rows stay out; ``refit_all`` refits on every kept
    row instead, recorded), takes the CV numbers from the sweep's statistics, and records the
    recommendations with their checks and the sealed-test audit record. With ``x=None`` the fit comes
    from the sweep's statistics (streamed files). ``weight_kind`` is "relative" or "uncertainty".
    ``transforms`` names the x and y transforms the rows were given in (``core.transforms``): x and y
    here are already transformed; the file records the raw x range (from ``x_raw``, the untransformed x of the
    same rows, when given; else mapped back) and the transforms.
    """
    from .fit import fit as _fit
    from .fit import fit_from_engine
    from .uncertainty import bootstrap_covariance

    eng = surface.engine
    kind = (weight_kind or "relative") if weight_column else None
    checks, boot, lof = None, None, None
    if x is None:   # streamed rows: the fit comes from the statistics
        if refit_all:
            raise ParameterError(message("Refit on all rows", "the rows in memory", "statistics only",
                                         "Read the file whole to refit on every row"))
        f = fit_from_engine(eng, degree, lam, weight_kind=kind)
        rows, xr = eng.n_train, list(f.x_range)
        if f.legendre_cov is None:
            cov = smoother_covariance(eng, degree, lam)
            if cov is not None:
                f = dataclasses.replace(f, legendre_cov=cov, covariance_method="smoother")
        checks = check_recommendations(surface)
    else:
        x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
        w_all = None if weights is None else np.asarray(weights, dtype=float)
        train = ~eng.plan.test_mask
        use = np.ones(x.size, dtype=bool) if refit_all else train
        xs, ys = x[use], y[use]
        w = None if w_all is None else w_all[use]
        # the curvature penalty integrates over the sweep's range: refit with the sweep's domain
        dom = eng.domain if eng.penalty == "curvature" else None
        f = _fit(xs, ys, degree, lam, weights=w, intercept=surface.intercept, penalty=eng.penalty, mix=eng.mix,
                 domain=dom, weight_kind=kind)
        rows, xr = int(xs.size), [float(xs.min()), float(xs.max())]
        if x_raw is not None:
            xr_raw = np.asarray(x_raw, dtype=float)[use]
            xr_raw = [float(xr_raw.min()), float(xr_raw.max())]
        if f.legendre_cov is None:
            B = bootstrap_refits(xs.size)
            cov, used = bootstrap_covariance(xs, ys, degree, lam, domain=f.domain, B=B, seed=eng.plan.seed,
                                             weights=w, groups=None if groups is None else np.asarray(groups)[use],
                                             intercept=surface.intercept, penalty=eng.penalty, mix=eng.mix)
            f = dataclasses.replace(f, legendre_cov=cov, covariance_method="bootstrap")
            boot = {"B": B, "refits": used, "seed": int(eng.plan.seed)}
        checks = check_recommendations(surface, x[train], y[train], None if w_all is None else w_all[train])
        lof = lack_of_fit(xs, ys, f.curve, float(f.effective_df), weights=w)
    m, se, _ = eng.cv_summary(degree, [lam])
    info = {**surface.folds, "recommendation": {k: v.to_dict() for k, v in surface.recommended.items()},
            "sealed_test": sealed_record(surface, degree, lam, float(m[0])),
            "groups_from": groups_from, "folds_given_by": folds_given_by,
            "checks": {k: c.to_dict() for k, c in checks.items()}, "advice": advice(checks)}
    tx = get_transform(transforms[0])
    if x is None or x_raw is None:
        xr_raw = sorted(tx.inverse(np.asarray(xr)).tolist())
    data = {"excluded_rows": [], **data, "rows_used": rows, "x_range": xr_raw,
            "fit_rows": "all kept rows" if refit_all else "cross-validation rows"}
    return build_choice(fit=f, surface_info=info, rule=rule,
                        cv={"cv_mse": float(m[0]), "cv_mse_se": float(se[0]), "train_mse": f.train_mse},
                        data=data, notes=notes, weight_column=weight_column, weight_kind=kind, version=version,
                        bootstrap=boot, transforms=transforms, lof=lof)


def rule_of(surface, degree: int, lam: float) -> str:
    """'lowest' or 'simplest' when (degree, lambda) is that recommendation, else 'manual'."""
    for name, rec in surface.recommended.items():
        if rec.degree == degree and math.isclose(rec.lam, lam, rel_tol=1e-9, abs_tol=0.0):
            return name
    return "manual"


def _finite_or_none(v):
    return float(v) if v is not None and np.isfinite(v) else None


def power_form_summary(fit) -> dict:
    """Digits the raw power form keeps over the fit's x range, and the centred form with its digits."""
    digits = power_form_digits(fit.curve, *fit.x_range)
    c, s, b = centred_form(fit.curve)
    return {"digits": round(digits["raw"], 2),
            "centred": {"center": float(c), "scale": float(s), "coefficients": [float(v) for v in b],
                        "digits": round(digits["centred"], 2)}}


def _uncertainty(fit, bootstrap) -> dict | None:
    if fit.legendre_cov is None:
        return None
    return {"method": fit.covariance_method or "classical",
            "legendre_covariance": np.asarray(fit.legendre_cov).tolist(),
            "residual_sd": _finite_or_none(fit.residual_sd), "residual_df": float(fit.residual_df),
            "bootstrap": bootstrap, "reading": fit.reading.to_dict()}


def calibration_record(fit, transforms=("none", "none"), lof=None) -> dict:
    """Lack of fit (when x repeats) and detection limits (for a calibration through a blank at x = 0,
    untransformed, with a covariance) of a fit (``core.calibrate``, ``core.limits``)."""
    from .limits import detection_limits

    if fit.legendre_cov is None:
        limits = None
    elif tuple(transforms) != ("none", "none"):
        limits = {"ich_q2": None, "hubaux_vos": None,
                  "note": "not computed: detection limits are given for untransformed calibrations only"}
    else:
        limits = detection_limits(fit.curve, fit.legendre_cov, fit.reading, fit.x_range)
    return {"lack_of_fit": lof, "limits": limits}


def build_choice(*, fit, surface_info: dict, rule: str, cv: dict, data: dict, notes: str = "",
                 weight_column=None, weight_kind=None, version: str = "0.1.0", bootstrap=None,
                 transforms=("none", "none"), lof=None) -> Choice:
    """Assemble and validate a choice document from a FitOutcome and validation numbers.

    ``cv`` holds cv_mse, cv_mse_se, train_mse; ``surface_info`` the fold scheme
    (scheme, k, repeats, seed), the recommendations, their checks and the sealed-test record.
    """
    kind = weight_kind if weight_column else None
    tx, ty = (get_transform(t) for t in transforms)
    doc = {
        "format": FORMAT, "version": VERSION,
        "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "software": {"name": "curvewright", "version": version},
        "data": data,
        "model": {"degree": fit.degree, "lambda": fit.lam, "penalty": fit.penalty, "mix": fit.mix,
                  "intercept": fit.intercept,
                  "transforms": {"x": tx.name, "y": ty.name},
                  "weighting": {"column": weight_column, "kind": kind},
                  "reduced_chi_square": _finite_or_none(fit.reduced_chi_square) if kind == "uncertainty" else None,
                  "domain": fit.domain.to_dict(),
                  "legendre_coefficients": [float(v) for v in fit.legendre],
                  "power_coefficients": fit.power_rows(),
                  "power_form": power_form_summary(fit),
                  "uncertainty": _uncertainty(fit, bootstrap)},
        "validation": {"scheme": surface_info["scheme"], "k": surface_info["k"],
                       "repeats": surface_info["repeats"], "seed": surface_info["seed"],
                       "groups_from": surface_info.get("groups_from"),
                       "folds_given_by": surface_info.get("folds_given_by"),
                       "cv_mse": float(cv["cv_mse"]), "cv_rmse": math.sqrt(float(cv["cv_mse"])),
                       "cv_mse_se": _finite_or_none(cv["cv_mse_se"]),
                       "train_mse": float(cv["train_mse"]), "effective_df": float(fit.effective_df),
                       "rule": rule, "recommendation": surface_info["recommendation"],
                       "checks": surface_info.get("checks", {}), "advice": surface_info.get("advice", ""),
                       "sealed_test": surface_info["sealed_test"]},
        "calibration": calibration_record(fit, transforms, lof),
        "notes": notes,
    }
    doc = json.loads(json.dumps(doc, allow_nan=False))
    doc["digest"] = {"algorithm": "sha256", "value": content_digest(doc)}
    return Choice.from_dict(doc)


def score(choice: Choice, x, y) -> dict:
    """Scores of a saved curve on new labelled rows: RMSE, MAE, max |error|, bias (mean of y - yhat)."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    e = y - choice.predict(x)   # raw units
    lo, hi = choice.x_range
    outside = (x < lo) | (x > hi)
    return {"n": int(x.size), "rmse": float(np.sqrt(np.mean(e ** 2))), "mae": float(np.mean(np.abs(e))),
            "max_abs_error": float(np.max(np.abs(e))), "bias": float(np.mean(e)),
            "outside_fitted_range": int(outside.sum()),
            "x_range": [float(x.min()), float(x.max())], "fitted_x_range": [lo, hi]}
