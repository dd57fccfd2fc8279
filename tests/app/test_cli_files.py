"""The command line on awkward files and outputs: exact fits, collinear lasso degrees, row numbers
after blank lines, reader options, standard output, the CSV-injection guard and links at the output."""

import pytest

from app.cli import main


def run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("extra", [[], ["--loo"], ["--penalty", "lasso"], ["--stream"], ["--test-fraction", "0"]])
def test_constant_y_is_an_exact_fit(tmp_path, capsys, extra):
    """y that never changes: every degree fits exactly, so the CV error is 0 and is printed as such."""
    p = tmp_path / "flat.csv"
    p.write_text("x,y\n" + "".join(f"{i},7.5\n" for i in range(30)))
    code, out, err = run(["sweep", p, "--x", "x", "--y", "y", "--degrees", "0-3", *extra], capsys)
    assert code == 0 and "Traceback" not in err
    assert "recommended (simplest): degree 0" in out and "exact fit (CV error 0)" in out


def test_lasso_on_timestamp_like_x_leaves_collinear_degrees_unscored(tmp_path, capsys):
    """x near 1.7e9 (seconds since 1970): degrees the lasso cannot take are listed as not scored, not a crash."""
    p = tmp_path / "ts.csv"
    p.write_text("t,y\n" + "".join(f"{1.7e9 + 3600 * i:.0f},{(i % 7) * 0.3 + 1}\n" for i in range(60)))
    code, out, err = run(["sweep", p, "--x", "t", "--y", "y", "--degrees", "0-5", "--penalty", "lasso"], capsys)
    assert code == 0 and "Traceback" not in err
    assert "     5           -  not scored (see the warning)" in out and "warning: " in err
    assert "recommended (lowest): degree" in out
