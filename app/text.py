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
    Gap above 1/4: the setting bends to this sample's noise. Fall above 5%: more rows still pay.
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
    if gap > 0.25:
        parts.append(f"On rows it has not seen, this setting errs {100 * gap:.0f}% more (mean square) than on "
                     "the rows it was fitted to: it bends to this sample's noise. A stiffer setting, or more "
                     "rows, would narrow the gap.")
    if fall > 0.05:
        parts.append(f"The held-out error still fell {100 * fall:.0f}% over the last sizes: more rows of the "
                     "same kind should still help.")
    if not parts:
        parts.append("Both errors have flattened: more rows of the same kind will change little. If the error "
                     "is still too large for the job, the setting is too stiff for the trend.")
    return " ".join(parts) + " (A reading of the plot, not a test.)"
