"""The choice file: one JSON document with everything to reproduce and audit a chosen curve.

Loading refuses NaN/Infinity literals, validates against the schema
(``core.choice_schema``, shipped as ``choice_schema.json``) with the jsonschema
library, then checks that the numbers agree with each other (degree vs
coefficient count); loading never runs code and never unpickles. Files written
by curvewright 0.1 (format version 1) are read with today's names
(``core.choice_legacy``) and say so in ``notices``. Predictions use the stable
Legendre form (``core.curve.Curve``) from the stored floats, so a loaded choice
predicts bit for bit what the in-memory fit predicted.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .basis import Domain
from .choice_check import check_integrity, content_digest
from .choice_legacy import upgrade_v1
from .choice_schema import FORMAT, VERSION, schema
from .curve import Curve
from .errors import DataError, message
from .files import write_atomic
from .bands import ReadingModel, band_limits
from .errors import ParameterError
from .transforms import Transform
from .transforms import get as get_transform

__all__ = ["Choice", "SCHEMA", "FORMAT", "VERSION"]

SCHEMA = schema()
MAX_CHARS = 64 * 2**20      # a choice file is a few kilobytes; anything near this is not one


def _field(err) -> str:
    path = "/".join(str(p) for p in err.absolute_path)
    return path or "(top level)"


def _refuse_constant(name: str):
    raise DataError(message("Choice file", "finite numbers (JSON has no NaN or Infinity)", name))


@dataclass(frozen=True)
class Choice:
    """A validated choice document (``doc`` is the parsed JSON, always in today's version).

    ``notices`` says what was done to read it (for example, an older version mapped).
    """

    doc: dict
    notices: tuple = ()

    @classmethod
    def from_dict(cls, doc) -> "Choice":
        import jsonschema

        if not isinstance(doc, dict):
            raise DataError(message("Choice file", "a JSON object", type(doc).__name__))
        notices = ()
        if doc.get("format") == FORMAT and doc.get("version") == 1:
            doc = upgrade_v1(doc)
            doc["digest"] = {"algorithm": "sha256", "value": content_digest(doc)}
            notices = ("This choice file was written by curvewright 0.1 (format version 1); it was read with "
                       "today's names (rules 'lowest'/'simplest', coefficient rows power/value/standard_error). "
                       "Every number is as written. Files of that version carry no digest: edits to them cannot "
                       "be detected.",)
        elif doc.get("format") == FORMAT and doc.get("version") != VERSION:
            raise DataError(message("Choice file field 'version'", f"1 or {VERSION}", repr(doc.get("version")),
                                    "This file was written by another version of curvewright"))
        errors = sorted(jsonschema.Draft202012Validator(SCHEMA).iter_errors(doc), key=lambda e: list(e.absolute_path))
        if errors:
            e = errors[0]
            raise DataError(message(f"Choice file field '{_field(e)}'", "a value matching the schema",
                                    e.message[:200]))
        check_integrity(doc)
        return cls(doc, notices)

    @classmethod
    def from_json(cls, text: str) -> "Choice":
        if len(text) > MAX_CHARS:
            raise DataError(message("Choice file", f"at most {MAX_CHARS // 2**20} MB of text", f"{len(text):,} characters"))
        try:
            doc = json.loads(text, parse_constant=_refuse_constant)
        except json.JSONDecodeError as exc:
            raise DataError(message("Choice file", "valid JSON", f"{exc.msg} at line {exc.lineno}")) from None
        except RecursionError:
            raise DataError(message("Choice file", "JSON nested as a choice file is", "nesting too deep to read")) \
                from None
        except ValueError as exc:     # e.g. an integer with more digits than Python reads
            raise DataError(message("Choice file", "numbers a choice file can hold", str(exc)[:120])) from None
        return cls.from_dict(doc)

    @classmethod
    def load(cls, path) -> "Choice":
        p = Path(path)
        if not p.is_file():
            raise DataError(message(f"Choice file '{p}'", "an existing file", "nothing at that path"))
        if p.stat().st_size > MAX_CHARS * 4:
            raise DataError(message(f"Choice file '{p.name}'", f"at most {MAX_CHARS // 2**20} MB",
                                    f"{p.stat().st_size:,} bytes"))
        try:
            text = p.read_bytes().decode("utf-8")
        except UnicodeDecodeError:
            raise DataError(message("Choice file", "valid JSON", "bytes that are not UTF-8 text")) from None
        return cls.from_json(text)

    @property
    def domain(self) -> Domain:
        d = self.doc["model"]["domain"]
        return Domain(float(d["center"]), float(d["half_width"]))

    @property
    def legendre(self) -> np.ndarray:
        return np.array(self.doc["model"]["legendre_coefficients"], dtype=float)

    @property
    def curve(self) -> Curve:
        """The saved curve in the stable form."""
        return Curve(self.domain, self.legendre, through_origin=not self.doc["model"]["intercept"])

    @property
    def x_range(self) -> tuple[float, float]:
        """The calibrated range of raw x."""
        lo, hi = self.doc["data"]["x_range"]
        return float(lo), float(hi)

    @property
    def transforms(self) -> tuple[Transform, Transform]:
        """(x transform, y transform): the curve is v = f(u) with u = Tx(x), v = Ty(y) (``core.transforms``)."""
        t = self.doc["model"]["transforms"]
        return get_transform(t["x"]), get_transform(t["y"])

    @property
    def u_range(self) -> tuple[float, float]:
        """The calibrated range in the curve's own variable u = Tx(x)."""
        lo, hi = sorted(self.transforms[0].forward(np.asarray(self.x_range, dtype=float)).tolist())
        return float(lo), float(hi)

    @property
    def covariance(self) -> np.ndarray | None:
        u = self.doc["model"]["uncertainty"]
        return None if u is None else np.array(u["legendre_covariance"], dtype=float)

    @property
    def has_band(self) -> bool:
        """Whether the file carries what a band needs (the coefficient covariance)."""
        return self.doc["model"]["uncertainty"] is not None

    @property
    def reading(self) -> ReadingModel | None:
        """What a reading band assumes (None without a covariance)."""
        u = self.doc["model"]["uncertainty"]
        return None if u is None else ReadingModel.from_dict(u["reading"])

    def band_label(self) -> str:
        """How the saved covariance was obtained, in words."""
        u = self.doc["model"]["uncertainty"]
        if u is None:
            return "no band"
        if u["method"] == "bootstrap":
            return f"bootstrap, {u['bootstrap']['refits']} refits, seed {u['bootstrap']['seed']}"
        if u["method"] == "smoother":
            return "linear-smoother covariance from the statistics"
        return "classical"

    def predict(self, x, band: str | None = None, coverage: float = 0.95, *, reading_u=None,
                reading_weight=None):
        """Predictions at raw x from the stable form (bit-identical to the fit's).

        ``band`` ("curve": where the curve lies; "reading": where one new reading lies) uses the
        stored covariance (classical, or bootstrap for penalized curves) and what the file says
        about a new reading (``core.bands``); returns (prediction, low, high). With transforms the
        curve and band are computed in the transformed variables and mapped back (under a log y
        transform the prediction is the median of y, not its mean). NaN where x is outside the x
        transform's domain.
        """
        tx, ty = self.transforms
        x = np.asarray(x, dtype=float)
        u = tx.forward(x)
        v = self.curve(u)
        if band is None:
            return ty.inverse(v)
        reading = self.reading or ReadingModel()
        lo, hi = band_limits(v, self.domain.map(u), self.covariance, reading, band, coverage, x=u,
                             reading_u=reading_u, reading_weight=reading_weight)
        return (ty.inverse(v), *ty.interval(lo, hi))

    def prediction_sd(self, x, band: str = "reading", *, reading_u=None, reading_weight=None) -> np.ndarray:
        """Standard uncertainty at raw x, in raw y units: of the curve (``band="curve"``, sqrt(g' Cov g)) or of
        one new reading about it (``"reading"``, adding the reading's variance, ``core.bands``). Through a y
        transform by first-order propagation (|dy/dv| at the curve)."""
        from .basis import legendre_columns

        if self.covariance is None:
            raise ParameterError(message("Uncertainty of a prediction", "a curve with a covariance",
                                         "a curve saved without one",
                                         "Export the choice from the rows, which adds a bootstrap covariance"))
        tx, ty = self.transforms
        x = np.atleast_1d(np.asarray(x, dtype=float))
        u = tx.forward(x)
        P = legendre_columns(self.domain.map(u), self.legendre.size - 1)
        var = np.einsum("ij,jk,ik->i", P, self.covariance, P)
        if band == "reading":
            var = var + (self.reading or ReadingModel()).reading_variance(u, reading_u, reading_weight)
        return np.sqrt(np.maximum(var, 0.0)) * np.abs(ty.inverse_slope(self.curve(u)))

    def invert(self, y, replicates=1, coverage: float = 0.95, *, reading_u=None, reading_weight=None):
        """x read back from readings y (each the mean of ``replicates`` readings): the estimate, its interval
        over the calibrated range and its standard uncertainty (``core.readback.ReadBack``, raw units)."""
        import dataclasses

        from .readback import read_back

        if self.covariance is None:
            raise ParameterError(message("Read-back", "a curve with a covariance (for the interval)",
                                         "a curve saved without one (lasso or elastic net from statistics alone)",
                                         "Export the choice from the rows, which adds a bootstrap covariance"))
        tx, ty = self.transforms
        y = np.atleast_1d(np.asarray(y, dtype=float)).ravel()
        bad = ~ty.valid(y) & np.isfinite(y)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise ParameterError(message(f"Reading {i + 1}", f"{ty.needs} (the curve's y transform is {ty.name})",
                                         f"{y[i]:g}"))
        rb = read_back(self.curve, self.covariance, self.reading or ReadingModel(), ty.forward(y),
                       x_range=self.u_range, replicates=replicates, coverage=coverage, reading_u=reading_u,
                       reading_weight=reading_weight)
        if tx.identity:
            return dataclasses.replace(rb, reading=y)
        lo, hi = tx.interval(rb.x_low, rb.x_high)
        several = {}
        for i, (sols, pieces) in rb.several.items():
            mapped = sorted(tuple(sorted(tx.inverse(np.array(p)).tolist())) for p in pieces)
            several[i] = (np.sort(tx.inverse(np.asarray(sols))), mapped)
        return dataclasses.replace(rb, reading=y, x_estimate=tx.inverse(rb.x_estimate), x_low=lo, x_high=hi,
                                   x_standard_uncertainty=rb.x_standard_uncertainty
                                   * np.abs(tx.inverse_slope(rb.x_estimate)), several=several)

    def to_sklearn(self):
        """A fitted scikit-learn Pipeline predicting the same curve from raw x.

        ``StandardScaler`` (mean = the domain's center, scale = its half width, so it maps x onto
        t) -> ``PolynomialFeatures(d, include_bias=False)`` -> ``Ridge`` holding the coefficients of
        the centred power form, whose terms stay modest for any data range (the raw-x power form can
        lose most of its digits, e.g. for time stamps). Refused when even the centred form keeps fewer
        than 10 significant digits over the data range (``model.power_form``).
        """
        from sklearn.linear_model import Ridge
        from sklearn.pipeline import Pipeline
        from sklearn.preprocessing import PolynomialFeatures, StandardScaler

        m = self.doc["model"]
        cf = m["power_form"]["centred"]
        if cf["digits"] < 10:
            raise DataError(message("Conversion to a scikit-learn pipeline", "a form keeping 10 significant digits",
                                    f"{cf['digits']:g} digits in the centred form",
                                    "Evaluate the curve with Choice.predict (the stable form) instead"))
        b = np.asarray(cf["coefficients"], dtype=float)
        d = max(m["degree"], 1)
        b = np.concatenate([b, np.zeros(d + 1 - b.size)])
        scaler = StandardScaler()
        scaler.mean_, scaler.scale_, scaler.var_ = np.array([cf["center"]]), np.array([cf["scale"]]), \
            np.array([cf["scale"] ** 2])
        scaler.n_features_in_, scaler.n_samples_seen_ = 1, int(self.doc["data"]["rows_used"])
        poly = PolynomialFeatures(d, include_bias=False).fit(np.zeros((1, 1)))
        ridge = Ridge(alpha=m["lambda"], fit_intercept=True)
        ridge.coef_, ridge.intercept_, ridge.n_features_in_ = b[1:], float(b[0]), d
        return Pipeline([("standardscaler", scaler), ("polynomialfeatures", poly), ("ridge", ridge)])

    def to_dict(self) -> dict:
        return json.loads(json.dumps(self.doc))

    def to_json(self) -> str:
        return json.dumps(self.doc, indent=2, allow_nan=False)

    def save(self, path, *, force: bool = False) -> Path:
        return write_atomic(path, self.to_json() + "\n", force=force)

