"""The standalone report: numbers equal the choice file's; tampered or mismatched inputs refused."""

import json
import re
from pathlib import Path

import pytest

from app.cli import main

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample_sets" / "furnace_yield.csv"


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    d = tmp_path_factory.mktemp("rep")
    choice = d / "c.json"
    assert main(["sweep", str(DATA), "--x", "1", "--y", "2", "--degrees", "0-8", "--with-zero", "--folds", "5",
                 "--test-fraction", "0.2", "--save", str(choice), "--pick-degree", "2", "--pick-lambda", "0"]) == 0
    out = d / "r.html"
    assert main(["report", str(choice), str(DATA), "--out", str(out)]) == 0
    return d, choice, out


def field(html, name):
    return re.findall(rf"data-field=['\"]{name}['\"]>([^<]+)<", html)


def test_report_numbers_equal_the_choice(made):
    """The report prints the choice file's degree, lambda, CV RMSE and coefficients, the caution, the interval, and inlines its JavaScript."""
    _, choice, out = made
    doc = json.loads(choice.read_text())
    html = out.read_text()
    assert int(field(html, "degree")[0]) == doc["model"]["degree"]
    assert float(field(html, "lambda")[0]) == doc["model"]["lambda"]
    assert float(field(html, "cv_rmse")[0]) == pytest.approx(doc["validation"]["cv_rmse"], rel=1e-9)
    coefs = [float(v) for v in field(html, "coef")]
    assert coefs == pytest.approx([c["value"] for c in doc["model"]["power_coefficients"]], rel=1e-11)
    assert doc["data"]["columns_sha256"] in html and "Local codes, standards" in html
    assert "prediction interval" in html
    assert "https://cdn" not in re.sub(r"<script[^>]*>.*?</script>", "", html, flags=re.S)  # JS inlined


def test_tampered_choice_is_refused_with_the_field(made, tmp_path, capsys):
    """A choice whose CV error was edited (the digest breaks; with the digest rewritten too, the report's own
    recomputation from the data disagrees), or whose degree is not a number, is refused naming the field;
    nothing is written."""
    from core.choice_check import content_digest

    _, choice, _ = made
    doc = json.loads(choice.read_text())
    doc["validation"]["cv_mse"] *= 0.5
    doc["validation"]["cv_rmse"] = doc["validation"]["cv_mse"] ** 0.5
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(doc))
    assert main(["report", str(bad), str(DATA), "--out", str(tmp_path / "r.html")]) == 2
    assert "Choice file field 'digest'" in capsys.readouterr().err
    doc["digest"]["value"] = content_digest(doc)
    bad.write_text(json.dumps(doc))
    assert main(["report", str(bad), str(DATA), "--out", str(tmp_path / "r.html")]) == 2
    assert "Choice file field 'validation/cv_mse'" in capsys.readouterr().err
    doc["model"]["degree"] = "two"
    bad.write_text(json.dumps(doc))
    assert main(["report", str(bad), str(DATA), "--out", str(tmp_path / "r.html")]) == 2
    assert "Choice file field 'model/degree'" in capsys.readouterr().err
    assert not (tmp_path / "r.html").exists()


def test_other_data_is_refused(made, tmp_path, capsys):
    """Data other than the rows the curve was chosen on are refused by their column fingerprint."""
    _, choice, _ = made
    other = tmp_path / "other.csv"
    other.write_text(DATA.read_text().replace("51.06", "52.06"))
    assert main(["report", str(choice), str(other), "--out", str(tmp_path / "r.html")]) == 2
    assert "Choice file field 'data/columns_sha256'" in capsys.readouterr().err


def test_report_refuses_to_overwrite(made, capsys):
    """An existing report is not overwritten without --force."""
    d, choice, out = made
    assert main(["report", str(choice), str(DATA), "--out", str(out)]) == 2
    assert "pass --force to overwrite" in capsys.readouterr().err


def test_report_of_a_page_choice_rederives_it_through_the_page_model(tmp_path):
    """A choice exported from the page model (here with the lasso) is re-derived by the report with
    the same settings: the report's CV RMSE is the choice's, which equals core.sweep's."""
    import core
    from app.model import PageModel
    from app.report import build_report
    from app.session import Session
    from core.choice import Choice

    s = Session(penalty="lasso")
    m = PageModel(s, DATA)
    s.degree, s.log_lambda = 3, -1.0
    choice = Choice.from_json(m.choice().to_json())
    assert choice.doc["model"]["penalty"] == "lasso"
    t = m.table
    ref = core.sweep(t.x.values, t.y.values, [3], [0.1], folds=s.folds, seed=s.seed,
                     test_fraction=s.test_fraction, penalty="lasso", row_keys=t.row_numbers)
    assert choice.doc["validation"]["cv_mse"] == pytest.approx(ref.cv_mse[0, 0], rel=1e-9)
    html = build_report(choice, DATA)
    assert float(field(html, "cv_rmse")[0]) == pytest.approx(choice.doc["validation"]["cv_rmse"], rel=1e-9)
    assert int(field(html, "degree")[0]) == 3


