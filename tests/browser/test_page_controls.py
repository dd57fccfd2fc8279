"""The workbench's controls in headless chromium: learning curve without a button, columns applied at once,
every control recorded in the exported choice, read-back, layout at two screen sizes, the first-visit guide."""

import json
import time

import numpy as np

DEEP_TEXT = """(sel) => {
  const walk = (n) => { let s = ''; if (n.shadowRoot) s += walk(n.shadowRoot);
    for (const c of n.childNodes) { s += c.nodeType === 3 ? c.textContent : walk(c); } return s; };
  const find = (root) => { const hit = root.querySelector(sel); if (hit) return hit;
    for (const e of root.querySelectorAll('*')) { if (e.shadowRoot) { const h = find(e.shadowRoot); if (h) return h; } }
    return null; };
  const el = find(document); return el ? walk(el) : '';
}"""
DEEP_TEXT_ALL = """() => { const walk = (n) => { let s = ''; if (n.shadowRoot) s += walk(n.shadowRoot);
    for (const c of n.childNodes) { s += c.nodeType === 3 ? c.textContent : walk(c); } return s; };
  return walk(document.body); }"""
LC = "() => Array.from(Bokeh.documents[0].get_model_by_name('learning_curve').data.n)"


def deep_text(page, css):
    """The text of the first element matching ``css``, including what its shadow roots hold."""
    return page.evaluate(DEEP_TEXT, css)


def wait_for(fn, timeout=15.0, what="the page to update"):
    end = time.time() + timeout
    while time.time() < end:
        got = fn()
        if got:
            return got
        time.sleep(0.1)
    raise AssertionError(f"timed out waiting for {what}")


def test_learning_curve_is_drawn_and_follows_the_training_fraction(workbench):
    """The learning curve is drawn on arrival (no button); moving the training-fraction slider with the keyboard
    recomputes it on fewer rows."""
    page = workbench
    first = np.array(wait_for(lambda: page.evaluate(LC), what="the learning curve"))
    assert page.get_by_role("button", name="Learning curve").count() == 0
    handle = page.locator(".cw-train-fraction [role=slider]")
    handle.focus()
    for _ in range(6):
        page.keyboard.press("ArrowLeft")
    def smaller():
        n = page.evaluate(LC)
        return bool(n) and n[-1] < 0.9 * first[-1]
    wait_for(smaller, what="a learning curve on fewer rows")


def _download_choice(page, tmp_path):
    with page.expect_download(timeout=60000) as d:
        page.get_by_text("Export choice (JSON)").click()
    path = tmp_path / d.value.suggested_filename
    d.value.save_as(path)
    return d.value.suggested_filename, json.loads(path.read_text())


def _settled(page):
    """Wait until the page has no pending work (the busy spinner is off and the calibration text is final)."""
    page.wait_for_timeout(300)
    wait_for(lambda: "updating" not in deep_text(page, ".cw-calibration")
             and "Working out" not in deep_text(page, ".cw-readback"), what="the page to settle")


def test_controls_round_trip_into_the_exported_choice(workbench, tmp_path):
    """Through (0, 0), the x transform, repeats and the penalty, set in the browser, are the exported file's
    fields; the download is named after the data file and the configuration."""
    page = workbench
    page.locator(".cw-origin input").check()
    page.wait_for_timeout(800)
    page.locator(".cw-xt select").select_option("sqrt")
    page.wait_for_timeout(800)
    rep = page.locator(".cw-repeats input")
    rep.fill("3")
    rep.press("Enter")
    page.wait_for_timeout(800)
    page.locator(".cw-penalty select").select_option("ridge")
    page.wait_for_timeout(1500)
    _settled(page)
    name, doc = _download_choice(page, tmp_path)
    assert doc["model"]["intercept"] is False
    assert doc["model"]["transforms"] == {"x": "sqrt", "y": "none"}
    assert doc["validation"]["repeats"] == 3
    assert doc["model"]["penalty"] == "ridge"
    assert name == f"furnace_yield_deg{doc['model']['degree']}_lam1e-3_ridge_origin_xsqrt_choice.json"


