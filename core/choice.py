"""The choice file: one JSON document with everything to reproduce and audit a chosen curve.

Loading validates against the schema shipped beside this module
(``choice_schema.json``) with the jsonschema library, then checks that the
numbers agree with each other (degree vs coefficient count); loading never
runs code and never unpickles. Predictions use the stable Legendre form
(``core.basis.legval``) from the stored floats, so a loaded choice predicts
bit for bit what the in-memory fit predicted.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .basis import Domain, legval
from .errors import DataError, message
from .files import write_atomic

__all__ = ["Choice", "SCHEMA", "FORMAT", "VERSION", "build_choice"]

FORMAT = "curvewright-choice"
VERSION = 1
SCHEMA = json.loads((Path(__file__).with_name("choice_schema.json")).read_text(encoding="utf-8"))


def _field(err) -> str:
    path = "/".join(str(p) for p in err.absolute_path)
    return path or "(top level)"


@dataclass(frozen=True)
class Choice:
    """A validated choice document (``doc`` is the parsed JSON)."""

    doc: dict

    @classmethod
    def from_dict(cls, doc) -> "Choice":
        import jsonschema

        if not isinstance(doc, dict):
            raise DataError(message("Choice file", "a JSON object", type(doc).__name__))
        if doc.get("format") == FORMAT and doc.get("version") != VERSION:
            raise DataError(message("Choice file field 'version'", f"{VERSION}", repr(doc.get("version")),
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
        return cls(doc)

    @classmethod
    def from_json(cls, text: str) -> "Choice":
        try:
            doc = json.loads(text)
        except json.JSONDecodeError as exc:
            raise DataError(message("Choice file", "valid JSON", f"{exc.msg} at line {exc.lineno}")) from None
        return cls.from_dict(doc)

    @classmethod
    def load(cls, path) -> "Choice":
        p = Path(path)
        if not p.is_file():
            raise DataError(message(f"Choice file '{p}'", "an existing file", "nothing at that path"))
        return cls.from_json(p.read_text(encoding="utf-8"))

    @property
    def domain(self) -> Domain:
        d = self.doc["model"]["domain"]
        return Domain(float(d["center"]), float(d["half_width"]))

    @property
    def legendre(self) -> np.ndarray:
        return np.array(self.doc["model"]["legendre_coefficients"], dtype=float)

    def predict(self, x) -> np.ndarray:
        """Predictions at raw x from the stable form (bit-identical to the fit's)."""
        return legval(self.domain.map(np.asarray(x, dtype=float)), self.legendre)

    def to_dict(self) -> dict:
        return json.loads(json.dumps(self.doc))

    def to_json(self) -> str:
        return json.dumps(self.doc, indent=2, allow_nan=False)

    def save(self, path, *, force: bool = False) -> Path:
        return write_atomic(path, self.to_json() + "\n", force=force)


def build_choice(*, fit, surface_info: dict, rule: str, cv: dict, data: dict, notes: str = "",
                 weights_column=None, version: str = "0.1.0") -> Choice:
    """Assemble and validate a choice document from a FitResult and validation numbers.

    ``cv`` holds cv_mse, cv_mse_se, train_mse; ``surface_info`` the fold scheme
    (scheme, k, repeats, seed), the recommendations and the sealed-test record.
    """
    doc = {
        "format": FORMAT, "version": VERSION,
        "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "software": {"name": "curvewright", "version": version},
        "data": data,
        "model": {"degree": fit.degree, "lambda": fit.lam, "penalty": "ridge", "intercept": fit.intercept,
                  "weights_column": weights_column, "domain": fit.domain.to_dict(),
                  "legendre_coefficients": [float(v) for v in fit.legendre],
                  "power_coefficients": fit.power_table()},
        "validation": {"scheme": surface_info["scheme"], "k": surface_info["k"],
                       "repeats": surface_info["repeats"], "seed": surface_info["seed"],
                       "cv_mse": float(cv["cv_mse"]), "cv_rmse": math.sqrt(float(cv["cv_mse"])),
                       "cv_mse_se": None if not np.isfinite(cv["cv_mse_se"]) else float(cv["cv_mse_se"]),
                       "train_mse": float(cv["train_mse"]), "effective_df": float(fit.effective_df),
                       "rule": rule, "recommendation": surface_info["recommendation"],
                       "sealed_test": surface_info["sealed_test"]},
        "notes": notes,
    }
    return Choice.from_dict(json.loads(json.dumps(doc)))
