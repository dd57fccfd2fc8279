"""Every default the command line and the page share, in one place.

The Python API keeps its own keyword defaults (they are part of its documented
signatures); the command line and the page read these, so the two never disagree.
"""

from __future__ import annotations

import numpy as np

__all__ = ["MAX_DEGREE", "DEGREES", "PENALTY", "LAMBDA_PER_DECADE", "LAMBDA_MARGIN", "LAMBDA_RANGE",
           "FOLDS", "REPEATS", "SEED",
           "TEST_FRACTION", "STREAM_BYTES", "UPLOAD_MB", "CHUNK_ROWS", "LEARN_SIZES", "LEARN_REPEATS",
           "BOOTSTRAP_B", "COVERAGE", "MAX_GRID", "MAX_CELLS"]

MAX_DEGREE = 30                  # highest polynomial degree anywhere
DEGREES = tuple(range(0, 16))    # degrees searched by default
PENALTY = "curvature"            # the command line's and the page's penalty (the Python API keeps ridge)
# The default lambda grid is scaled to the data (core.select.default_lambdas): 0, then from where the
# penalty changes every filter factor by less than 1/LAMBDA_MARGIN (negligible) to where it leaves
# less than 1/LAMBDA_MARGIN of every penalized component, LAMBDA_PER_DECADE points per decade.
LAMBDA_PER_DECADE = 3
DEFAULT_GRID_MAX = 101            # the default grid never holds more points than this (0 included)
LAMBDA_MARGIN = 1e3
LAMBDA_RANGE = (1e-8, 1e6)       # the positive range when the data give no usable scale
FOLDS = 10
REPEATS = 1
SEED = 0
TEST_FRACTION = 0.2              # share of rows sealed away before cross-validation
STREAM_BYTES = 100 * 2**20       # CSV/TSV/Parquet files above this are streamed in chunks
UPLOAD_MB = 100                  # the page takes uploads up to this size (sent in 10 MB chunks); larger files
                                 # are opened from disk, where they are streamed
CHUNK_ROWS = 500_000             # rows per chunk when streaming
LEARN_SIZES = tuple(np.round(np.linspace(0.1, 1.0, 10), 10))
LEARN_REPEATS = 3
BOOTSTRAP_B = 399
COVERAGE = 0.95
MAX_GRID = 1000                  # longest lambda grid accepted
MAX_CELLS = 1_000_000            # folds x repeats x degrees x lambdas scored in one sweep
