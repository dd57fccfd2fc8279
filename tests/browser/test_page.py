"""The workbench in headless chromium: sliders, reveal, upload, export, independent sessions."""

import json
import time
from pathlib import Path

import jsonschema
import numpy as np
import pytest
from playwright.sync_api import expect

import core
from app.model import PageModel
from app.session import Session
from core.choice import SCHEMA

SAMPLE = Path(__file__).resolve().parents[2] / "sample_sets" / "furnace_yield.csv"
CURVE = "() => Array.from(Bokeh.documents[0].get_model_by_name('fit_curve').data.y)"
CURVE_X = "() => Array.from(Bokeh.documents[0].get_model_by_name('fit_curve').data.x)"


def curve(page):
    return np.array(page.evaluate(CURVE))


def wait_curve_change(page, before, timeout=10):
    end = time.time() + timeout
    while time.time() < end:
        now = curve(page)
        if now.shape != before.shape or not np.allclose(now, before, rtol=0, atol=0):
            return now
        time.sleep(0.05)
    raise AssertionError("the plotted curve did not change")


def expected_curve(page, degree, lam):
    """core.fit on the page's training rows (same seed, folds, sealed fraction), at the page's x grid."""
    m = PageModel(Session(), SAMPLE)
    x, y, _ = m.training_rows()
    fit = core.fit(x, y, degree, lam, penalty=m.engine.penalty, domain=m.engine.domain)
    return fit.predict(np.array(page.evaluate(CURVE_X)))


def slider(page, i):
    return page.locator("[role=slider]").nth(i)


def test_page_loads_with_caution_and_screenshot(workbench, artifacts):
    """The page opens with the caution and the suggestion buttons; a full-page screenshot is kept."""
    page = workbench
    assert page.get_by_text("Local codes, standards and licensed professional practice govern").count() == 1
    assert page.get_by_text("Suggest: simplest within one SE").count() == 1
    page.screenshot(path=str(artifacts / "workbench.png"), full_page=True)
    assert (artifacts / "workbench.png").stat().st_size > 10_000


def test_keyboard_moves_degree_and_curve_equals_core(workbench):
    """Arrow keys move the degree slider; the drawn curve becomes core.fit's for the new degree."""
    page = workbench
    before = curve(page)
    slider(page, 0).focus()
    page.keyboard.press("ArrowRight")
    page.keyboard.press("ArrowRight")
    expect(slider(page, 0)).to_have_attribute("aria-valuenow", "5.0")
    deadline = time.time() + 10
    want = expected_curve(page, 5, 1e-3)
    while time.time() < deadline and not np.allclose(curve(page), want, rtol=1e-9):
        time.sleep(0.05)
    np.testing.assert_allclose(curve(page), want, rtol=1e-9)
    assert not np.allclose(before, want)


def test_mouse_drag_moves_lambda(workbench):
    """Dragging the lambda slider redraws the curve as core.fit's at the new lambda."""
    page = workbench
    before = curve(page)
    handle = slider(page, 1)
    box = handle.bounding_box()
    page.mouse.move(box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)
    page.mouse.down()
    page.mouse.move(box["x"] + 120, box["y"] + box["height"] / 2, steps=8)
    page.mouse.up()
    after = wait_curve_change(page, before)
    loglam = float(handle.get_attribute("aria-valuenow"))
    assert loglam > -3.0
    time.sleep(0.5)
    np.testing.assert_allclose(curve(page), expected_curve(page, 3, 10 ** loglam), rtol=1e-9)
    assert after.shape == before.shape


def test_reveal_sealed_test_needs_confirmation(workbench):
    """The sealed test is revealed (and its rows drawn) only after the confirmation box is ticked."""
    page = workbench
    sealed = "() => Bokeh.documents[0].get_model_by_name('sealed_points').data.x.length"
    assert page.evaluate(sealed) == 0
    page.get_by_role("button", name="Reveal sealed test…").click()
    page.get_by_role("button", name="Confirm reveal").click()
    page.get_by_text("Tick the confirmation box").wait_for()
    assert page.evaluate(sealed) == 0
    page.locator(".cw-confirm input").check()
    page.get_by_role("button", name="Confirm reveal").click()
    page.get_by_text("Sealed test revealed: RMSE").first.wait_for()
    page.wait_for_function(sealed + " > 0", timeout=10000)


def test_bad_upload_shows_message_and_keeps_data(workbench, tmp_path):
    """A broken upload is named with its row in the status; the curve drawn stays as it was."""
    page = workbench
    bad = tmp_path / "broken.csv"
    bad.write_text("temp,reading\n1,2\n2,n/a\n")
    before = curve(page)
    page.locator("input[type=file]").set_input_files(str(bad))
    page.get_by_text("Could not load broken.csv").wait_for(timeout=10000)
    assert page.get_by_text("row 3").count() >= 1
    np.testing.assert_array_equal(curve(page), before)


def test_file_names_in_the_status_stay_plain_text(workbench, tmp_path):
    """A file name containing markup is shown literally in the status, never rendered as HTML."""
    page = workbench
    bad = tmp_path / "run_<b>42<b>_*draft*.csv"
    bad.write_text("temp,reading\n1,2\n2,n/a\n")
    page.locator("input[type=file]").set_input_files(str(bad))
    page.get_by_text("Could not load run_<b>42<b>_*draft*.csv").wait_for(timeout=10000)
    assert page.locator("b", has_text="42").count() == 0
    assert page.locator("em", has_text="draft").count() == 0


