"""The standalone report in headless chromium: no console errors, plots drawn, images export."""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np

from app.cli import main

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample_sets" / "thermistor_bench.csv"


def make(tmp_path):
    choice = tmp_path / "t.json"
    assert main(["sweep", str(DATA), "--x", "1", "--y", "2", "--uncertainty", "u_resistance", "--degrees", "0-8",
                 "--folds", "5", "--save", str(choice)]) == 0
    out = tmp_path / "t.html"
    assert main(["report", str(choice), str(DATA), "--out", str(out)]) == 0
    return choice, out


def test_report_opens_offline_and_draws(page, tmp_path, artifacts):
    """The report opens with the network blocked, draws all eight figures with ink, and logs no console error."""
    choice, out = make(tmp_path)
    errors = []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.route("http*://**", lambda route: route.abort())   # offline: nothing may be fetched
    page.set_viewport_size({"width": 1300, "height": 1000})
    page.goto(out.resolve().as_uri())
    page.wait_for_function("() => window.Bokeh && [...Bokeh.index.all_views()].filter("
                           "v => v.model && v.model.type == 'Figure').length == 8")
    page.wait_for_timeout(800)
    canvases = page.locator("canvas")
    assert canvases.count() >= 8
    inked = page.evaluate("""() => [...Bokeh.index.all_views()].filter(v => v.model && v.model.type == 'Figure')
        .map(v => { const c = v.export('png').canvas; const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
                    let n = 0; for (let i = 0; i < d.length; i += 4) if (d[i] < 200 || d[i+1] < 200 || d[i+2] < 200) n++; return n; })""")
    assert len(inked) == 8 and min(inked) > 500, inked
    assert errors == []
    page.screenshot(path=str(artifacts / "report.png"), full_page=True)
    doc = json.loads(choice.read_text())
    assert page.locator("[data-field=degree]").inner_text() == str(doc["model"]["degree"])


def cli(*args):
    """The command line in its own process (Playwright's sync API cannot nest in this one)."""
    p = subprocess.run([sys.executable, "-m", "app.cli", *map(str, args)], capture_output=True, text=True,
                       cwd=ROOT)
    return p.returncode, p.stderr


def test_images_export_as_png_and_svg(tmp_path):
    """--images writes the eight plots as PNG, or as SVG with --image-format svg."""
    choice, out = make(tmp_path)
    imgs = tmp_path / "img"
    imgs.mkdir()
    assert cli("report", choice, DATA, "--out", out, "--force", "--images", imgs)[0] == 0
    assert cli("report", choice, DATA, "--out", out, "--force", "--images", imgs, "--image-format", "svg")[0] == 0
    pngs, svgs = sorted(imgs.glob("*.png")), sorted(imgs.glob("*.svg"))
    assert len(pngs) == 8 and len(svgs) == 8
    assert all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in pngs)
    assert all(s.read_text().startswith("<svg") for s in svgs)


def test_missing_browser_is_a_clear_error(tmp_path, monkeypatch, capsys):
    """Without chromium on PATH, image export fails with a message saying what is missing."""
    choice, out = make(tmp_path)
    import shutil

    monkeypatch.setattr(shutil, "which", lambda name: None)
    code = main(["report", str(choice), str(DATA), "--out", str(out), "--force", "--images", str(tmp_path)])
    assert code == 2
    assert "Image export: expected Debian's chromium on PATH, got none" in capsys.readouterr().err
