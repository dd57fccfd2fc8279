"""Wording shared by the page and the report (no UI imports)."""

CAUTION = ("**Caution.** A fitted curve can feed safety-relevant decisions (instrument calibration, "
           "structural loads, dosing). This workbench supports engineering judgement; it does not replace it. "
           "Local codes, standards and licensed professional practice govern any such use.")

HELP = """
**Bias and variance.** A stiff curve (low degree, large lambda) cannot follow the trend: its
errors are systematic (*bias*). A very flexible curve follows the noise of this particular sample:
refit on other rows it would look different (*variance*). Both predict new measurements badly.

**Lambda** adds a price for large coefficients on the standardized powers of x. Raising it
pulls the curve towards a smoother, flatter shape and lowers its effective degrees of freedom;
lambda = 0 is ordinary least squares. The grey lines on the curve plot are refits on each
fold's training rows: when they fan out, variance is high.

**Cross-validation** splits the rows into k folds, fits on k-1 of them and scores the one left
out, k times. The CV error estimates how well the curve predicts rows it has not seen; the
training error always looks better.

**The two suggestions.** *Lowest CV error* takes the best score on the grid. *Simplest within
one standard error* takes the lowest degree, then the largest lambda, whose CV error is within
one standard error of that best score: a curve that is statistically as good and less likely to
chase noise (a published rule of thumb, Breiman et al. 1984).

**The sealed test set** is put aside before any cross-validation. Look at it once, after
choosing: if you keep tuning after seeing it, it stops being an honest check. The export records
whether and when it was revealed.
"""