def test_an_upload_above_the_size_limit_is_refused_in_the_browser(page, app_url, tmp_path, monkeypatch):
    """An upload above the stated size never reaches the server (it would close the connection): the browser
    refuses it, the page keeps answering and its data stay. The limit is lowered to 1 MB for this page."""
    from core import defaults

    monkeypatch.setattr(defaults, "UPLOAD_MB", 1)
    page.set_viewport_size({"width": 1500, "height": 1100})
    page.goto(app_url)
    page.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0 && Bokeh.documents[0]"
                           ".get_model_by_name('fit_curve') && Bokeh.documents[0].get_model_by_name('fit_curve')"
                           ".data.y.length > 0", timeout=30000)
    page.get_by_text("Files up to 1 MB").wait_for()
    big = tmp_path / "big.csv"
    rows = "\n".join(f"{i},{i * 0.5}" for i in range(200_000))
    big.write_text("x,y\n" + rows + "\n")
    assert big.stat().st_size > 2**20
    before = curve(page)
    page.locator("input[type=file]").set_input_files(str(big))
    page.get_by_text("File is too large", exact=True).wait_for(timeout=10000)
    page.wait_for_timeout(500)
    assert page.get_by_text("Loaded big.csv").count() == 0
    np.testing.assert_array_equal(curve(page), before)
    page.locator("[role=slider]").first.focus()            # the page still answers
    page.keyboard.press("ArrowRight")
    page.wait_for_function(f"() => Bokeh.documents[0].get_model_by_name('fit_curve').data.y[0] !== {float(before[0])!r}",
                           timeout=15000)


def test_export_downloads_schema_valid_json(workbench, tmp_path):
    """Export downloads a choice file that matches the schema and records the rule and the file."""
    page = workbench
    page.get_by_role("button", name="Suggest: simplest within one SE").click()
    page.wait_for_timeout(500)
    with page.expect_download() as d:
        page.get_by_text("Export choice (JSON)").click()
    path = tmp_path / "choice.json"
    d.value.save_as(path)
    doc = json.loads(path.read_text())
    jsonschema.validate(doc, SCHEMA)
    assert doc["validation"]["rule"] == "simplest"
    assert doc["data"]["file"] == "furnace_yield.csv"


def test_two_pages_are_independent(workbench, context, app_url):
    """Moving a slider on one page leaves another page's slider and curve alone."""
    first = workbench
    second = context.new_page()
    second.set_viewport_size({"width": 1500, "height": 1100})
    second.goto(app_url)
    second.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0"
                             " && Bokeh.documents[0].get_model_by_name('fit_curve')"
                             " && Bokeh.documents[0].get_model_by_name('fit_curve').data.y.length > 0")
    before2 = curve(second)
    slider(first, 0).focus()
    for _ in range(4):
        first.keyboard.press("ArrowRight")
    expect(slider(first, 0)).to_have_attribute("aria-valuenow", "7.0")
    time.sleep(0.8)
    assert slider(second, 0).get_attribute("aria-valuenow") == "3.0"
    np.testing.assert_array_equal(curve(second), before2)


def test_report_button_downloads_standalone_html(workbench, tmp_path):
    """The report button downloads a standalone HTML report with no page-server resources."""
    page = workbench
    with page.expect_download(timeout=60000) as d:
        page.get_by_text("Download report (HTML)").click()
    path = tmp_path / "report.html"
    d.value.save_as(path)
    text = path.read_text()
    assert text.startswith("<!DOCTYPE html>") and "Curve report" in text
    assert "static/extensions/panel" not in text     # no page-server resources: opens offline


def test_markup_in_columns_and_cells_never_runs(workbench, tmp_path):
    """A file whose column names and cells carry script (an image with an error handler) is loaded and
    refused cell by cell: every text shows as text, and no dialog ever opens (the handler would raise one)."""
    page = workbench
    dialogs = []
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    bad = tmp_path / "probe.csv"
    hostile = '<img src=x onerror="alert(7)">'
    rows = "".join(f"{i},{0.5 * i + 0.01 * (i % 3)}\n" for i in range(1, 30))
    bad.write_text(f"{hostile} [kN],response<svg onload=alert(8)>\n{rows}3,{hostile}\n")
    page.locator("input[type=file]").set_input_files(str(bad))
    page.get_by_text("Could not load probe.csv").wait_for(timeout=15000)
    page.wait_for_timeout(1000)
    assert page.locator("img[src=x]").count() == 0 and page.locator("svg[onload]").count() == 0
    good = tmp_path / "probe2.csv"
    good.write_text(f"{hostile} [kN],response<svg onload=alert(8)>\n{rows}")
    page.locator("input[type=file]").set_input_files(str(good))
    page.get_by_text("Loaded probe2.csv").first.wait_for(timeout=15000)
    page.wait_for_timeout(1500)
    assert page.locator("img[src=x]").count() == 0 and page.locator("svg[onload]").count() == 0
    assert page.locator("option", has_text="onerror").count() >= 1      # the column name, as text
    assert dialogs == []
