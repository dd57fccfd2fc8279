"""Save a report's plots as PNG or SVG through the installed headless chromium.

BokehJS renders each figure into a canvas or SVG layer (``PlotView.export``) inside
the page, so the images are exactly the report's plots; Playwright drives Debian's
``chromium`` (nothing is downloaded). A missing browser is a clear error.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

from core.errors import CurvewrightError, message
from core.files import write_atomic

ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]

_EXPORT = """async (fmt) => {
  const views = [...Bokeh.index.all_views()].filter(v => v.model && v.model.type == 'Figure');
  const out = [];
  for (const v of views) {
    const blob = await v.export(fmt == 'svg' ? 'svg' : 'png').to_blob();
    const data = fmt == 'svg' ? await blob.text() : Array.from(new Uint8Array(await blob.arrayBuffer()));
    out.push([v.model.title ? v.model.title.text : v.model.id, data]);
  }
  return out;
}"""


class BrowserMissing(CurvewrightError, RuntimeError):
    """No headless browser to render images with."""


def _slug(title: str) -> str:
    return re.sub(r"[^a-z0-9]+", "_", title.lower()).strip("_") or "plot"


def export_images(html_path, out_dir, fmt: str = "png", *, force: bool = False) -> list[Path]:
    """Write one image per plot of a report (``fmt`` "png" or "svg"); returns the paths."""
    if fmt not in ("png", "svg"):
        raise CurvewrightError(message("Option --image-format", "png or svg", repr(fmt)))
    chromium = shutil.which("chromium")
    if chromium is None:
        raise BrowserMissing(message("Image export", "Debian's chromium on PATH", "none",
                                     "Install it with 'apt-get install chromium', or use the HTML report alone"))
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        raise BrowserMissing(message("Image export", "the playwright package", "none",
                                     "pip install playwright (no browser download is needed)")) from None
    out_dir = Path(out_dir)
    if not out_dir.is_dir():
        raise CurvewrightError(message(f"Image folder '{out_dir}'", "an existing folder", "none"))
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1300, "height": 1000})
            page.goto(Path(html_path).resolve().as_uri())
            page.wait_for_function("() => window.Bokeh && Bokeh.index && [...Bokeh.index.all_views()].length > 0",
                                   timeout=60000)
            page.wait_for_timeout(500)
            items = page.evaluate(_EXPORT, fmt)
        finally:
            browser.close()
    paths = []
    for title, data in items:
        target = out_dir / f"{_slug(title)}.{fmt}"
        payload = data if fmt == "svg" else bytes(data)
        paths.append(write_atomic(target, payload, force=force))
    return paths
