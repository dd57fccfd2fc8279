"""The page's uses of the chosen curve, kept current: the curve as a choice, read-back of pasted readings,
the tolerance check and the calibration figures.

``PageUses`` is mixed into ``app.model.PageModel``. The choice of the current setting is rebuilt when a
slider comes to rest (``refresh_uses``); with a lambda above 0 that takes a bootstrap of the covariance
(about a second on a few hundred rows), so the page may hand the work to ``background(work, done)``,
which runs ``work()`` away from the page's thread and ``done(result)`` back on it. Without it (tests,
the report) the work runs at once. Imports param and core only.
"""

from __future__ import annotations

import param

from core.choice_build import make_choice
from core.errors import CurvewrightError

from .uses import calibration_lines, check_rows, read_back

__all__ = ["PageUses"]


class PageUses(param.Parameterized):
    """Read-back, tolerance and calibration figures of the current setting (see module docstring)."""

    uses_version = param.Integer(0, doc="bumped when the read-back, tolerance or calibration outputs change")

    def __init__(self, **params):
        super().__init__(**params)
        self.background = None         # callable(work, done, slot=...) set by the page, or None: run at once
        self.use_choice = None         # the choice of the setting the uses were computed for
        self.readback: list[dict] = []
        self.readback_problem = ""
        self.tolerance_result: dict | None = None
        self.tolerance_problem = ""
        self.calibration: list[str] = []
        self.uses_pending = False
        self._use_key = None

    def watch_uses(self, session) -> None:
        session.param.watch(lambda *_: self.apply_uses(), ["readings", "replicates", "tolerance",
                                                           "tolerance_relative", "tolerance_rule"])

    def refresh_uses(self) -> None:
        """Rebuild the choice of the current setting if it changed, then the uses of it."""
        if self.table is None or self.engine is None:
            self.use_choice, self.calibration, self._use_key = None, [], None
            self.apply_uses()
            return
        key = (self.data_version, *self.setting(), self.surface.test_revealed)
        if key == self._use_key:
            return
        self._use_key = key
        try:
            args, kwargs = self.choice_inputs()
        except CurvewrightError as exc:
            self._set_choice(exc, key)
            return

        def work():
            try:
                return make_choice(*args, **kwargs)
            except CurvewrightError as exc:
                return exc

        self.uses_pending = True
        self.uses_version += 1
        if self.background is None:
            self._set_choice(work(), key)
        else:
            self.background(work, lambda result: self._set_choice(result, key), slot="uses", rest=0.8)

    def _set_choice(self, result, key) -> None:
        if key != self._use_key:        # a newer setting has been asked for meanwhile
            return
        self.uses_pending = False
        if isinstance(result, CurvewrightError):
            self.use_choice, self.calibration = None, [f"No calibration figures for this setting: {result}"]
        else:
            self.use_choice = result
            self.calibration = calibration_lines(result.doc["calibration"], result.doc["model"]["weighting"]["kind"])
        self.apply_uses()

    def apply_uses(self) -> None:
        """Read-back and tolerance check of the session's readings and tolerance with the current choice."""
        s, c = self.session, self.use_choice
        self.readback, self.readback_problem = [], ""
        self.tolerance_result, self.tolerance_problem = None, ""
        if c is not None and s.readings.strip():
            try:
                self.readback = read_back(c, s.readings, s.replicates)
            except CurvewrightError as exc:
                self.readback_problem = str(exc)
        if c is not None and s.tolerance > 0:
            try:
                self.tolerance_result = check_rows(c, self.table, self.plan_keep(), self._rows.sealed,
                                                   self.surface.test_revealed, s.tolerance, s.tolerance_relative,
                                                   s.tolerance_rule)
            except CurvewrightError as exc:
                self.tolerance_problem = str(exc)
        self.uses_version += 1
