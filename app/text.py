"""Wording shared by the page and the report (no UI imports)."""

import math

CAUTION = ("**Caution.** A fitted curve can feed safety-relevant decisions (instrument calibration, "
           "structural loads, dosing). This workbench supports engineering judgement; it does not replace it. "
           "Local codes, standards and licensed professional practice govern any such use.")

LEARNING_NEEDS_ROWS = ("No learning curve: only statistics are loaded, and a learning curve refits on subsets "
                       "of the rows. Open the data file itself to see one.")
LEARNING_UNPENALIZED = ("The lasso and elastic net cannot be refitted on subsets from the statistics alone: "
                        "this learning curve is the unpenalized fit (lambda = 0) of the same degree.")


def learning_reading(lc) -> str:
    """What the learning curve ``lc`` (``core.SizeCurve``) suggests, in two or three short sentences.

    Read off the last three sizes: the gap is (held-out - fitted) / held-out error at full size;
    the slope is the relative fall of the held-out error from the third-last to the last size.
    Gap above 1/4 and above 1.5 times what pure noise gives a curve of this many terms
    (``SizeCurve.expected_gap``): the setting probably bends to this sample's noise. Fall above 5%: more rows still pay.
    Otherwise the curve has flattened: rows of the same kind will not help much.
    """
    ok = [i for i in range(len(lc.cv_mse)) if math.isfinite(lc.cv_mse[i]) and math.isfinite(lc.train_mse[i])]
    if len(ok) < 3:
        return ("Too few subset sizes could be fitted to say anything: at this degree most subsets have "
                "fewer rows than the curve has terms.")
    cv, fit = lc.cv_mse[ok[-1]], lc.train_mse[ok[-1]]
    gap = (cv - fit) / cv if cv > 0 else 0.0
    before = lc.cv_mse[ok[-3]]
    fall = 1.0 - cv / before if before > 0 else 0.0
    parts = []
    allowed = lc.expected_gap() if hasattr(lc, "expected_gap") else 0.0
    if gap > max(0.25, 1.5 * allowed):
        parts.append(f"On rows it has not seen, this setting's mean square error is {100 * gap:.0f}% above its "
                     "error on the rows it was fitted to" + (f", where pure noise would give a curve of this many "
                     f"terms about {100 * allowed:.0f}%" if allowed else "") + ": it probably bends to this "
                     "sample's noise. A stiffer setting, or more rows, would narrow the gap.")
    if fall > 0.05:
        parts.append(f"The held-out error still fell {100 * fall:.0f}% over the last sizes: more rows of the "
                     "same kind should still help.")
    if not parts:
        parts.append("Both errors have flattened: more rows of the same kind will change little. If the error "
                     "is still too large for the job, the setting is too stiff for the trend.")
    return " ".join(parts) + " (A reading of the plot, not a test.)"


WEIGHT_MEANINGS = {
    "relative": "Relative weights: a row of weight 2 counts as much as two rows of weight 1. Bands assume "
                "a reading of average weight.",
    "uncertainty": "Standard uncertainties u of each y, in y's units: weights 1/u², and the bands use the "
                   "stated u as given.",
}
NO_WEIGHTS = "No weights: every row counts the same."

GUIDE = """**First time here?** Four steps.

1. **Load** a CSV, TSV, Excel or Parquet file under *Data* (an invented sample set is open now). The
   page proposes x and y from the column names; change them and the page follows at once.
2. **Move** *Degree* and *lambda*: the curve, the residuals and the cross-validation (CV) error follow.
   lambda = 0 (the slider's left end) is plain least squares; a larger lambda smooths the curve.
3. **Compare** with the two suggestions. *Lowest CV error* is the setting that predicted left-out rows
   best. *Simplest within one SE* is the stiffest setting whose CV error is no worse than the lowest by
   more than one standard error: as good as far as the data can tell, and less likely to follow noise.
   The check beside each suggestion says if its residuals still show a trend.
4. **Keep** the curve: reveal the sealed rows once you have chosen, then export the choice file, or read
   x back from new readings under *Use the curve* (marked on the curve plot).

The yellow **caution** stays on screen because a curve from this page may end up in a decision about
safety: the page helps judge a fit; the codes, standards and qualified people of your field decide."""