def test_column_choice_applies_at_once(workbench, tmp_path):
    """Uploading a file proposes x and y from the header names; choosing another y column redraws the points
    at once, with no further button."""
    page = workbench
    f = tmp_path / "bench.csv"
    lines = ["sample_id,signal [mV],temperature [degC],output [V]"]
    lines += [f"S{i},{0.5 * i + 0.01 * (-1) ** i},{10 + i},{3 - 0.1 * i + 0.02 * (-1) ** i}" for i in range(40)]
    f.write_text("\n".join(lines) + "\n")
    page.locator("input[type=file]").set_input_files(str(f))
    page.get_by_text("Proposed x = temperature [degC], y = signal [mV]").wait_for(timeout=15000)
    pts = "() => Array.from(Bokeh.documents[0].get_model_by_name('fit_points').data.y)"
    wait_for(lambda: max(page.evaluate(pts) or [0]) > 5, what="the signal column drawn")
    assert page.get_by_role("button", name="Use these columns").count() == 0
    page.locator(".cw-ycol select").select_option("output [V]")
    wait_for(lambda: page.evaluate(pts) and max(page.evaluate(pts)) < 3.1, what="the output column drawn")


def test_read_back_table_and_marks(workbench):
    """Pasted readings give a read-back table and marks on the curve plot."""
    page = workbench
    box = page.locator(".cw-readings textarea")
    box.fill("60\n70 71 69")
    box.blur()
    page.locator(".cw-readback table").wait_for(timeout=30000)
    text = deep_text(page, ".cw-readback")
    assert "bounded" in text or "one-sided" in text
    marks = "() => Bokeh.documents[0].get_model_by_name('readback_marks').data.y.length"
    wait_for(lambda: page.evaluate(marks) == 2, what="two read-back marks")


def test_lambda_slider_reads_zero_at_its_left_end(workbench):
    """At the lambda slider's left end its label reads 0, never the slider position -9."""
    page = workbench
    handle = page.locator(".cw-lambda [role=slider]")
    handle.focus()
    page.keyboard.press("Home")
    wait_for(lambda: handle.get_attribute("aria-valuenow") == "-9.0", what="the slider's left end")
    title = page.locator(".cw-lambda .bk-slider-title")
    wait_for(lambda: title.inner_text().strip().endswith(": 0"), what="the label to read 0")
    assert "-9" not in title.inner_text()


def _widgets_inside(page, width):
    """Every visible control lies inside the viewport's width, and those of the side column inside it."""
    side = page.locator(".cw-side").first.bounding_box()
    assert side["x"] >= 0 and side["x"] + side["width"] <= width + 0.5
    bad = []
    for sel in ("input", "select", "textarea", "button", ".noUi-target"):
        for el in page.locator(sel).all():
            if not el.is_visible():
                continue
            b = el.bounding_box()
            if b is None or b["width"] == 0:
                continue
            inside_side = side["x"] - 0.5 <= b["x"] < side["x"] + side["width"]
            right = b["x"] + b["width"]
            if b["x"] < -0.5 or right > width + 0.5 or (inside_side and right > side["x"] + side["width"] + 0.5):
                bad.append((sel, round(b["x"]), round(right)))
    assert not bad, f"controls cut at width {width}: {bad}"


def test_nothing_clipped_at_two_screen_sizes(workbench, tmp_path):
    """At 1280 x 800 and 1920 x 1080 every control's box lies inside the viewport and its side column."""
    page = workbench
    for w, h in ((1280, 800), (1920, 1080)):
        page.set_viewport_size({"width": w, "height": h})
        page.wait_for_timeout(800)
        _widgets_inside(page, w)
        page.screenshot(path=str(tmp_path / f"page_{w}.png"), full_page=True)


