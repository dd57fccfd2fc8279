"""The page's model: everything shown, derived from core for one ``Session``.

``PageModel`` watches a session's inputs and keeps what the views display: the
loaded table (or statistics), the scoring engine and its surface, ``out`` (the
numbers and curves of the current slider setting), the learning curve, the
suggestions' residual checks, the bootstrap band, the bias/variance split, the
sealed-test reveal, the uses of the chosen curve (``app.usage``: read-back,
tolerance, lack of fit and limits), and the status text (the buttons' actions are
in ``app.actions``). A changed column, weights kind or transform re-reads the file
at once; a new file's columns are proposed from its header names (``app.columns``).
Engines and surfaces are values: a new penalty builds a new engine
(``with_penalty``) and surface; a reveal replaces the surface with the revealed
one. Errors from core become the status, in page words (``app.names``); earlier
results stay.

Imports param and core only (no UI package), so tests drive it without a browser.
"""

from __future__ import annotations

import tempfile
import warnings
from pathlib import Path

import numpy as np
import param

from core.errors import CurvewrightError, NumericalWarning
from core.params import combination

from .actions import PageActions
from .derive import Rows, loaded_text, loo_engine, row_engine, setting_outputs, surface_for, training_keep
from .loading import (apply_exclusion, load_statistics, open_rows, read_rows, should_stream,
                      stream_statistics)
from .names import page_words
from .session import Session
from .usage import PageUses

__all__ = ["PageModel", "COLUMN_INPUTS"]

# inputs that change which columns are read, or how: any of them re-reads the file at once
COLUMN_INPUTS = ["x_column", "y_column", "weight_column", "weight_kind", "group_column", "fold_column",
                 "x_transform", "y_transform"]


