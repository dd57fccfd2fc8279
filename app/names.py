"""Names the page gives things: download file names after the data and the configuration, and messages
from core put in the page's words (its control names instead of command-line options, the uploaded file's
name instead of the temporary copy's). Plain functions, no UI imports."""

from __future__ import annotations

import re
from pathlib import PurePath

from .fmt import lam_slug

__all__ = ["download_name", "page_words", "CONTROL_NAMES"]

# command-line option -> the page control that does the same
CONTROL_NAMES = {
    "x-transform": "x transform", "y-transform": "y transform", "uncertainty": "weights holding standard uncertainties",
    "weights": "weights holding relative weights", "folds": "Folds", "repeats": "Repeats",
    "group": "Group column", "fold-ids": "Fold column", "loo": "Leave-one-out", "through-origin": "Through (0, 0)",
    "exclude": "Exclude rows", "test-fraction": "Sealed-test fraction", "degrees": "Degree slider",
    "lambdas": "lambda slider", "with-zero": "lambda slider", "tolerance": "Tolerance",
    "relative": "Tolerance is relative", "decision": "Decision rule", "penalty": "Penalty", "mix": "Elastic-net L1 share",
    "seed": "Seed", "degree": "Degree slider", "lam": "lambda slider", "lambda": "lambda slider",
    "replicates": "Replicates", "reading-uncertainty": "reading's uncertainty", "reading-weight": "reading's weight",
}
# options with no page control: what to do instead, in page words
NO_CONTROL = {
    "blank-rows": "rows with blank cells, which the page skips and lists",
    "sheet": "the worksheet (the page reads the first one; save the sheet you want first)",
    "no-header": "a header row (the page needs one: add a header line to the file)",
    "skip-rows": "lines before the header (remove them from the file first)",
    "comment": "comment lines (remove them from the file first)",
}

_OPTION = re.compile(r"(?:(?P<opt>[Oo]ption) )?--(?P<name>[a-z][a-z-]*)(?: (?P<arg>skip|refuse))?")


def download_name(data_name: str | None, degree: int, lam: float, kind: str, ext: str, *,
                  penalty: str = "curvature", through_origin: bool = False,
                  transforms: tuple = ("none", "none")) -> str:
    """``<stem>_deg<d>_lam<lambda>[_<penalty>][_origin][_x<t>][_y<t>]_<kind>.<ext>``, the stem the data
    file's name with anything but letters, digits, '-', '_' and '.' made '_'."""
    stem = PurePath(data_name).stem if data_name else "curve"
    stem = re.sub(r"[^A-Za-z0-9._-]+", "_", stem).strip("._") or "curve"
    parts = [stem, f"deg{degree}", f"lam{lam_slug(lam)}"]
    if penalty != "curvature":
        parts.append(penalty)
    if through_origin:
        parts.append("origin")
    parts += [f"{axis}{t}" for axis, t in zip("xy", transforms) if t != "none"]
    return "_".join(parts + [kind]) + f".{ext}"


def page_words(text: str, temp_names: dict | None = None) -> str:
    """A message from core with option names turned into the page's control names, and temporary upload
    copies named by the uploaded file's name (``temp_names``: temporary name -> uploaded name)."""
    for tmp, real in (temp_names or {}).items():
        text = re.sub(r"[^\s'\"]*" + re.escape(tmp), real, text)

    def repl(m):
        name = m.group("name")
        if name in NO_CONTROL:
            return NO_CONTROL[name]
        label = CONTROL_NAMES.get(name, name.replace("-", " "))
        return f"Setting '{label}'" if m.group("opt") else f"'{label}'"
    text = _OPTION.sub(repl, text)
    text = text.replace("pass Setting", "use").replace("pass '", "use '")
    if "distinct groups for" in text and "sealed" not in text:
        text += " The sealed test takes whole groups: with few groups, lower the sealed-test fraction too."
    return text
