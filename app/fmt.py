"""Numbers as the page shows them: to the digits their standard error supports, and lambda as written.

Plain functions (no UI imports), shared by the page's views and tested on their own.
"""

from __future__ import annotations

import math

__all__ = ["with_se", "number", "lam_text", "lam_slug"]


def _finite(v) -> bool:
    return v is not None and isinstance(v, (int, float)) and math.isfinite(v)


def with_se(value, se, *, sign: str = "±") -> str:
    """``value ± se`` with the standard error to one significant digit (two when it starts with 1 or 2) and
    the value rounded to the same decimal place, e.g. 2.598 with SE 0.5 -> "2.6 ± 0.5".

    The rule follows the usual convention for reporting a measurement with its standard uncertainty
    (JCGM 100:2008, the GUM, sec. 7.2.6: "at most two significant digits" for the uncertainty, the
    value rounded to match). A missing or zero SE leaves the value at 4 significant digits.
    """
    if not _finite(value):
        return "–"
    if not _finite(se) or se <= 0:
        return number(value)
    exp = math.floor(math.log10(abs(se)))
    lead = abs(se) / 10 ** exp
    digits = 2 if lead < 3 else 1                 # 0.15 keeps "0.15"; 0.5 keeps "0.5"
    place = exp - digits + 1                      # decimal exponent of the last digit kept
    if round(abs(se) / 10 ** place) >= 10 ** digits:    # 0.96 -> 1.0: one place coarser
        place += 1
    se_r = round(se / 10 ** place) * 10 ** place
    val_r = round(value / 10 ** place) * 10 ** place
    decimals = max(0, -place)
    big = max(abs(val_r), abs(se_r))
    if big >= 1e6 or (big < 1e-4 and big > 0):       # far from 1: scientific, mantissas to the same place
        e = math.floor(math.log10(abs(val_r))) if val_r else math.floor(math.log10(abs(se_r)))
        dec = max(0, e - place)
        return f"{val_r / 10 ** e:.{dec}f}e{e} {sign} {se_r / 10 ** e:.{dec}f}e{e}"
    return f"{val_r:.{decimals}f} {sign} {se_r:.{decimals}f}"


def number(v, digits: int = 4) -> str:
    """A number to ``digits`` significant digits ("–" when missing)."""
    if not _finite(v):
        return "–"
    return f"{v:.{digits}g}"


def lam_text(lam: float) -> str:
    """lambda as written on the page: "0" exactly at zero, else 3 significant digits."""
    return "0" if lam == 0 else f"{lam:.3g}"


def lam_slug(lam: float) -> str:
    """lambda for a file name: "0", or a short power-of-ten form like "1e-2" or "3.2e-3"."""
    if lam == 0:
        return "0"
    e = math.floor(math.log10(lam))
    m = lam / 10 ** e
    m_txt = f"{m:.2g}"
    if m_txt == "10":
        m_txt, e = "1", e + 1
    return (f"{m_txt}e{e}" if m_txt != "1" else f"1e{e}").replace("+", "")