class PageModel(PageActions, PageUses, param.Parameterized):
    """What one page shows (see module docstring). Views watch ``version`` (any output
    changed), ``data_version`` (data, folds or penalty changed), ``status``, ``busy`` and
    ``progress``/``progress_text`` (a large file being streamed)."""

    status = param.String("")
    progress = param.Number(0.0, bounds=(0.0, 1.0), doc="share of rows done while streaming a large file")
    progress_text = param.String("")
    busy = param.Boolean(False)
    version = param.Integer(0, doc="bumped after every recompute; views watch it")
    data_version = param.Integer(0, doc="bumped when data, folds or penalty change")
    learning_version = param.Integer(0, doc="bumped when the learning curve arrives (it may finish after the\n                                     setting moved on: only the learning views follow it)")

    def __init__(self, session: Session, path=None, *, stats=None, **params):
        super().__init__(**params)
        self.session = session
        self.table = None             # the rows in use (exclusions applied), or None for statistics only
        self.columns: list[str] = []
        self.stats_meta: dict | None = None
        self.source_path: str | None = None     # file on disk the rows came from (re-read for columns, report)
        self.display_name: str | None = None
        self.engine = None
        self.surface = None
        self.learning = None
        self.learning_note = ""       # why the learning curve is missing or differs from the setting
        self.suggestion_checks: tuple[dict, str] = ({}, "")     # ({rule: PickCheck}, which to prefer)
        self.bias_var = None
        self.out: dict = {}
        self._full_table = None       # before exclusions
        self._rows: Rows | None = None
        self._temp_names: dict[str, str] = {}     # temporary file name -> the uploaded file's name
        self._loo = None
        self._boot = None             # ((degree, lam, penalty, mix), (lower, upper))
        self._adopting = False        # the model itself is writing the session's column names
        session.param.watch(self._on_setting, ["degree", "log_lambda"])
        session.param.watch(self._on_plan, ["folds", "seed", "test_fraction", "train_fraction", "repeats",
                                            "through_origin", "loo"])
        session.param.watch(self._on_columns, COLUMN_INPUTS)
        self.watch_uses(session)
        self.param.watch(self._in_page_words, "status")
        session.param.watch(self._on_penalty, ["penalty", "mix"])
        session.param.watch(self._on_exclude, ["exclude"])
        if stats is not None:
            self.load_stats(stats)
        elif path is not None:
            self.load_path(path)

    # ---- what is loaded ---------------------------------------------------------------
    @property
    def has_rows(self) -> bool:
        return self._rows is not None and self._rows.present

    def training_rows(self):
        """(x, y, w) of the rows the curve is fitted on: in the fold plan, outside the sealed set
        (w None when unweighted; empty arrays when only statistics are loaded)."""
        if self._rows is None:
            return np.zeros(0), np.zeros(0), None
        return self._rows.training()

    def plan_rows(self):
        """(x, y, w) of every row in the fold plan (training fraction applied; sealed rows included)."""
        if self._rows is None:
            return np.zeros(0), np.zeros(0), None
        r = self._rows
        return r.x, r.y, r.w

    def plan_keep(self) -> np.ndarray:
        """Which rows of ``table`` the fold plan covers (the training fraction's draw)."""
        s = self.session
        return training_keep(self.table.n, s.train_fraction, s.seed)

    def sealed_rows(self) -> np.ndarray:
        """Spreadsheet rows of the sealed test set (empty without rows)."""
        r = self._rows
        if r is None or r.row_numbers is None:
            return np.zeros(0, dtype=int)
        return r.row_numbers[r.sealed]

    def aside_rows(self) -> np.ndarray:
        """Spreadsheet rows left out by the training fraction."""
        t = self.table
        if t is None or t.row_numbers is None:
            return np.zeros(0, dtype=int)
        return t.row_numbers[~self.plan_keep()]

    def axis_names(self) -> tuple[str | None, str | None]:
        """(x, y) column names of the data shown (None where unknown)."""
        if self.table is not None:
            return self.table.x.name, self.table.y.name
        m = self.stats_meta or {}
        return m.get("x_column"), m.get("y_column")

    def setting(self) -> tuple[int, float]:
        """(degree, lambda) of the current slider setting, the degree capped by the engine's."""
        s = self.session
        return min(s.degree, self.engine.max_degree), s.lam

    def _in_page_words(self, event) -> None:
        """Messages from core name command-line options and temporary copies: say them in page words."""
        text = page_words(event.new, self._temp_names)
        if text != event.new:
            self.status = text

    # ---- loading ------------------------------------------------------------------------
    def load_path(self, path, name=None, *, propose: bool = False) -> bool:
        """Load a file; on failure keep the previous data and report in ``status``.

        ``propose``: a new file, whose x, y and weights are proposed from its header names
        (``app.columns``) instead of taken from the session. Files above ``core.defaults.STREAM_BYTES`` are streamed chunk by chunk into the
        statistics with a progress report; the page then works from the statistics (no
        scatter points), like a statistics file.
        """
        label = name or Path(path).name
        if should_stream(path):
            try:
                args = self.stream_engine(path, name)
            except CurvewrightError as exc:
                self.status = f"Could not load {label}: {exc}"
                return False
            return self.finish_stream(*args)
        s = self.session
        named = {} if propose else dict(x=s.x_column, y=s.y_column, weights=s.weight_column,
                                        weight_kind=s.weight_kind)
        try:
            cols, table, note = open_rows(path, **named, group=s.group_column, fold=s.fold_column,
                                          x_transform=s.x_transform, y_transform=s.y_transform)
        except CurvewrightError as exc:
            self.status = f"Could not load {label}: {exc}"
            return False
        return self._adopt(table, source=(str(path), label, cols), note=note)

    def load_bytes(self, data: bytes, filename: str) -> bool:
        """Load an uploaded file (kept in a temporary file so other columns can be chosen later); its
        columns are proposed afresh from the header names."""
        with tempfile.NamedTemporaryFile(suffix=Path(filename).suffix or ".csv", delete=False) as fh:
            fh.write(data)
        self._temp_names[Path(fh.name).name] = filename
        return self.load_path(fh.name, name=filename, propose=True)

    def close(self) -> None:
        """Delete this page's temporary copies of uploaded files (when its browser session ends)."""
        for tmp in list(self._temp_names):
            Path(tempfile.gettempdir(), tmp).unlink(missing_ok=True)
            del self._temp_names[tmp]

    def select_columns(self, x: str, y: str, weights: str = "") -> bool:
        """Use other columns of the loaded file (the same as setting them on the session)."""
        s = self.session
        with param.parameterized.batch_call_watchers(s):
            s.x_column, s.y_column, s.weight_column = x, y, weights
        return self.table is not None and (self.table.x.name, self.table.y.name) == (x, y)

    def _on_columns(self, *_):
        """A column, weight kind or transform changed on the page: read the file again at once."""
        if self._adopting or self.source_path is None:
            return
        s = self.session
        try:
            table = read_rows(self.source_path, s.x_column, s.y_column, s.weight_column, weight_kind=s.weight_kind,
                              group=s.group_column, fold=s.fold_column, x_transform=s.x_transform,
                              y_transform=s.y_transform)
        except CurvewrightError as exc:
            self.status = f"Could not use those columns: {exc}"
            if self.table is not None:
                self._sync_session(self.table)    # the controls show what is in use again
            return
        self._adopt(table)

    def load_stats(self, path) -> bool:
        """Explore a sweep saved as statistics (no rows: no scatter, fixed folds)."""
        s = self.session
        try:
            engine, meta = load_statistics(path, penalty=s.penalty, mix=s.mix)
        except CurvewrightError as exc:
            self.status = f"Could not load {Path(path).name}: {exc}"
            return False
        return self._use_engine(engine, meta, Path(path).name)

    def stream_engine(self, path, name=None):
        """The slow part of a streamed load (safe in a worker thread: it only sets ``progress``).

        Returns the arguments of ``finish_stream``; raises CurvewrightError.
        """
        s = self.session
        label = name or Path(path).name

        def report(share, text):
            self.progress, self.progress_text = share, text

        engine, meta, note = stream_statistics(path, label=label, x=s.x_column, y=s.y_column,
                                               weights=s.weight_column, weight_kind=s.weight_kind, folds=s.folds,
                                               repeats=s.repeats, seed=s.seed, test_fraction=s.test_fraction,
                                               penalty=s.penalty, mix=s.mix, report=report)
        return engine, meta, label, note

    def finish_stream(self, engine, meta, label, note) -> bool:
        """Switch the page to the streamed statistics (run on the page's own thread)."""
        ok = self._use_engine(engine, meta, label)
        self.progress_text = note
        return ok

    def _use_engine(self, engine, meta: dict, label: str) -> bool:
        """Work from statistics alone (a statistics file or a streamed large file)."""
        try:
            surface = surface_for(engine)
        except CurvewrightError as exc:
            self.status = f"Could not load {label}: {exc}"
            return False
        self.stats_meta, self.table, self._full_table = meta, None, None
        self.source_path, self.display_name = None, label
        self.status = (f"Loaded statistics of {label}: {engine.n_train:,} rows for CV, "
                       f"{engine.n_test:,} sealed (no rows: folds are fixed, points are not drawn).")
        self._commit(Rows.none(engine.domain), engine, surface, None)
        return True

    def _sync_session(self, table) -> None:
        """The session's column, weights and transform fields as ``table`` was read (no re-read)."""
        s = self.session
        self._adopting = True
        try:
            with param.parameterized.batch_call_watchers(s):
                s.x_column, s.y_column = table.x.name, table.y.name
                s.weight_column = table.weight_column or ""
                if table.weight_kind:
                    s.weight_kind = table.weight_kind
                s.group_column, s.fold_column = table.group_column or "", table.fold_column or ""
                s.x_transform, s.y_transform = table.transforms
        finally:
            self._adopting = False

    def _adopt(self, full, source=None, note: str = "") -> bool:
        """Use a newly read table (``source``: its path, name and columns, for a new file)."""
        table, problem = apply_exclusion(full, self.session.exclude)
        try:
            built, notes = self._build(table)
        except CurvewrightError as exc:
            self.status = f"Could not compute: {exc}"
            return False
        if source is not None:
            self.source_path, self.display_name, self.columns = source
        self._full_table, self.table, self.stats_meta = full, table, None
        self._sync_session(table)
        # what was loaded stays in view: a proposal and a numerical note are added to it, not put in its place
        self.status = problem or " ".join(t for t in (loaded_text(self.display_name, table), note,
                                                      f"Note on the error surface (all degrees and lambdas): {notes[0]}"
                                                      if notes else "") if t)
        self._commit(*built)
        return True

    # ---- statistics ---------------------------------------------------------------------
    def _build(self, table):
        """((rows, engine, surface, loo engine), numerical notes) for a table and the session's plan."""
        s = self.session
        self.busy = True
        try:
            keep = training_keep(table.n, s.train_fraction, s.seed)

            def part(v):
                return None if v is None else v[keep]
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", NumericalWarning)
                engine = row_engine(table.x.values[keep], table.y.values[keep], part(table.weights),
                                    part(table.groups), fold_ids=part(table.folds),
                                    folds="loo" if s.loo else s.folds, seed=s.seed, repeats=s.repeats,
                                    test_fraction=s.test_fraction, penalty=s.penalty, mix=s.mix,
                                    intercept=not s.through_origin, row_keys=part(table.row_numbers))
                surface = surface_for(engine)
            rows = Rows.of_table(table, keep, engine.plan.test_mask)
            notes = [str(c.message) for c in caught if issubclass(c.category, NumericalWarning)]
            extra = None if s.loo else loo_engine(rows, engine.max_degree, intercept=engine.intercept)
            return (rows, engine, surface, extra), notes
        finally:
            self.busy = False

    def _commit(self, rows, engine, surface, loo) -> None:
        self._rows, self.engine, self.surface, self._loo = rows, engine, surface, loo
        self.learning = None
        self._boot = None
        self.check_suggestions()
        self.data_version += 1
        s = self.session
        s.param.degree.bounds = (0, engine.max_degree)
        if s.degree > engine.max_degree:
            s.degree = engine.max_degree          # the setting watcher refreshes
        else:
            self.refresh()
        self.settle()

    def settle(self) -> None:
        """The slower outputs of the current setting, recomputed when a slider comes to rest (and after
        new data): the learning curve and the uses of the curve (read-back, tolerance, calibration)."""
        self.compute_learning_curve()
        self.refresh_uses()

    def rebuild(self) -> None:
        """New statistics for the same table (folds, seed, sealed or training fraction changed)."""
        if self.table is None:
            if self.stats_meta is not None:
                self.status = "These statistics fix the folds, seed and fractions; load the data to change them."
            return
        try:
            built, notes = self._build(self.table)
        except CurvewrightError as exc:
            self.status = f"Could not compute: {exc}"
            return
        if notes:
            self.status = notes[0]
        self._commit(*built)

    def _on_plan(self, *_):
        self.rebuild()

    def _on_exclude(self, *_):
        if self._full_table is not None:
            self._adopt(self._full_table)

    def _on_penalty(self, *_):
        """A new engine and surface on the same statistics (the previous engine is left as it was)."""
        e, s = self.engine, self.session
        if e is None or (e.penalty, e.mix) == (s.penalty, combination(penalty=s.penalty, mix=s.mix)):
            return
        self.busy = True
        try:
            engine = e.with_penalty(s.penalty, s.mix)
            surface = surface_for(engine)
        except CurvewrightError as exc:
            self.status = f"Could not compute: {exc}"
            return
        finally:
            self.busy = False
        self.engine, self.surface = engine, surface
        self.check_suggestions()
        self.data_version += 1
        self.refresh()
        self.settle()

    # ---- live outputs -------------------------------------------------------------------
    def _on_setting(self, *_):
        self.refresh()

    def refresh(self) -> None:
        """``out`` for the current slider setting, from the engine's statistics."""
        e = self.engine
        if e is None:
            return
        d, lam = self.setting()
        boot = self._boot
        band = boot[1] if boot is not None and boot[0] == (d, lam, e.penalty, e.mix) else None
        try:
            self.out = setting_outputs(e, self._rows, d, lam, loo=self._loo, band=band,
                                       uncertainty=self.table is not None and self.table.weight_kind == "uncertainty")
        except CurvewrightError as exc:
            self.status = f"Could not compute: {exc}"
            return
        self.version += 1