ASSAY = ROOT / "sample_sets" / "assay_calibration.csv"


def test_report_shows_the_files_lack_of_fit_and_limits(tmp_path, capsys):
    """An assay calibration with replicates and a blank: the report's calibration section prints the choice
    file's own lack-of-fit F and both detection limits (ICH Q2(R2) and Hubaux & Vos 1970), rounded to 6 digits."""
    choice, out = tmp_path / "a.json", tmp_path / "a.html"
    assert main(["sweep", str(ASSAY), "--x", "conc", "--y", "signal", "--uncertainty", "u_signal", "--degrees", "0-3",
                 "--save", str(choice)]) == 0
    capsys.readouterr()
    assert main(["report", str(choice), str(ASSAY), "--out", str(out)]) == 0
    degree = json.loads(choice.read_text())["model"]["degree"]
    other = [line for line in capsys.readouterr().err.splitlines()
             if "degree-" in line and f"degree-{degree} " not in line]
    assert other == [], "the report warned about degrees the choice did not take"
    cal = json.loads(choice.read_text())["calibration"]
    html = out.read_text()
    assert float(field(html, "lof_F")[0]) == pytest.approx(cal["lack_of_fit"]["F"], rel=1e-5)
    assert float(field(html, "ich_dl")[0]) == pytest.approx(cal["limits"]["ich_q2"]["detection_limit"], rel=1e-5)
    assert float(field(html, "hv_dl")[0]) == pytest.approx(cal["limits"]["hubaux_vos"]["detection_limit_x"], rel=1e-5)
    assert "times the stated uncertainties" in html


def test_report_without_replicates_says_lack_of_fit_was_not_tested(made):
    """The furnace set has no repeated x: the report says why there is no lack-of-fit test, not nothing."""
    _, _, out = made
    assert "Lack of fit: not tested (no x value is repeated" in out.read_text()


THERMISTOR = ROOT / "sample_sets" / "thermistor_bench.csv"


def test_report_of_a_curve_in_transformed_variables(tmp_path):
    """1/T against ln R (Steinhart-Hart form): the report re-derives the curve in the transformed variables and
    its recomputed CV error equals the choice file's (the report refuses on a mismatch), through-origin off."""
    choice, out = tmp_path / "t.json", tmp_path / "t.html"
    assert main(["sweep", str(THERMISTOR), "--x", "resistance", "--y", "probe_T [K]", "--x-transform", "log",
                 "--y-transform", "reciprocal", "--degrees", "1-3", "--save", str(choice)]) == 0
    assert main(["report", str(choice), str(THERMISTOR), "--out", str(out)]) == 0
    doc = json.loads(choice.read_text())
    assert float(field(out.read_text(), "cv_rmse")[0]) == pytest.approx(doc["validation"]["cv_rmse"], rel=1e-9)


HOSTILE = '<img src=x onerror="alert(1)">'


def test_user_text_in_a_report_is_escaped(tmp_path):
    """Column names, the file name and the notes carry markup: the report shows them as text (html.escape),
    so no element or handler of the user's text exists in the file."""
    data = tmp_path / "run_<b>1<b>.csv"
    rng = __import__("numpy").random.default_rng(4)
    x = rng.uniform(0, 10, 40)
    y = 1 + 0.5 * x + rng.normal(0, 0.1, 40)
    data.write_text(f"{HOSTILE} [kN],y<script>alert(2)</script>\n"
                    + "".join(f"{a:.6f},{b:.6f}\n" for a, b in zip(x, y)))
    choice, out = tmp_path / "c.json", tmp_path / "r.html"
    assert main(["sweep", str(data), "--x", "1", "--y", "2", "--degrees", "0-2", "--save", str(choice),
                 "--notes", f"checked by {HOSTILE}"]) == 0
    assert main(["report", str(choice), str(data), "--out", str(out)]) == 0
    text = out.read_text()
    body = re.sub(r"<script[^>]*>.*?</script>", "", text, flags=re.S)     # Bokeh's own scripts
    assert "<img" not in body and "onerror=\"" not in body and "<b>1<b>" not in body
    assert "&lt;img src=x onerror=&quot;alert(1)&quot;&gt;" in body
    assert "alert(2)</script>" not in text.replace("<\\/script>", "")
