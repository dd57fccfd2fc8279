"""The choice file's JSON Schema, written as data (``python -m core.choice_schema`` prints it).

The shipped ``choice_schema.json`` is this schema; a test keeps the two equal. Every
object is closed (no extra properties), digests are hexadecimal, degrees are integers.
Non-finite numbers cannot appear: the loader refuses NaN and Infinity literals before
the schema is consulted (JSON itself has no such numbers).
"""

from __future__ import annotations

import json

from .transforms import NAMES as TRANSFORM_NAMES

__all__ = ["schema", "VERSION", "FORMAT"]

FORMAT = "curvewright-choice"
VERSION = 2

NUMBER = {"type": "number"}
NUMBER_OR_NULL = {"type": ["number", "null"]}
TEXT_OR_NULL = {"type": ["string", "null"]}
SHA256 = {"type": "string", "pattern": "^[0-9a-f]{64}$"}
SHA256_OR_NULL = {"oneOf": [{"type": "null"}, SHA256]}
DEGREE = {"type": "integer", "minimum": 0, "maximum": 30}
ROWS = {"type": "array", "items": {"type": "integer", "minimum": 1}}


def closed(properties: dict, required=None) -> dict:
    """An object with exactly these properties (all required unless ``required`` says otherwise)."""
    return {"type": "object", "required": list(properties if required is None else required),
            "properties": properties, "additionalProperties": False}


def _recommendation() -> dict:
    return closed({
        "rule": {"enum": ["lowest", "simplest"]}, "degree": DEGREE, "lambda": {"type": "number", "minimum": 0},
        "grid_lambda": {"type": "number", "minimum": 0}, "cv_mse": {"type": "number", "minimum": 0},
        "cv_rmse": {"type": "number", "minimum": 0}, "cv_mse_se": NUMBER_OR_NULL,
        "train_mse": {"type": "number", "minimum": 0}, "effective_df": {"type": "number", "minimum": 0},
        "degree_at_edge": {"type": "boolean"}, "lambda_at_edge": {"type": "boolean"}})


def _sealed() -> dict:
    props = {"fraction": {"type": "number", "minimum": 0, "exclusiveMaximum": 1},
             "n": {"type": "integer", "minimum": 0}, "revealed": {"type": "boolean"},
             "revealed_at": TEXT_OR_NULL, "mse": {"type": "number", "minimum": 0},
             "rmse": {"type": "number", "minimum": 0}, "degree": DEGREE, "lambda": {"type": "number", "minimum": 0},
             "rows": {"oneOf": [{"type": "null"}, {"type": "array", "items": {"type": "integer", "minimum": 0}}]},
             "chosen_after_reveal": {"type": "boolean"},
             "changes_after_reveal": {"type": "integer", "minimum": 0},
             "gap": closed({"ratio_of_mse": {"type": "number", "minimum": 0},
                            "p_value": {"type": "number", "minimum": 0, "maximum": 1}})}
    return closed(props, required=["fraction", "n", "revealed", "revealed_at", "rows", "chosen_after_reveal"])


def _lack_of_fit() -> dict:
    return {"oneOf": [{"type": "null"}, closed({
        "F": {"type": "number", "minimum": 0}, "df_lack": {"type": "number", "exclusiveMinimum": 0},
        "df_pure": {"type": "integer", "minimum": 1}, "p_value": {"type": "number", "minimum": 0, "maximum": 1},
        "pure_error_sd": {"type": "number", "minimum": 0}})]}


