"""The page's buttons: recommendations, bootstrap band, bias/variance, learning curve,
sealed-test reveal, the choice document and saving it.

``PageActions`` is mixed into ``app.model.PageModel`` and uses only that class's public
members: ``session``, ``engine``, ``surface``, ``table``, ``stats_meta``, ``display_name``,
``source_path``, ``out``, ``setting()``, ``has_rows``, ``training_rows()``, ``plan_rows()``,
and the outputs it sets (``status``, ``version``, ``busy``, ``bias_var``, ``learning``). Imports param and core only.
"""

from __future__ import annotations

import math
from pathlib import Path

import param

import core
from core import defaults
from core.choice_build import make_choice, rule_of
from core.errors import CurvewrightError, ParameterError, message
from core.table import unit_of

from .names import download_name
from .session import LOG_LAMBDA_OFF
from .text import LEARNING_NEEDS_ROWS, LEARNING_UNPENALIZED

__all__ = ["PageActions"]

LEARNING_IN_BACKGROUND = 20_000     # rows from which the learning curve is computed away from the page's thread


class PageActions:
    """What the page's buttons do (see module docstring)."""

    def recommend(self, rule: str) -> None:
        """Move the sliders to a rule's recommendation ("lowest" or "simplest")."""
        rec = self.surface.recommended[rule]
        s = self.session
        with param.parameterized.batch_call_watchers(s):
            s.degree = rec.degree
            s.log_lambda = LOG_LAMBDA_OFF if rec.lam == 0 else max(LOG_LAMBDA_OFF + 0.01, math.log10(rec.lam))
        self.status = f"Jumped to the {rule} recommendation: degree {rec.degree}, lambda {rec.lam:.3g}."
        self.settle()      # a jump is a slider at rest: the learning curve and the uses follow it

    def bootstrap_band(self, B: int = 200) -> None:
        """Percentile prediction band from B bootstrap refits for the current setting."""
        if not self.has_rows or self.engine is None:
            self.status = "The bootstrap needs the rows."
            return
        from core.uncertainty import bootstrap_band

        e = self.engine
        d, lam = self.setting()
        x, y, w = self.training_rows()
        self.busy = True
        try:
            _, lo, hi = bootstrap_band(x, y, d, lam, self._rows.grid, B=B, seed=self.session.seed, weights=w,
                                       penalty=e.penalty, mix=e.mix)
            self._boot = ((d, lam, e.penalty, e.mix), (lo, hi))
            self.status = f"Bootstrap prediction band from {B} refits (95%, percentile, resampled rows)."
        except CurvewrightError as exc:
            self.status = f"Bootstrap: {exc}"
        finally:
            self.busy = False
        self.refresh()

    def check_suggestions(self) -> None:
        """The residual checks of both suggestions and which to prefer (``core.checks``), on the rows in the
        fit (statistics alone: the shift from least squares only); kept in ``suggestion_checks``."""
        from core.checks import advice, check_recommendations

        if self.surface is None:
            self.suggestion_checks = ({}, "")
            return
        x, y, w = self.training_rows() if self.has_rows else (None, None, None)
        try:
            checks = check_recommendations(self.surface, x, y, w)
        except CurvewrightError as exc:
            self.suggestion_checks = ({}, f"The suggestions could not be checked: {exc}")
            return
        self.suggestion_checks = (checks, advice(checks))

    def compute_bias_variance(self) -> None:
        """Expected-error split at the current setting, simulated from the fitted curve (``bias_var``)."""
        if not self.has_rows or self.engine is None:
            self.status = "The bias/variance split needs the rows."
            return
        from core.uncertainty import bias_variance

        e = self.engine
        if e.penalty not in ("ridge", "curvature"):
            self.status = ("The bias/variance split is computed for ridge and curvature (their predictions are "
                           "linear in y).")
            return
        d, lam = self.setting()
        x, _, _ = self.training_rows()
        self.bias_var = b = bias_variance(x, e.curve(d, lam), self.out["resid_sd"], d, lam, n_sets=300,
                                          seed=self.session.seed)
        self.status = (f"Simulated from this fit: bias^2 {b.bias2:.4g} + variance {b.variance:.4g} + noise "
                       f"{b.noise:.4g} = expected MSE {b.expected_mse:.4g} at new x.")
        self.version += 1

    def compute_learning_curve(self) -> None:
        """Learning curve of the current setting (``learning``); needs the rows.

        Called whenever a slider settles and after new data, so its tab always shows the setting in
        use. The ridge and curvature penalties are scored at the slider's lambda over the engine's x
        range (so lambda means what it means on the other plots); the lasso and elastic net, which
        have no fit from a subset's statistics, are shown at lambda = 0 and say so."""
        e = self.engine
        if e is None:
            return
        if not self.has_rows:
            self.learning, self.learning_note = None, LEARNING_NEEDS_ROWS
            self.version += 1
            return
        d, lam = self.setting()
        quadratic = e.penalty in ("ridge", "curvature")
        x, y, w = self.plan_rows()
        s = self.session
        k = e.plan.k if e.plan.scheme != "loo" else defaults.FOLDS      # subsets need whole folds
        key = (self.data_version, d, lam, e.penalty)
        self._learning_key = key

        def work():
            try:
                return core.size_curve(x, y, d, lam if quadratic else 0.0, folds=k, repeats=2, seed=s.seed,
                                       weights=w, test_fraction=s.test_fraction, intercept=e.intercept,
                                       penalty=e.penalty if quadratic else "ridge", domain=e.domain)
            except CurvewrightError as exc:
                return exc

        def done(result):
            if key != self._learning_key:        # a newer setting was asked for meanwhile
                return
            self.busy = False
            if isinstance(result, CurvewrightError):
                self.learning, self.learning_note = None, f"No learning curve for this setting: {result}"
            else:
                self.learning, self.learning_note = result, "" if quadratic else LEARNING_UNPENALIZED
            self.learning_version += 1      # not ``version``: that would redraw the fit of a setting the user left

        self.busy = True
        if self.background is None or x.size < LEARNING_IN_BACKGROUND:
            done(work())
        else:
            self.background(work, done, slot="learning", rest=0.3)   # ~0.1 s per 100 000 rows: off the page's thread

    def reveal_test(self) -> float | None:
        """Score the sealed test set for the current setting (recorded in the export)."""
        if self.engine is None or self.engine.n_test == 0:
            self.status = "No sealed test set: raise the sealed-test fraction first."
            return None
        self.surface = self.surface.reveal_test(*self.setting())
        mse = self.surface.sealed.mse
        self.status = (f"Sealed test revealed: RMSE {math.sqrt(mse):.6g} on {self.engine.n_test} rows "
                       "(recorded in the export).")
        self.version += 1
        return mse

    def choice(self, notes: str = ""):
        """The choice document for the current setting (same format as the command line)."""
        args, kwargs = self.choice_inputs(notes)
        return make_choice(*args, **kwargs)

    def choice_inputs(self, notes: str = "") -> tuple[tuple, dict]:
        """The arguments of ``core.choice_build.make_choice`` for the current setting: plain values, so the
        choice can be built away from the page's thread."""
        t = self.table
        d, lam = self.setting()
        rule = rule_of(self.surface, d, lam)
        if t is None:      # statistics only: fit from them
            m = self.stats_meta or {}
            data = {"file": m.get("file"), "file_sha256": None, "columns_sha256": m.get("columns_sha256", ""),
                    "rows_dropped": [], "x_column": m.get("x_column") or "x", "y_column": m.get("y_column") or "y",
                    "x_unit": unit_of(m.get("x_column") or ""), "y_unit": unit_of(m.get("y_column") or "")}
            return (None, None, self.surface, d, lam), dict(rule=rule, data=data, notes=notes,
                                                            version=core.__version__)
        if self.session.train_fraction < 1:
            # the choice file has no field for rows set aside by this slider: a curve fitted on a share
            # of the rows would travel without saying so, and the report could not re-derive it
            raise ParameterError(message(
                "Training fraction", "1 for a choice to export or use",
                f"{self.session.train_fraction:g}",
                "The training fraction shows how the curve changes with fewer rows; set it back to 1 "
                "to export the curve, read back or check a tolerance"))
        x, y, w = self.plan_rows()
        keep = self.plan_keep()
        data = {"file": self.display_name, "file_sha256": t.file_sha256, "columns_sha256": t.columns_sha256,
                "rows_dropped": list(map(int, t.rows_dropped)), "x_column": t.x.name, "y_column": t.y.name,
                "x_unit": t.x.unit, "y_unit": t.y.unit, "excluded_rows": list(t.excluded_rows)}
        return (x, y, self.surface, d, lam), dict(
            rule=rule, data=data, weights=w, weight_column=t.weight_column, weight_kind=t.weight_kind, notes=notes,
            version=core.__version__, groups_from=t.group_column, folds_given_by=t.fold_column,
            groups=None if t.groups is None else t.groups[keep], transforms=t.transforms,
            x_raw=None if t.raw_x is None else t.raw_x[keep])

    def file_name(self, kind: str, ext: str) -> str:
        """The name of a file written from the page: the data file's stem and the configuration
        (``app.names.download_name``)."""
        if self.engine is None:
            return f"curve_{kind}.{ext}"
        d, lam = self.setting()
        return download_name(self.display_name, d, lam, kind, ext, penalty=self.engine.penalty,
                             through_origin=not self.engine.intercept,
                             transforms=self.table.transforms if self.table is not None else ("none", "none"))

    def save_beside(self, notes: str = "") -> Path | None:
        """Save the choice next to the data file it was made from (not for uploads)."""
        src = self.source_path
        if not src or self.display_name != Path(src).name:
            self.status = "Only a file opened from disk can be saved beside; use Export for uploads."
            return None
        target = Path(src).with_name(self.file_name("choice", "json"))
        try:
            self.choice(notes).save(target)
        except CurvewrightError as exc:
            self.status = f"Not saved: {exc}"
            return None
        self.status = f"Saved {target.name} next to the data file."
        return target
