"""Which columns of a newly opened file to propose as x, y and weights, from their header names alone.

One small rule, stated so it can be checked: a header is split into lower-case words (its unit in
brackets or parentheses set apart); words that name something set or varied (temperature, concentration,
load, time, dose, setting, ...) make an x candidate, words that name something measured (signal, output,
deflection, reading, response, ...) a y candidate, and words of bookkeeping (id, batch, run, group, fold,
sample, weight, uncertainty) rule a header out of both. Among equals the earlier column wins; a header with
a unit beats one without. Nothing recognised: the first two usable columns, as before.
A column of standard uncertainties of the proposed y (``u_<y>``, ``<y>_u``, ``sd_<y>``, ``<y> uncertainty``)
is proposed as weights of kind "uncertainty". Plain functions, no UI imports.
"""

from __future__ import annotations

import re

__all__ = ["propose_columns", "header_words"]

X_WORDS = {"x", "t", "temp", "temperature", "conc", "concentration", "load", "time", "dose", "setting", "level",
           "input", "stimulus", "standard", "amount", "position", "distance", "force", "pressure", "flow",
           "speed", "voltage", "current", "strain", "age", "depth", "nominal", "reference", "applied", "spiked"}
Y_WORDS = {"y", "signal", "output", "deflection", "reading", "response", "measured", "yield", "resistance",
           "absorbance", "intensity", "counts", "count", "area", "height", "peak", "indication", "displacement",
           "result", "observed", "value", "extension", "elongation", "rate", "efficiency"}
BOOKKEEPING = {"id", "batch", "run", "group", "fold", "sample", "weight", "weights", "w", "u", "sd", "sigma",
               "uncertainty", "unc", "std", "stdev", "index", "row", "note", "notes", "comment", "date", "operator",
               "replicate", "rep", "label", "name"}

_UNIT = re.compile(r"^(?P<name>.*?)\s*[\[(](?P<unit>[^\])]*)[\])]\s*$")


def header_words(header: str) -> tuple[list[str], bool]:
    """(lower-case words of the header without its unit, whether a unit is written)."""
    m = _UNIT.match(str(header))
    name, has_unit = (m.group("name"), True) if m else (str(header), False)
    words = [w for w in re.split(r"[^0-9a-z]+", re.sub(r"([a-z])([A-Z])", r"\1 \2", name).lower()) if w]
    return words, has_unit


def _score(header: str, vocabulary: set[str]) -> float:
    words, has_unit = header_words(header)
    if not words or BOOKKEEPING & set(words):
        return -1.0
    hits = len(vocabulary & set(words))
    return hits + (0.5 if has_unit and hits else 0.0)


def propose_columns(headers: list[str]) -> dict:
    """Proposed roles for a file's headers: ``{"x": name, "y": name, "weights": name or "", "weight_kind": ...}``.

    Raises ValueError when fewer than two headers could serve as x and y.
    """
    headers = [str(h) for h in headers]
    usable = [h for h in headers if _score(h, set()) >= 0]
    if len(usable) < 2:
        usable = headers
    if len(usable) < 2:
        raise ValueError("expected at least two columns")
    xs = [(_score(h, X_WORDS), -i) for i, h in enumerate(usable)]
    ys = [(_score(h, Y_WORDS), -i) for i, h in enumerate(usable)]
    bx, by = max(xs), max(ys)
    x = usable[-bx[1]] if bx[0] > 0 else None
    y = usable[-by[1]] if by[0] > 0 else None
    if x is not None and x == y:          # one header names both: keep it where it scores higher
        if bx[0] >= by[0]:
            y = None
        else:
            x = None
    if x is None:
        x = next(h for h in usable if h != y)
    if y is None:
        y = next(h for h in usable if h != x)
    return {"x": x, "y": y, **_uncertainty_of(y, headers)}


def _uncertainty_of(y: str, headers: list[str]) -> dict:
    stem = "_".join(header_words(y)[0])
    for h in headers:
        words = header_words(h)[0]
        joined = "_".join(words)
        if h != y and stem and joined in (f"u_{stem}", f"{stem}_u", f"sd_{stem}", f"{stem}_sd",
                                          f"{stem}_uncertainty", f"u_{stem}_u"):
            return {"weights": h, "weight_kind": "uncertainty"}
    return {"weights": "", "weight_kind": "relative"}