def _limits() -> dict:
    ich = {"oneOf": [{"type": "null"}, closed({
        "method": {"type": "string"}, "sigma": {"type": "number", "minimum": 0}, "sigma_from": {"type": "string"},
        "slope": NUMBER, "slope_at": NUMBER, "detection_limit": {"type": "number", "minimum": 0},
        "quantitation_limit": {"type": "number", "minimum": 0}})]}
    hv = {"oneOf": [{"type": "null"}, closed({
        "method": {"type": "string"}, "alpha": {"type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 0.5},
        "beta": {"type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 0.5},
        "replicates": {"type": "integer", "minimum": 1}, "decision_level_y": NUMBER,
        "decision_limit_x": NUMBER_OR_NULL, "detection_limit_x": NUMBER_OR_NULL})]}
    return {"oneOf": [{"type": "null"}, closed({"ich_q2": ich, "hubaux_vos": hv, "note": TEXT_OR_NULL})]}


def _check() -> dict:
    lof = _lack_of_fit()
    return closed({"rule": {"enum": ["lowest", "simplest"]}, "degree": DEGREE, "lambda": {"type": "number", "minimum": 0},
                   "shift_sd": NUMBER_OR_NULL, "runs": {"type": ["integer", "null"]}, "runs_expected": NUMBER_OR_NULL,
                   "runs_p": NUMBER_OR_NULL, "lack_of_fit": lof, "passed": {"type": ["boolean", "null"]},
                   "reasons": {"type": "array", "items": {"type": "string"}}})


def _reading() -> dict:
    table = {"oneOf": [{"type": "null"}, closed({"x": {"type": "array", "items": NUMBER, "minItems": 1},
                                                  "u": {"type": "array", "items": {"type": "number", "exclusiveMinimum": 0},
                                                        "minItems": 1}})]}
    return closed({"kind": {"enum": ["none", "relative", "uncertainty"]},
                   "residual_var": {"type": "number", "minimum": 0}, "df": NUMBER_OR_NULL,
                   "median_weight": NUMBER_OR_NULL, "u_table": table, "birge_scaled": {"type": "boolean"}})


def schema() -> dict:
    """The JSON Schema (draft 2020-12) of a version-2 choice file."""
    data = closed({
        "file": TEXT_OR_NULL, "file_sha256": SHA256_OR_NULL, "columns_sha256": SHA256,
        "rows_used": {"type": "integer", "minimum": 1}, "rows_dropped": ROWS, "excluded_rows": ROWS,
        "x_column": {"type": "string"}, "y_column": {"type": "string"}, "x_unit": TEXT_OR_NULL,
        "y_unit": TEXT_OR_NULL, "x_range": {"type": "array", "items": NUMBER, "minItems": 2, "maxItems": 2},
        "fit_rows": {"enum": ["cross-validation rows", "all kept rows"]}})
    square = {"type": "array", "items": {"type": "array", "items": NUMBER}}
    model = closed({
        "degree": DEGREE, "lambda": {"type": "number", "minimum": 0},
        "penalty": {"enum": ["ridge", "curvature", "lasso", "elastic"]}, "mix": {"type": "number", "minimum": 0, "maximum": 1},
        "intercept": {"type": "boolean"},
        "transforms": closed({"x": {"enum": list(TRANSFORM_NAMES)}, "y": {"enum": list(TRANSFORM_NAMES)}}),
        "weighting": closed({"column": TEXT_OR_NULL, "kind": {"enum": ["relative", "uncertainty", None]}}),
        "reduced_chi_square": NUMBER_OR_NULL,
        "domain": closed({"center": NUMBER, "half_width": {"type": "number", "exclusiveMinimum": 0}}),
        "legendre_coefficients": {"type": "array", "items": NUMBER, "minItems": 1, "maxItems": 31},
        "power_coefficients": {"type": "array", "maxItems": 31, "items": closed({
            "power": DEGREE, "value": NUMBER, "standard_error": NUMBER_OR_NULL})},
        "power_form": closed({
            "digits": {"type": "number", "minimum": 0, "maximum": 17},
            "centred": closed({"center": NUMBER, "scale": {"type": "number", "exclusiveMinimum": 0},
                               "coefficients": {"type": "array", "items": NUMBER, "minItems": 1, "maxItems": 31},
                               "digits": {"type": "number", "minimum": 0, "maximum": 17}})}),
        "uncertainty": {"oneOf": [{"type": "null"}, closed({
            "method": {"enum": ["classical", "bootstrap", "smoother"]},
            "legendre_covariance": square,
            "residual_sd": NUMBER_OR_NULL, "residual_df": {"type": "number"},
            "bootstrap": {"oneOf": [{"type": "null"}, closed({"B": {"type": "integer", "minimum": 1},
                                                              "refits": {"type": "integer", "minimum": 1},
                                                              "seed": {"type": "integer", "minimum": 0}})]},
            "reading": _reading()})]},
    })
    validation = closed({
        "scheme": {"enum": ["kfold", "group", "explicit", "hash", "loo"]},
        "k": {"type": "integer", "minimum": 2}, "repeats": {"type": "integer", "minimum": 1},
        "seed": {"type": "integer", "minimum": 0}, "groups_from": TEXT_OR_NULL, "folds_given_by": TEXT_OR_NULL,
        "cv_mse": {"type": "number", "minimum": 0}, "cv_rmse": {"type": "number", "minimum": 0},
        "cv_mse_se": NUMBER_OR_NULL, "train_mse": {"type": "number", "minimum": 0},
        "effective_df": {"type": "number", "minimum": 0}, "rule": {"enum": ["lowest", "simplest", "manual"]},
        "recommendation": closed({"lowest": _recommendation(), "simplest": _recommendation()}),
        "checks": {"type": "object", "properties": {"lowest": _check(), "simplest": _check()},
                   "additionalProperties": False},
        "advice": {"type": "string"},
        "sealed_test": _sealed()})
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": f"curvewright-choice-{VERSION}",
        "title": f"curvewright choice file, version {VERSION}",
        **closed({
            "format": {"const": FORMAT}, "version": {"const": VERSION}, "created": {"type": "string"},
            "software": closed({"name": {"const": "curvewright"}, "version": {"type": "string"}}),
            "data": data, "model": model, "validation": validation,
            "calibration": closed({"lack_of_fit": _lack_of_fit(), "limits": _limits()}),
            "notes": {"type": "string"},
            "digest": closed({"algorithm": {"const": "sha256"}, "value": SHA256})}),
    }


if __name__ == "__main__":
    print(json.dumps(schema(), indent=2))
