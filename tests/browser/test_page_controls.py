"""The workbench's controls in headless chromium: learning curve without a button, columns applied at once,
every control recorded in the exported choice, read-back, layout at two screen sizes, the first-visit guide."""

import json
import time

import numpy as np

LC = "() => Array.from(Bokeh.documents[0].get_model_by_name('learning_curve').data.n)"


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