def test_first_visit_guide_can_be_dismissed_and_caution_stays(workbench):
    """The guide is shown on arrival and hides on its button; the caution stays."""
    page = workbench
    guide = page.locator(".cw-guide").first
    assert guide.is_visible() and "Simplest within one SE" in deep_text(page, ".cw-guide")
    page.get_by_role("button", name="Got it, hide this guide").click()
    wait_for(lambda: not guide.is_visible(), what="the guide to hide")
    assert page.get_by_text("Local codes, standards and licensed professional practice govern").is_visible()


def test_messy_file_gets_a_message_in_page_words(workbench, tmp_path):
    """Blank cells are skipped and named; text in a numeric column and a repeated header get a message that
    names the row or column, with no option names and no traceback."""
    page = workbench
    f = tmp_path / "messy.csv"
    f.write_text("load [kN],deflection [mm]\n1,2.1\n2,\n3,6.2\n4,8.1\n5,10.2\n6,12.1\n7,14.3\n8,16.0\n")
    page.locator("input[type=file]").set_input_files(str(f))
    page.get_by_text("skipped for a blank cell in a chosen column (rows 3)").wait_for(timeout=15000)
    f2 = tmp_path / "messy2.csv"
    f2.write_text("load [kN],deflection [mm]\n1,2.1\n2,n/a\n3,6.2\n")
    page.locator("input[type=file]").set_input_files(str(f2))
    page.get_by_text("Could not load messy2.csv").wait_for(timeout=15000)
    status = page.locator("[name=status], .bk-panel-models-markup-HTML").first
    f3 = tmp_path / "messy3.csv"
    f3.write_text("load,load,deflection\n1,1,2\n2,2,4\n3,3,6\n")
    page.locator("input[type=file]").set_input_files(str(f3))
    page.get_by_text("Could not load messy3.csv").wait_for(timeout=15000)
    body = page.locator("body").inner_text()
    assert "Traceback" not in body and " --" not in body and "/tmp" not in body
    assert status is not None


DOCS = __import__("pathlib").Path(__file__).resolve().parents[2] / "docs"


def test_readme_screenshot_after_a_fit(workbench):
    """docs/workbench.png: the page on the bundled invented sample at 1280 x 800 after taking the simplest
    suggestion and reading two invented readings back, guide dismissed (the README shows it)."""
    page = workbench
    page.set_viewport_size({"width": 1280, "height": 800})
    page.get_by_role("button", name="Got it, hide this guide").click()
    page.get_by_role("button", name="Suggest: simplest within one SE").click()
    page.get_by_text("Jumped to the simplest recommendation").wait_for(timeout=15000)
    box = page.locator(".cw-readings textarea")
    box.fill("60\n71 72 70")
    box.blur()
    marks = "() => Bokeh.documents[0].get_model_by_name('readback_marks').data.y.length"
    wait_for(lambda: page.evaluate(marks) == 2, what="the read-back marks")
    _settled(page)
    page.evaluate("() => { window.scrollTo(0, 0); document.querySelectorAll('*').forEach(e => { e.scrollTop = 0; }); }")
    page.mouse.move(5, 5)
    page.wait_for_timeout(300)
    DOCS.mkdir(exist_ok=True)
    page.screenshot(path=str(DOCS / "workbench.png"))
    from PIL import Image

    assert Image.open(DOCS / "workbench.png").size == (1280, 800)


def test_two_pages_keep_their_own_inputs(workbench, context, app_url):
    """Readings and a column choice on one page leave another page's read-back and columns alone."""
    first = workbench
    second = context.new_page()
    second.goto(app_url)
    second.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0"
                             " && Bokeh.documents[0].get_model_by_name('fit_curve')"
                             " && Bokeh.documents[0].get_model_by_name('fit_curve').data.y.length > 0",
                             timeout=30000)
    box = first.locator(".cw-readings textarea")
    box.fill("60")
    box.blur()
    marks = "() => Bokeh.documents[0].get_model_by_name('readback_marks').data.y.length"
    wait_for(lambda: first.evaluate(marks) == 1, what="a read-back mark on the first page")
    first.locator(".cw-xt select").select_option("log")
    first.wait_for_timeout(1500)
    assert second.evaluate(marks) == 0
    assert second.locator(".cw-xt select").input_value() == "none"


