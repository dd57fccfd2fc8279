"""Slider key press -> plots updated, in the browser and after the server's answer.

For n = 1e4, 1e5, 1e6 invented rows, serves the page in-process on 127.0.0.1, opens it in
Debian's chromium (Playwright), presses arrow keys on the degree and lambda sliders
30 times and reports, per size:

* browser: time until the fit curve's source was redrawn by the page's own JavaScript
  (app/clientside.py), median and p95 (target: p95 <= 30 ms at 1e5 and 1e6);
* server: time until the server's exact answer has replaced the fit and residual sources
  and filled both error-vs-complexity sources (the round trip), median and p95
  (target: p95 <= 150 ms);
* the server-side compute of one change (the page model's refresh), for comparison.

The clock starts just before the key press is sent, so Playwright's own dispatch is
included (the figures are upper bounds). Needs `chromium` on PATH.

Usage: python bench/bench_page.py [--sizes 1e4,1e5,1e6] [--moves 30]
"""

from __future__ import annotations

import argparse
import shutil
import socket
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]
SOURCES = ["fit_curve", "resid_points", "by_degree", "by_lambda"]
# Changes made while the browser-side callback runs are flagged by it (``__cw_busy``).
ARM = """() => { window.__cw = {}; window.__cw_js = undefined; const doc = Bokeh.documents[0];
  const st = doc.get_model_by_name('clientside_stats');
  for (const name of %s) { const s = doc.get_model_by_name(name);
    if (!s.__cw) { s.__cw = true; s.properties.data.change.connect(() => {
      if (st && st.__cw_busy) { if (name === 'fit_curve' && window.__cw_js === undefined) window.__cw_js = performance.now(); }
      else if (window.__cw[name] === undefined) window.__cw[name] = performance.now(); }); } }
  window.__cw_t0 = performance.now(); }"""
DONE = "() => %s.every(n => window.__cw[n] !== undefined)" % SOURCES
ELAPSED = "() => Math.max(...%s.map(n => window.__cw[n])) - window.__cw_t0" % SOURCES
BROWSER = "() => window.__cw_js === undefined ? null : window.__cw_js - window.__cw_t0"


def invented_csv(n: int, folder: Path) -> Path:
    rng = np.random.default_rng(1)
    x = rng.uniform(0, 10, n)
    y = np.sin(x) + 0.1 * x + 0.3 * rng.normal(size=n)
    path = folder / f"bench_{n}.csv"
    np.savetxt(path, np.column_stack([x, y]), delimiter=",", header="x,y", comments="", fmt="%.8g")
    return path


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def measure(path: Path, moves: int) -> tuple[list[float], list[float], list[float]]:
    from playwright.sync_api import sync_playwright

    from app.model import PageModel
    from app.serve import serve
    from app.session import Session

    session = Session()
    PageModel(session, path)
    server_ms = []
    for i in range(moves):
        t0 = time.perf_counter()
        if i % 2:
            session.log_lambda = -3 + 0.1 * (i % 10)
        else:
            session.degree = 3 + i % 6
        server_ms.append((time.perf_counter() - t0) * 1e3)

    port = free_port()
    server = serve(path, port=port, show=False, threaded=True)
    try:
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=shutil.which("chromium"), args=ARGS)
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            page.goto(f"http://127.0.0.1:{port}/")
            page.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0 && "
                                   "Bokeh.documents[0].get_model_by_name('fit_curve').data.y.length > 0",
                                   timeout=120000)
            time.sleep(1.0)
            sliders = page.locator("[role=slider]")
            trip, local = [], []
            for i in range(moves):
                handle = sliders.nth(i % 2)
                handle.focus()
                page.evaluate(ARM % SOURCES)
                page.keyboard.press("ArrowRight" if (i // 2) % 4 < 2 else "ArrowLeft")
                page.wait_for_function(DONE, timeout=30000, polling="raf")
                trip.append(page.evaluate(ELAPSED))
                here = page.evaluate(BROWSER)
                if here is not None:
                    local.append(here)
                page.wait_for_timeout(150)      # let the server's patch settle before the next press
            browser.close()
    finally:
        server.stop()
    return trip, local, server_ms


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", default="1e4,1e5,1e6")
    ap.add_argument("--moves", type=int, default=30)
    a = ap.parse_args()
    if not shutil.which("chromium"):
        sys.exit("bench_page: no 'chromium' on PATH (apt-get install chromium)")
    with tempfile.TemporaryDirectory() as tmp:
        for n in (int(float(s)) for s in a.sizes.split(",")):
            trip, local, srv = measure(invented_csv(n, Path(tmp)), a.moves)
            shown = (f"median {np.median(local):5.1f} ms  p95 {np.percentile(local, 95):5.1f} ms"
                     f"  ({len(local)}/{len(trip)} presses)" if local else "never (server only)")
            print(f"n={n:>8}: browser redraw {shown}   (target p95 <= 30 ms)\n"
                  f"{'':11}server answer  median {np.median(trip):6.1f} ms  p95 {np.percentile(trip, 95):6.1f} ms"
                  f"   (target p95 <= 150 ms)   server compute median {np.median(srv):5.1f} ms", flush=True)


if __name__ == "__main__":
    main()
