"""Uses of the chosen curve on the page: read x back from pasted readings, check a tolerance on the rows,
and the calibration figures (lack of fit, detection limits) in words.

Plain functions over a ``core.Choice`` (no param, no UI); ``app.model.PageModel`` calls them once a slider
has come to rest and keeps their results for the views.
"""

from __future__ import annotations

import numpy as np

from core.errors import DataError
from core.tolerance import tolerance_check
from core.transforms import get as get_transform

from .fmt import number

__all__ = ["parse_readings", "read_back", "check_rows", "calibration_lines", "INTERVAL_WORDS"]

INTERVAL_WORDS = {
    "bounded": "both ends inside the calibrated range",
    "one-sided": "reaches an end of the calibrated range: only the inner end is given",
    "unbounded": "every x in the calibrated range fits this reading",
    "empty": "no x in the calibrated range fits this reading",
    "several": "the reading fits more than one stretch of the curve: no single x",
}


def parse_readings(text: str) -> tuple[np.ndarray, np.ndarray]:
    """(mean reading, count) per non-empty line of pasted text.

    A line holds one reading, or several separated by spaces, tabs, commas or semicolons: replicate
    readings of one unknown, read back as their mean. Raises DataError naming the line and the text.
    """
    means, counts = [], []
    for i, line in enumerate(text.splitlines(), start=1):
        parts = [p for p in line.replace(";", " ").replace(",", " ").replace("\t", " ").split() if p]
        if not parts:
            continue
        vals = []
        for p in parts:
            try:
                v = float(p)
            except ValueError:
                v = float("nan")
            if not np.isfinite(v):
                raise DataError(f"Readings, line {i}: expected a number, got '{p}'. Put one reading per line, "
                                "or the replicates of one unknown on one line separated by spaces.")
            vals.append(v)
        means.append(float(np.mean(vals)))
        counts.append(len(vals))
    return np.array(means), np.array(counts, dtype=int)


def read_back(choice, text: str, replicates: int = 1, coverage: float = 0.95) -> list[dict]:
    """One row per pasted line: the reading (mean), its replicate count, x with its interval and standard
    uncertainty (``core.Choice.invert``). A line of several readings counts as that many replicates; a line
    of one reading as ``replicates`` (it is already that many readings' mean)."""
    y, counts = parse_readings(text)
    if y.size == 0:
        return []
    reps = np.where(counts > 1, counts, replicates)
    return choice.invert(y, replicates=reps, coverage=coverage).rows()


def check_rows(choice, table, keep, sealed, revealed: bool, tolerance: float, relative: bool, rule: str) -> dict:
    """Tolerance check (``core.tolerance``) of the chosen curve on the rows it was chosen on, in the file's
    own units: the cross-validation rows, and the sealed rows too once revealed. Adds ``"rows_checked"``."""
    tx, ty = (get_transform(n) for n in table.transforms)
    x = table.raw_x if table.raw_x is not None else table.x.values
    y = ty.inverse(table.y.values) if not ty.identity else table.y.values
    x, y, rows = x[keep], y[keep], table.row_numbers[keep]
    use = np.ones(x.size, dtype=bool) if revealed else ~sealed
    out = tolerance_check(choice, x[use], y[use], tolerance, relative=relative, rule=rule, rows=rows[use])
    out["rows_checked"] = ("the cross-validation and the revealed sealed rows" if revealed
                           else "the cross-validation rows (the sealed rows join once revealed)")
    return out


def calibration_lines(cal: dict, weight_kind=None, *, digits: int = 4, mark=None) -> list[str]:
    """Lack of fit and detection limits of a choice's ``calibration`` record, one plain sentence each,
    each naming its method (the page's panel and the report's section). ``digits``: significant digits
    of the numbers; ``mark(name, text)`` may wrap the key numbers (``lof_F``, ``ich_dl``, ``hv_dl``)."""
    def num(v, d=digits):
        return number(v, d)

    def key(name, text):
        return mark(name, text) if mark is not None else text

    out = []
    lof = cal.get("lack_of_fit")
    if lof is not None:
        verdict = ("the curve misses a trend the replicates resolve" if lof["p_value"] < 0.01
                   else "no lack of fit at the 1% level")
        pe = lof["pure_error_sd"]
        floor = (f"replicate scatter {num(pe)} times the stated uncertainties (near 1: as stated)"
                 if weight_kind == "uncertainty" else f"pure-error SD {num(pe)}, the noise floor for the CV RMSE")
        out.append(f"Lack of fit against pure error: F = {key('lof_F', num(lof['F']))} on ({num(lof['df_lack'], 3)}, "
                   f"{lof['df_pure']}) df, p = {num(lof['p_value'], 2)}: {verdict}; {floor}.")
    else:
        out.append("Lack of fit: not tested (no x value is repeated, so there is no pure error to compare "
                   "against).")
    lim = cal.get("limits") or {}
    ich, hv = lim.get("ich_q2"), lim.get("hubaux_vos")
    if ich is not None:
        out.append(f"Limits by ICH Q2(R2) (3.3 and 10 sigma / S; sigma {num(ich['sigma'])}, "
                   f"{ich['sigma_from']}; S {num(ich['slope'])}, slope at 0): detection "
                   f"{key('ich_dl', num(ich['detection_limit']))}, quantitation {num(ich['quantitation_limit'])}.")
    if hv is not None:
        xd = ("beyond the calibrated range" if hv["detection_limit_x"] is None
              else key("hv_dl", num(hv["detection_limit_x"])))
        xc = "–" if hv["decision_limit_x"] is None else num(hv["decision_limit_x"])
        out.append(f"Limits by Hubaux & Vos (alpha = beta = {hv['alpha']:g}): decision level y_C "
                   f"{num(hv['decision_level_y'])} (x_C {xc}), detection limit x_D {xd}.")
    if lim.get("note") and ich is None and hv is None:
        out.append(f"Detection limits: {lim['note']}.")
    elif ich is None and hv is None:
        out.append("Detection limits: not given (the calibrated range does not include a blank, x = 0).")
    return out
