"""Every case of the bad-input catalogue read by the streamed reader with the fast reader and with
the careful one only: the same numbers, or the same message."""

from pathlib import Path

import numpy as np
import pytest

from core.errors import CurvewrightError
from core.fastread import Unsure
from core.stream import iter_values, scan_file
from tests.app.test_bad_input_catalogue import CASES

DATA = (".csv", ".tsv", ".txt", ".parquet", ".xlsx")
ROLES = {"--x": "x", "--y": "y", "--weights": "weights", "--uncertainty": "uncertainty"}


def reading(files, argv):
    """(data file name, scan_file options) of a case that reads a data file, else None."""
    names = [a.replace("{dir}/", "") for a in argv if a.startswith("{dir}/")]
    data = [n for n in names if n in files and Path(n).suffix in DATA]
    if not data or "--x" not in argv:
        return None
    opts = {"blank_rows": "refuse", "sealed": (0, 0.2)}
    for i, a in enumerate(argv):
        value = argv[i + 1] if i + 1 < len(argv) else None
        if a in ROLES:
            opts[ROLES[a]] = value
        elif a == "--blank-rows":
            opts["blank_rows"] = value
        elif a == "--no-header":
            opts["header"] = False
        elif a == "--skip-rows":
            opts["skip_rows"] = int(value)
        elif a in ("--comment", "--sheet"):
            opts[a[2:]] = value
    opts.setdefault("y", None)
    return data[0], opts


READS = [(c[0], c[1], r) for c in CASES if (r := reading(c[1], c[2])) is not None]


def outcome(path, opts, reader):
    """('refused', message) or ('read', everything the scan learnt and the second read's values)."""
    try:
        sc = scan_file(path, reader=reader, **opts)
        specs = {r: opts.get(r) for r in ("x", "y", "weights", "uncertainty")}
        rest = {k: v for k, v in opts.items() if k in ("blank_rows", "header", "skip_rows", "comment", "sheet")}
        parts = list(iter_values(path, specs, fast=sc.fast, **rest))
    except CurvewrightError as exc:
        return "refused", str(exc)
    vals = tuple(np.concatenate([p[k] for p in parts]).tobytes() if parts and parts[0][k] is not None else None
                 for k in range(3))
    return "read", (sc.rows_read, sc.rows_used, sc.rows_dropped, sc.x_min, sc.x_max, sc.file_sha256,
                    sc.columns_sha256, sc.notices, sc.row_numbers.tolist(), sc.sealed.tolist(), vals)


def test_the_catalogue_reads_files():
    """Most catalogue cases read a data file, and so are checked here."""
    assert len(READS) >= 60


@pytest.mark.parametrize("files, reads", [r[1:] for r in READS], ids=[r[0] for r in READS])
def test_fast_and_careful_readers_agree_on_every_bad_input(tmp_path, files, reads):
    """The streamed reader's outcome (numbers or message) is the careful reader's; the fast reader alone gives
    the careful numbers or leaves the file to the careful reader."""
    for name, content in files.items():
        p = tmp_path / name
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(content) if isinstance(content, bytes) else p.write_text(content)
    name, opts = reads
    path = tmp_path / name
    careful = outcome(path, opts, "careful")
    assert outcome(path, opts, "auto") == careful
    try:
        fast = outcome(path, opts, "fast")
    except Unsure:
        return
    if fast[0] == "read":
        assert fast == careful
    else:            # a problem the fast read met: the automatic reader gave the careful message above
        assert careful[0] == "refused"
