"""The fit recomputed in the browser on a slider event agrees with the server's exact answer.

Reference: the server's own outputs (``app.derive.setting_outputs`` through the page model,
itself checked against numpy.linalg.lstsq and scikit-learn in tests/core), read from the
same Bokeh sources after the browser's estimate was captured.
"""

import pytest

# Record every change of the live sources, tagged with whether the browser-side callback
# made it (it raises ``__cw_busy`` on the statistics source while it assigns).
ARM = """() => {
  const doc = Bokeh.documents[0];
  window.__log = [];
  for (const name of ['fit_curve', 'resid_points', 'fit_interval']) {
    const s = doc.get_model_by_name(name);
    if (s.__armed) continue;
    s.__armed = true;
    s.properties.data.change.connect(() => {
      const d = s.data, copy = {};
      for (const k of Object.keys(d)) copy[k] = Array.from(d[k]);
      const st = doc.get_model_by_name('clientside_stats');
      window.__log.push({name: name, browser: st.__cw_busy === true,
                         t: performance.now(), data: copy});
    });
  }
  window.__log = [];
}"""

def _close(a, b, rtol=1e-9):
    """|a - b| <= rtol * max|b| elementwise (relative to the curve's own scale)."""
    assert len(a) == len(b) and len(b) > 0
    scale = max(abs(v) for v in b) or 1.0
    worst = max(abs(x - y) for x, y in zip(a, b))
    assert worst <= rtol * scale, f"browser and server differ by {worst:.3g} (scale {scale:.3g})"


def _move(page, handle: int, key: str):
    """Press a key on a slider; return (the browser's sources, the server's sources)."""
    page.evaluate(ARM)
    h = page.locator("[role=slider]").nth(handle)
    h.focus()
    page.keyboard.press(key)
    page.wait_for_function("() => { const c = Bokeh.documents[0].get_model_by_name('fit_curve');"
                           " return c.data !== c.__cw_data; }", timeout=20000)
    # the server's answer, then quiet: under load an answer to the previous key can arrive first, so
    # wait until the server has answered and nothing has changed for half a second
    page.wait_for_function("""() => { const log = window.__log;
        if (!log.some(e => e.name === 'fit_curve' && !e.browser)) return false;
        return performance.now() - log[log.length - 1].t > 500; }""", timeout=30000)
    log = page.evaluate("() => window.__log")
    first = {e["name"]: e["data"] for e in log if e["browser"]}     # the browser's last estimate per source
    assert "fit_curve" in first, "the browser did not redraw the curve on the key press"
    assert any(not e["browser"] for e in log if e["name"] == "fit_curve"), "no answer from the server"
    server = page.evaluate("""() => { const doc = Bokeh.documents[0], out = {};
        for (const n of ['fit_curve', 'resid_points', 'fit_interval']) { const d = doc.get_model_by_name(n).data;
          out[n] = {}; for (const k of Object.keys(d)) out[n][k] = Array.from(d[k]); } return out; }""")
    return first, server


def test_browser_fit_matches_server_for_degree_and_lambda_moves(workbench):
    """Degree up, lambda up, lambda to its left end (0): the browser's curve, residuals and
    lambda = 0 band agree with the server's to 1e-9 relative."""
    page = workbench
    page.wait_for_timeout(500)
    for handle, key in ((0, "ArrowRight"), (1, "ArrowRight"), (1, "ArrowRight"), (0, "ArrowLeft"),
                        (1, "Home"), (0, "ArrowRight"), (0, "ArrowRight")):
        first, server = _move(page, handle, key)
        _close(first["fit_curve"]["y"], server["fit_curve"]["y"])
        if "resid_points" in first:
            _close(first["resid_points"]["r"], server["resid_points"]["r"])
            _close(first["resid_points"]["fitted"], server["resid_points"]["fitted"])
        if server["fit_interval"]["x"]:
            assert "fit_interval" in first, "the browser did not draw the lambda = 0 band"
            _close(first["fit_interval"]["lo"], server["fit_interval"]["lo"])
            _close(first["fit_interval"]["hi"], server["fit_interval"]["hi"])


def test_mouse_drag_redraws_at_every_step(workbench):
    """Dragging the lambda handle redraws the curve in the browser while the button is still down."""
    page = workbench
    page.wait_for_timeout(500)
    page.evaluate(ARM)
    box = page.locator("[role=slider]").nth(1).bounding_box()
    x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    page.mouse.move(x, y)
    page.mouse.down()
    for step in range(1, 7):
        page.mouse.move(x + 12 * step, y)
        page.wait_for_timeout(30)
    drawn = page.evaluate("() => window.__log.filter(e => e.name === 'fit_curve' && e.browser).length")
    page.mouse.up()
    assert drawn >= 3, f"only {drawn} redraws during a six-step drag"


def test_lambda_label_reads_zero_at_left_end(workbench):
    """The lambda slider shows 0, not the log position -9, at its left end."""
    page = workbench
    h = page.locator("[role=slider]").nth(1)
    h.focus()
    page.keyboard.press("Home")
    page.wait_for_timeout(300)
    text = page.locator(".bk-slider-title").nth(1).inner_text()
    assert text.rstrip().endswith("0") and "-9" not in text, text


@pytest.mark.parametrize("penalty", ["lasso"])
def test_browser_leaves_lasso_to_the_server(workbench, penalty):
    """With the lasso (no closed form in lambda) the browser draws nothing of its own."""
    page = workbench
    sel = page.locator("select").filter(has=page.locator("option[value=lasso]")).first
    sel.select_option(penalty)
    page.wait_for_function("() => Bokeh.documents[0].get_model_by_name('clientside_stats').data.ok.length === 0",
                           timeout=30000)
    page.evaluate(ARM)
    page.locator("[role=slider]").nth(1).focus()
    page.keyboard.press("ArrowRight")
    log = page.evaluate("() => window.__log")
    assert not [e for e in log if e["browser"]]


@pytest.mark.parametrize("size", [(1280, 800), (1920, 1080)])
def test_error_plots_screenshot(workbench, artifacts, size):
    """The error-against-flexibility tab at both sizes, saved as an artifact: the marks are the
    current setting and the two recommendations, labelled, and every legend sits below its plot."""
    page = workbench
    page.set_viewport_size({"width": size[0], "height": size[1]})
    page.get_by_text("Error vs flexibility").click()
    page.wait_for_timeout(800)
    labels = page.evaluate("""() => [...Bokeh.documents[0].all_models]
        .filter(m => m.type === 'Label' && m.visible).map(m => m.text)""")
    for word in ("now", "lowest", "simplest"):
        assert sum(t.startswith(word) for t in labels) == 2, labels      # on both error plots
    stars = page.evaluate("""() => [...Bokeh.documents[0].all_models]
        .filter(m => m.type === 'Scatter' && m.marker && m.marker.value === 'star').length""")
    assert stars == 0
    inside = page.evaluate("""() => { const ms = [...Bokeh.documents[0].all_models], outside = new Set();
        for (const p of ms.filter(m => Array.isArray(m.below) && Array.isArray(m.right)))
          for (const side of ['below', 'right', 'left', 'above']) for (const r of p[side]) outside.add(r);
        return ms.filter(m => m.type === 'Legend' && !outside.has(m)).length; }""")
    assert inside == 0, f"{inside} legend(s) drawn over a plot area"
    path = artifacts / f"error_plots_{size[0]}x{size[1]}.png"
    page.screenshot(path=str(path), full_page=True)
    assert path.stat().st_size > 10_000
