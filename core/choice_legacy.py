"""Reading choice files written by curvewright 0.1 (format version 1) with today's names.

Version 1 differed only in names: the two rules were keyed 'min' and '1se', coefficient
rows were {term, estimate, std_error}, the weights column and its kind sat in two model
fields, the classical-band data was 'interval' with 'df_residual', and the grouping and
fold columns were 'group_column' and 'fold_column'. Every number is carried over as is,
so a mapped file predicts exactly what it predicted before.
"""

from __future__ import annotations

import copy
import re

from .errors import DataError, message

__all__ = ["upgrade_v1"]

RULES = {"min": "lowest", "1se": "simplest", "manual": "manual"}
KINDS = {"weights": "relative", "uncertainty": "uncertainty", None: None}


def _power(term) -> int:
    if term == "1":
        return 0
    if term == "x":
        return 1
    m = re.fullmatch(r"x\^(\d+)", str(term))
    if not m:
        raise DataError(message("Choice file field 'model/power_coefficients/term'", "1, x or x^k", repr(term)))
    return int(m.group(1))


def _power_form(m: dict) -> dict:
    """Digits of the raw power form and the centred form, computed from the file's own stable form."""
    from .basis import Domain
    from .curve import Curve, centred_form, power_form_digits

    dom = Domain(float(m["domain"]["center"]), float(m["domain"]["half_width"]))
    curve = Curve(dom, m["legendre_coefficients"], through_origin=not m["intercept"])
    digits = power_form_digits(curve, dom.center - dom.half_width, dom.center + dom.half_width)
    c, s, b = centred_form(curve)
    return {"digits": round(digits["raw"], 2), "centred": {"center": c, "scale": s, "coefficients": b.tolist(),
                                                           "digits": round(digits["centred"], 2)}}


def upgrade_v1(doc: dict) -> dict:
    """A version-2 document from a version-1 one (raises DataError naming a field it cannot map)."""
    try:
        d = copy.deepcopy(doc)
        m, v = d["model"], d["validation"]
        m["weighting"] = {"column": m.pop("weights_column", None), "kind": KINDS[m.pop("weights_kind", None)]}
        if m["weighting"]["column"] is None:
            m["weighting"]["kind"] = None
        m["power_coefficients"] = [{"power": _power(r["term"]), "value": r["estimate"],
                                    "standard_error": r["std_error"]} for r in m["power_coefficients"]]
        iv = m.pop("interval")
        # 0.1 scaled the covariance by s^2 and gave a reading band s^2 + g'Cov g with Student's t: exactly
        # the "none" reading model (a reading of unit weight), so the numbers are unchanged
        m["uncertainty"] = None if iv is None else {
            "method": "classical", "legendre_covariance": iv["legendre_covariance"],
            "residual_sd": iv["residual_sd"], "residual_df": iv["df_residual"], "bootstrap": None,
            "reading": {"kind": "none", "residual_var": iv["residual_sd"] ** 2, "df": iv["df_residual"],
                        "median_weight": 1.0, "u_table": None, "birge_scaled": False}}
        m["power_form"] = _power_form(m)
        m.setdefault("mix", 0.0)
        m["transforms"] = {"x": "none", "y": "none"}
        d["calibration"] = {"lack_of_fit": None, "limits": None}
        m.setdefault("reduced_chi_square", None)
        v["groups_from"] = v.pop("group_column", None)
        v["folds_given_by"] = v.pop("fold_column", None)
        v["rule"] = RULES[v["rule"]]
        recs = {}
        for old, rec in v["recommendation"].items():
            rec = dict(rec)
            rec["rule"] = RULES[rec.get("rule", old)]
            recs[RULES[old]] = rec
        v["recommendation"] = recs
        v["checks"], v["advice"] = {}, ""
        st = v["sealed_test"]
        st.setdefault("rows", None)
        st.setdefault("chosen_after_reveal", bool(st.get("revealed") and (
            st.get("degree") != m["degree"] or st.get("lambda") != m["lambda"])))
        d["data"].setdefault("excluded_rows", [])
        d["data"]["fit_rows"] = "cross-validation rows"
    except (KeyError, TypeError, AttributeError) as exc:
        raise DataError(message("Choice file (version 1)", "the fields curvewright 0.1 wrote",
                                f"a file without {exc}", "Export the choice again")) from None
    d["version"] = 2
    return d