SAMPLES = DOCS.parent / "sample_sets"


def _upload(page, path):
    page.locator("input[type=file]").set_input_files(str(path))
    page.get_by_text(f"Loaded {path.name}").first.wait_for(timeout=20000)
    _settled(page)


def test_more_controls_round_trip_into_the_choice(workbench, tmp_path):
    """Weights kind, leave-one-out, the fold column, the group column and the elastic-net share, set in the
    browser, are the downloaded choice's fields."""
    page = workbench
    _upload(page, SAMPLES / "assay_calibration.csv")
    _, doc = _download_choice(page, tmp_path)
    assert doc["model"]["weighting"] == {"column": "u_signal [AU]", "kind": "uncertainty"}
    page.locator(".cw-wkind select").select_option("relative")
    page.wait_for_timeout(1500)
    _settled(page)
    _, doc = _download_choice(page, tmp_path)
    assert doc["model"]["weighting"]["kind"] == "relative"
    page.locator(".cw-loo input").check()
    page.wait_for_timeout(2000)
    _settled(page)
    _, doc = _download_choice(page, tmp_path)
    assert doc["validation"]["scheme"] == "loo"

    _upload(page, SAMPLES / "beam_deflection.csv")
    page.locator(".cw-loo input").uncheck()
    page.locator(".cw-sealed [role=slider]").focus()
    page.keyboard.press("Home")                      # no sealed rows: three runs are few groups
    page.wait_for_timeout(1500)
    folds = page.locator(".cw-folds input")
    folds.fill("3")
    folds.press("Enter")
    page.wait_for_timeout(1000)
    page.locator(".cw-fcol select").select_option("run")
    page.wait_for_timeout(1500)
    _settled(page)
    _, doc = _download_choice(page, tmp_path)
    assert doc["validation"]["folds_given_by"] == "run" and doc["validation"]["scheme"] == "explicit"
    page.locator(".cw-fcol select").select_option("")
    page.wait_for_timeout(1000)
    page.locator(".cw-gcol select").select_option("run")
    page.wait_for_timeout(1500)
    page.locator(".cw-penalty select").select_option("elastic")
    page.get_by_text("Elastic-net L1 share").wait_for(timeout=20000)
    handle = page.locator(".cw-mix [role=slider]")
    handle.focus()
    page.keyboard.press("End")
    wait_for(lambda: handle.get_attribute("aria-valuenow") == "1.0", what="the L1 share at 1")
    page.wait_for_timeout(6000)             # the elastic net's surface takes a few seconds on 48 rows
    _settled(page)
    _, doc = _download_choice(page, tmp_path)
    assert doc["validation"]["groups_from"] == "run" and doc["validation"]["scheme"] == "group"
    assert doc["model"]["penalty"] == "elastic" and doc["model"]["mix"] == 1.0


def test_learning_curve_follows_the_degree_slider(workbench):
    """When the degree slider comes to rest on a new value, the learning curve is recomputed for it."""
    page = workbench
    wait_for(lambda: "Degree 3, lambda 0.001 (curvature penalty), 10 folds" in page.evaluate(DEEP_TEXT_ALL),
             what="the learning curve of degree 3")
    handle = page.locator(".cw-degree [role=slider]")
    handle.focus()
    page.keyboard.press("ArrowRight")
    wait_for(lambda: "Degree 4, lambda 0.001 (curvature penalty), 10 folds" in page.evaluate(DEEP_TEXT_ALL),
             what="the learning curve of degree 4")
