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
        m["uncertainty"] = None if iv is None else {"residual_sd": iv["residual_sd"],
                                                    "residual_df": iv["df_residual"],
                                                    "legendre_covariance": iv["legendre_covariance"]}
        m.setdefault("mix", 0.0)
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
        d["data"].setdefault("excluded_rows", [])
    except (KeyError, TypeError, AttributeError) as exc:
        raise DataError(message("Choice file (version 1)", "the fields curvewright 0.1 wrote",
                                f"a file without {exc}", "Export the choice again")) from None
    d["version"] = 2
    return d
