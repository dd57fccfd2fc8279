"""The workbench state: one param.Parameterized object that drives every view.

Inputs are parameters (degree, lambda, training fraction, folds, seed, sealed
fraction); outputs are plain dicts of numbers recomputed in one place
(``_refresh``) from core's cached statistics. Imports param and core only, so
tests drive it without a browser.
"""

from __future__ import annotations

import math
import tempfile
import warnings
from pathlib import Path

import numpy as np
import param

import core
from core.basis import legval
from core.choice import make_choice, rule_of
from core.errors import CurvewrightError, NumericalWarning
from core.table import read_table

LOG_LAMBDA_OFF = -9.0         # slider position meaning lambda = 0 exactly
LAMBDA_GRID = np.logspace(-8, 6, 29)
SEARCH_DEGREES = range(0, 16)
MAX_SHOWN = 4000              # rows drawn in scatter plots (statistics use all rows)


def lam_of(log_lam: float) -> float:
    return 0.0 if log_lam <= LOG_LAMBDA_OFF else 10.0 ** log_lam


class Workbench(param.Parameterized):
    """State of one page session."""

    degree = param.Integer(3, bounds=(0, 30), doc="polynomial degree")
    log_lambda = param.Number(-3.0, bounds=(LOG_LAMBDA_OFF, 6.0), step=0.1,
                              doc="log10 of lambda; the left end means lambda = 0")
    train_fraction = param.Number(1.0, bounds=(0.1, 1.0), step=0.05,
                                  doc="share of the training rows used for the fit")
    folds = param.Integer(10, bounds=(2, 20))
    seed = param.Integer(0, bounds=(0, 10**6))
    test_fraction = param.Number(0.2, bounds=(0.0, 0.5), step=0.05)
    x_column = param.String("")
    y_column = param.String("")
    weight_column = param.String("")
    weight_kind = param.Selector(default="weights", objects=["weights", "uncertainty"],
                                 doc="the weight column holds weights, or standard uncertainties (w = 1/u^2)")
    group_column = param.String("", doc="rows sharing a value stay in one fold")
    repeats = param.Integer(1, bounds=(1, 20))
    penalty = param.Selector(default="ridge", objects=["ridge", "lasso", "elastic"])
    mix = param.Number(0.5, bounds=(0.05, 1.0), step=0.05, doc="elastic net: share of the L1 term")
    exclude = param.String("", doc="spreadsheet rows left out on request, e.g. '7, 19' (recorded)")
    gd_rate = param.Number(0.5, bounds=(1e-6, 10.0), doc="gradient-descent learning rate")
    gd_iterations = param.Integer(500, bounds=(1, 100000))
    status = param.String("")
    progress = param.Number(0.0, bounds=(0.0, 1.0), doc="share of rows done while streaming a large file")
    progress_text = param.String("")
    busy = param.Boolean(False)
    version = param.Integer(0, doc="bumped after every recompute; views watch it")
    data_version = param.Integer(0, doc="bumped when data or folds change")

    def __init__(self, path=None, *, stats=None, **params):
        super().__init__(**params)
        self.stats_meta = None
        self.table = None
        self._table_full = None
        self.gd = None
        self.bias_var = None
        self._boot = None
        self.columns: list[str] = []
        self.engine = None
        self.surface = None
        self.learning = None
        self.out: dict = {}
        if stats is not None:
            self.load_stats(stats)
        elif path is not None:
            self.load_path(path)

    def _load_streamed(self, p: Path, name=None) -> bool:
        try:
            args = self.stream_engine(p, name)
        except CurvewrightError as exc:
            self.status = f"Could not load {name or p.name}: {exc}"
            return False
        return self.finish_stream(*args)

    def stream_engine(self, p: Path, name=None):
        """The slow part of a streamed load (safe to run in a thread: it only sets progress).

        Returns the arguments of ``finish_stream``; raises CurvewrightError.
        """
        import time as _time

        from core.stream import iter_chunks, sweep_file

        p = Path(p)
        label = name or p.name
        names = next(iter_chunks(p, {"x": self.x_column or 1, "y": self.y_column or 2}, chunk_rows=2))[0]
        t0 = _time.perf_counter()

        def progress(done, total, secs):
            rate = done / secs if secs > 0 else 0.0
            left = (total - done) / rate if rate > 0 else 0.0
            self.progress = done / max(total, 1)
            self.progress_text = f"{label}: {done:,} of {total:,} rows, {rate:,.0f} rows/s, {left:.0f} s left"

        surface, scan = sweep_file(p, list(range(0, 16)), np.concatenate([[0.0], LAMBDA_GRID]),
                                   x=names["x"], y=names["y"], weights=self.weight_column or None,
                                   folds=self.folds, seed=self.seed, test_fraction=self.test_fraction,
                                   missing="drop", progress=progress)
        meta = {"file": label, "x_column": scan.x_name, "y_column": scan.y_name, "columns_sha256": scan.columns_sha256}
        note = f"{label}: {scan.rows_used:,} rows streamed into the statistics in {_time.perf_counter() - t0:.1f} s"
        return surface.engine, meta, label, note

    def finish_stream(self, engine, meta, label, note) -> bool:
        """Switch the page to the streamed statistics (run on the page's own thread)."""
        self._use_engine(engine, meta, label)
        self.progress_text = note
        return True

    def load_stats(self, path) -> bool:
        """Explore a sweep saved as statistics (no rows: no scatter, fixed folds)."""
        from core.statsfile import load_stats

        try:
            engine, meta = load_stats(path)
        except CurvewrightError as exc:
            self.status = f"Could not load {Path(path).name}: {exc}"
            return False
        return self._use_engine(engine, meta, Path(path).name)

    def _use_engine(self, engine, meta: dict, label: str) -> bool:
        """Work from statistics alone (a statistics file or a streamed large file)."""
        path = label
        self.stats_meta = meta
        self.table = None
        self._loo = None
        self._display_name = Path(path).name
        self.engine = engine
        self.surface = core.surface_from_engine(engine, [d for d in SEARCH_DEGREES if d <= engine.max_degree],
                                                np.concatenate([[0.0], LAMBDA_GRID]))
        self.param.degree.bounds = (0, engine.max_degree)
        self.degree = min(self.degree, engine.max_degree)
        empty = np.zeros(0)
        self._x = self._y = self._x_aside = self._y_aside = empty
        self._test = self._keep = np.zeros(0, dtype=bool)
        self._shown = np.zeros(0, dtype=int)
        self._row_numbers = None
        c, h = engine.domain.center, engine.domain.half_width
        self._grid = np.linspace(c - 1.05 * h, c + 1.05 * h, 400)
        self.learning = None
        self.status = (f"Loaded statistics of {label}: {engine.n_train:,} rows for CV, "
                       f"{engine.n_test:,} sealed (no rows: folds are fixed, points are not drawn).")
        self.data_version += 1
        self._refresh()
        return True

    # ---- data -----------------------------------------------------------------
    stream_bytes = 100 * 2**20     # larger CSV/Parquet files are streamed into statistics

    def load_path(self, path, name=None) -> bool:
        """Load a file; on failure keep the previous data and report in ``status``.

        Files above ``stream_bytes`` are streamed chunk by chunk into the statistics with a
        progress report (rows done, rate, time left); the page then works from the statistics
        (no scatter points), like a statistics file.
        """
        p = Path(path)
        if p.is_file() and p.suffix.lower() in (".csv", ".tsv", ".txt", ".parquet") and \
                p.stat().st_size > self.stream_bytes:
            return self._load_streamed(p, name)
        try:
            frame_cols = self._columns_of(path)
            x = self.x_column if self.x_column in frame_cols else frame_cols[0]
            y = self.y_column if self.y_column in frame_cols and self.y_column != x else \
                next(c for c in frame_cols if c != x)
            table = self._read(path, x, y, self.weight_column)
        except CurvewrightError as exc:
            self.status = f"Could not load {name or Path(path).name}: {exc}"
            return False
        except StopIteration:
            self.status = f"Could not load {name or Path(path).name}: expected at least two columns."
            return False
        self.columns = frame_cols
        self._source_path = str(path)
        self._display_name = name or Path(path).name
        self._set_table(table)
        return True

    def load_bytes(self, data: bytes, filename: str) -> bool:
        suffix = Path(filename).suffix or ".csv"
        with tempfile.NamedTemporaryFile(suffix=suffix, delete=False) as fh:
            fh.write(data)
            tmp = fh.name
        ok = self.load_path(tmp, name=filename)
        return ok

    def _columns_of(self, path) -> list[str]:
        from core.table import _read_frame
        frame, _, _ = _read_frame(Path(path))
        return [str(c) for c in frame.columns]

    def _read(self, path, x, y, weights):
        kind = {"weights": None, "uncertainty": None}
        if weights:
            kind[self.weight_kind] = weights
        return read_table(path, x=x, y=y, weights=kind["weights"], uncertainty=kind["uncertainty"],
                          group=self.group_column or None, missing="drop")

    def select_columns(self, x: str, y: str, weights: str = "") -> bool:
        try:
            table = self._read(self._source_path, x, y, weights)
        except CurvewrightError as exc:
            self.status = f"Could not use those columns: {exc}"
            return False
        self._set_table(table)
        return True

    def _set_table(self, table) -> None:
        from core.table import exclude_rows

        self._table_full = table
        self._exclude_problem = None
        rows = self._excluded_rows(table)
        table = exclude_rows(table, rows) if rows else table
        self.table = table
        with param.parameterized.batch_call_watchers(self):
            self.x_column, self.y_column = table.x.name, table.y.name
            self.weight_column = table.weight_column or ""
        dropped = len(table.rows_dropped)
        self.status = (f"Loaded {self._display_name}: {table.n} rows"
                       + (f", {dropped} dropped for missing values" if dropped else "")
                       + (f", rows {', '.join(map(str, table.excluded_rows))} excluded on request"
                          if table.excluded_rows else "") + ".")
        self.rebuild()
        if self._exclude_problem:
            self.status = self._exclude_problem

    def _excluded_rows(self, table) -> list[int]:
        if not self.exclude.strip():
            return []
        try:
            rows = [int(v) for v in self.exclude.replace(";", ",").split(",") if v.strip()]
        except ValueError:
            self._exclude_problem = f"Could not exclude rows: expected row numbers like '7, 19', got {self.exclude!r}."
            return []
        valid = set(table.row_numbers.tolist())
        bad = [r for r in rows if r not in valid]
        if bad:
            self._exclude_problem = (f"Could not exclude row {bad[0]}: it is not a data row of this table "
                                     "(header is row 1).")
            return [r for r in rows if r in valid]
        return rows

    @param.depends("exclude", watch=True)
    def _on_exclude(self) -> None:
        if self._table_full is not None:
            self._set_table(self._table_full)

    @param.depends("penalty", "mix", watch=True)
    def _on_penalty(self) -> None:
        e = self.engine
        if e is None:
            return
        from core.penalized import check_penalty

        self.busy = True
        try:
            e.penalty, e.mix = self.penalty, check_penalty(self.penalty, self.mix)
            self.surface = core.surface_from_engine(e, [d for d in SEARCH_DEGREES if d <= min(e.max_degree, 15)]
                                                    if self.penalty != "ridge" else
                                                    [d for d in SEARCH_DEGREES if d <= e.max_degree],
                                                    np.concatenate([[0.0], LAMBDA_GRID]))
            self.data_version += 1
        finally:
            self.busy = False
        self._refresh()

    # ---- statistics ----------------------------------------------------------
    @param.depends("folds", "seed", "test_fraction", "train_fraction", "repeats", watch=True)
    def rebuild(self) -> None:
        """New statistics (data, folds, seed, sealed or training fraction changed)."""
        if self.table is None:
            if self.stats_meta is not None:
                self.status = "These statistics fix the folds, seed and fractions; load the data to change them."
            return
        t = self.table
        self.busy = True
        try:
            x, y, w = t.x.values, t.y.values, t.weights
            keep = np.ones(x.size, dtype=bool)
            if self.train_fraction < 1.0:
                u = np.random.default_rng([self.seed, 23]).random(x.size)
                keep = u < self.train_fraction
            self._keep = keep
            max_deg = 30
            plan_n = int(keep.sum())
            folds = min(self.folds, max(2, plan_n // 2))
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", NumericalWarning)
                engine = None
                for D in (max_deg, 20, 15, 10, 5, 2, 1):
                    try:
                        engine = core.build_engine(x[keep], y[keep], max_degree=D, folds=folds, seed=self.seed,
                                                   weights=None if w is None else w[keep],
                                                   groups=None if t.groups is None else t.groups[keep],
                                                   repeats=self.repeats, test_fraction=self.test_fraction,
                                                   penalty=self.penalty, mix=self.mix)
                        break
                    except core.DataError as exc:
                        last = exc
                if engine is None:
                    raise last
                self.engine = engine
                self.surface = core.surface_from_engine(engine, [d for d in SEARCH_DEGREES if d <= engine.max_degree],
                                                        np.concatenate([[0.0], LAMBDA_GRID]))
            self.param.degree.bounds = (0, engine.max_degree)
            if self.degree > engine.max_degree:
                self.degree = engine.max_degree
            xs = x[keep]
            self._x, self._y = xs, y[keep]
            self._row_numbers = None if t.row_numbers is None else t.row_numbers[keep]
            self._x_aside, self._y_aside = x[~keep], y[~keep]
            self._test = engine.plan.test_mask
            rng = np.random.default_rng(0)
            idx = np.arange(xs.size)
            self._shown = np.sort(rng.choice(idx, MAX_SHOWN, replace=False)) if xs.size > MAX_SHOWN else idx
            lo, hi = float(xs.min()), float(xs.max())
            pad = 0.05 * (hi - lo)
            self._grid = np.linspace(lo - pad, hi + pad, 400)
            self.learning = None
            self._loo = None
            if xs.size - int(engine.n_test) <= 50_000:
                from core.loo import LooEngine

                w_keep = np.ones(xs.size) if w is None else w[keep]
                self._loo = LooEngine(engine, xs, y[keep], w_keep)
            self.data_version += 1
            if caught:
                self.status = str(caught[0].message)
        except CurvewrightError as exc:
            self.status = f"Could not compute: {exc}"
        finally:
            self.busy = False
        self._refresh()

    # ---- live outputs -----------------------------------------------------------
    @property
    def lam(self) -> float:
        return lam_of(self.log_lambda)

    @param.depends("degree", "log_lambda", watch=True)
    def _refresh(self) -> None:
        """Everything that one slider change needs, from cached statistics."""
        e = self.engine
        if e is None:
            return
        with warnings.catch_warnings():
            # the degree sweep touches every degree; only the current one deserves a note
            warnings.simplefilter("ignore", NumericalWarning)
            self._compute_outputs(e)
        d = self.out["degree"]
        need = d if e.intercept else d + 1
        short = [i for i, sv in enumerate(e.solvers) if sv.rank < need]
        self.out["warnings"] = [] if not short else [
            f"Degree {d} needs at least {d + 1} distinct x values in every fold's training rows; "
            f"{len(short)} fold(s) have fewer, so their fits are not unique at lambda = 0 "
            "(a minimum-norm solution is used). Prefer a lower degree or a larger lambda."]
        self.version += 1

    def _compute_outputs(self, e) -> None:
        d, lam = min(self.degree, e.max_degree), self.lam
        theta = e.curve(d, lam)
        t_grid = e.domain.map(self._grid)
        shown = self._shown
        xs, ys, test = self._x[shown], self._y[shown], self._test[shown]
        fitted = legval(e.domain.map(xs), theta)
        resid = ys - fitted
        train_mse = float(e.train_mse_all(d, [lam])[0])
        dfe = float(e.effective_df(d, [lam])[0])
        sd = math.sqrt(train_mse * e.n_train / max(e.n_train - dfe, 1.0))
        cv, se, tr = e.cv_summary(d, [lam])
        from core.solve import check_lambdas

        every = e._all_coefficients(d, check_lambdas([lam]))
        band = [legval(t_grid, th[0] + np.r_[e.full.offset, np.zeros(d)]) for th in every[: e.plan.k]]
        top = e.max_degree if self.penalty == "ridge" else min(e.max_degree, 15)
        by_degree = [e.cv_summary(k, [lam]) for k in range(0, top + 1)]
        interval = None
        if lam == 0 and self.penalty == "ridge":
            from core.fit import fit_from_engine, interval_bounds

            fr = fit_from_engine(e, d, 0.0)
            if fr.legendre_cov is not None and fr.df_residual > 0:
                interval = interval_bounds(legval(t_grid, theta), t_grid, fr.legendre_cov, fr.residual_sd,
                                           fr.df_residual, "prediction", 0.95)
        elif self._boot is not None and self._boot[0] == (d, lam, self.penalty, self.mix):
            interval = self._boot[1]
        flagged = np.zeros(xs.size, dtype=bool)
        if lam == 0 and self.penalty == "ridge" and self.table is not None and 0 < self._x.size <= 20000:
            train = ~self._test
            w_all = None if self.table.weights is None else self.table.weights[self._keep]
            try:
                fr0 = core.fit(self._x[train], self._y[train], d, 0.0,
                               weights=None if w_all is None else w_all[train])
                from core.influence import influence

                inf = influence(fr0, self._x[train], self._y[train], None if w_all is None else w_all[train])
                big = np.zeros(self._x.size, dtype=bool)
                big[np.flatnonzero(train)[inf.flagged]] = True
                flagged = big[shown]
            except CurvewrightError:
                pass
        rows = self._row_numbers[shown] if self._row_numbers is not None else np.zeros(xs.size, dtype=int)
        lam_axis = LAMBDA_GRID
        by_lam = e.cv_summary(d, lam_axis)
        n_tr = e.n_train
        with np.errstate(divide="ignore", invalid="ignore"):
            gcv_axis = e.train_mse_all(d, LAMBDA_GRID) / (1.0 - e.effective_df(d, LAMBDA_GRID) / n_tr) ** 2 \
                if self.penalty == "ridge" else np.full(LAMBDA_GRID.size, np.nan)
            gcv = train_mse / (1.0 - dfe / n_tr) ** 2
        loo = None
        if getattr(self, "_loo", None) is not None and self.penalty == "ridge":
            try:
                loo = self._loo.cv_mean(d, lam)
            except CurvewrightError:
                loo = None
        self.out = {
            "degree": d, "lam": lam, "theta": theta, "gcv_mse": float(gcv), "loo_mse": loo,
            "reduced_chi_square": (train_mse * float(e.full_stats[0, 0]) / max(n_tr - dfe, 1.0)
                                   if self.table is not None and self.table.weight_kind == "uncertainty" else None),
            "grid": self._grid, "curve": legval(t_grid, theta), "band": band,
            "x": xs, "y": ys, "test": test, "aside_x": self._x_aside, "aside_y": self._y_aside, "fitted": fitted, "resid": resid,
            "resid_sd": sd, "train_rmse": math.sqrt(train_mse), "effective_df": dfe,
            "cv_mse": float(cv[0]), "cv_mse_se": float(se[0]), "cv_train_mse": float(tr[0]),
            "interval": interval, "influential": flagged, "rows": rows,
            "by_degree": {"degree": np.arange(top + 1),
                          "cv": np.array([b[0][0] for b in by_degree]),
                          "se": np.array([b[1][0] for b in by_degree]),
                          "train": np.array([b[2][0] for b in by_degree])},
            "by_lambda": {"lam": lam_axis, "cv": by_lam[0], "se": by_lam[1], "train": by_lam[2], "gcv": gcv_axis},
        }

    # ---- actions -----------------------------------------------------------------
    def recommend(self, rule: str) -> None:
        rec = self.surface.recommended[rule]
        with param.parameterized.batch_call_watchers(self):
            self.degree = rec.degree
            self.log_lambda = LOG_LAMBDA_OFF if rec.lam == 0 else max(LOG_LAMBDA_OFF + 0.01, math.log10(rec.lam))
        self.status = (f"Jumped to the {rule} recommendation: degree {rec.degree}, "
                       f"lambda {rec.lam:.3g}.")
        self._refresh()

    def bootstrap_band(self, B: int = 200) -> None:
        """Percentile prediction band from B bootstrap refits for the current setting."""
        if self.table is None or self.engine is None:
            self.status = "The bootstrap needs the rows."
            return
        from core.uncertainty import bootstrap_interval

        e = self.engine
        d, lam = min(self.degree, e.max_degree), self.lam
        train = ~self._test
        w = None if self.table.weights is None else self.table.weights[self._keep][train]
        self.busy = True
        try:
            _, lo, hi = bootstrap_interval(self._x[train], self._y[train], d, lam, self._grid, B=B, seed=self.seed,
                                           weights=w, penalty=self.penalty, mix=self.mix)
            self._boot = ((d, lam, self.penalty, self.mix), (lo, hi))
            self.status = f"Bootstrap prediction band from {B} refits (95%, percentile, resampled rows)."
        except CurvewrightError as exc:
            self.status = f"Bootstrap: {exc}"
        finally:
            self.busy = False
        self._refresh()

    def run_gradient_descent(self) -> None:
        e = self.engine
        if e is None:
            return
        d, lam = min(self.degree, e.max_degree), self.lam
        try:
            self.gd = core.gradient_descent(e.full, d, lam, learning_rate=self.gd_rate,
                                            iterations=self.gd_iterations)
            self.status = self.gd.message
        except CurvewrightError as exc:
            self.status = f"Gradient descent: {exc}"
        self.version += 1

    def compute_bias_variance(self) -> None:
        """Expected-error split at the current setting, simulated from the fitted curve."""
        if self.table is None or self.engine is None:
            self.status = "The bias/variance split needs the rows."
            return
        from core.uncertainty import bias_variance

        e = self.engine
        d, lam = min(self.degree, e.max_degree), self.lam
        if self.penalty != "ridge":
            self.status = "The bias/variance split is computed for ridge (its predictions are linear in y)."
            return
        train = ~self._test
        x = self._x[train]
        theta = e.curve(d, lam)
        truth = lambda v: legval(e.domain.map(np.asarray(v, float)), theta)  # noqa: E731
        self.bias_var = bias_variance(x, truth, self.out["resid_sd"], d, lam, n_sets=300, seed=self.seed)
        b = self.bias_var
        self.status = (f"Simulated from this fit: bias^2 {b.bias2:.4g} + variance {b.variance:.4g} + noise "
                       f"{b.noise:.4g} = expected MSE {b.expected_mse:.4g} at new x.")
        self.version += 1

    def compute_learning_curve(self) -> None:
        e = self.engine
        if e is None:
            return
        if self.table is None:
            self.status = "A learning curve needs the rows; statistics alone cannot give one."
            return
        self.busy = True
        try:
            w = None if self.table.weights is None else self.table.weights[self._keep]
            self.learning = core.learning_curve(self._x, self._y, min(self.degree, e.max_degree), self.lam,
                                                folds=e.plan.k, repeats=2, seed=self.seed, weights=w,
                                                test_fraction=self.test_fraction)
        except CurvewrightError as exc:
            self.status = f"Learning curve: {exc}"
        finally:
            self.busy = False
        self.version += 1

    def reveal_test(self) -> float | None:
        """Score the sealed test set for the current setting (recorded in the export)."""
        if self.engine is None or self.engine.n_test == 0:
            self.status = "No sealed test set: raise the sealed-test fraction first."
            return None
        mse = self.surface.reveal_test(min(self.degree, self.engine.max_degree), self.lam)
        self.status = (f"Sealed test revealed: RMSE {math.sqrt(mse):.6g} on {self.engine.n_test} rows "
                       "(recorded in the export).")
        self.version += 1
        return mse

    def choice(self, notes: str = ""):
        """The choice document for the current setting (same format as the command line)."""
        e, t = self.engine, self.table
        d, lam = min(self.degree, e.max_degree), self.lam
        if t is None:      # statistics only: fit from them
            m = self.stats_meta or {}
            from core.table import unit_of
            data = {"file": m.get("file"), "file_sha256": None, "columns_sha256": m.get("columns_sha256", ""),
                    "rows_dropped": [], "x_column": m.get("x_column") or "x", "y_column": m.get("y_column") or "y",
                    "x_unit": unit_of(m.get("x_column") or ""), "y_unit": unit_of(m.get("y_column") or "")}
            return make_choice(None, None, self.surface, d, lam, rule=rule_of(self.surface, d, lam), data=data,
                               notes=notes, version=core.__version__)
        w = None if t.weights is None else t.weights[self._keep]
        data = {"file": self._display_name, "file_sha256": t.file_sha256, "columns_sha256": t.columns_sha256,
                "rows_dropped": list(map(int, t.rows_dropped)), "x_column": t.x.name, "y_column": t.y.name,
                "x_unit": t.x.unit, "y_unit": t.y.unit}
        data["excluded_rows"] = list(t.excluded_rows)
        return make_choice(self._x, self._y, self.surface, d, lam, rule=rule_of(self.surface, d, lam),
                           data=data, weights=w, weights_column=t.weight_column, notes=notes,
                           version=core.__version__, group_column=t.group_column,
                           weights_kind=t.weight_kind)
