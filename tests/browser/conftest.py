"""Real-browser tests: Playwright for Python driving Debian's chromium (never a downloaded one).

Under CI (CI=true) a missing chromium is an error; elsewhere these tests skip
with the reason.
"""

import os
import shutil
import socket
from pathlib import Path

import pytest

CHROMIUM = shutil.which("chromium")
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts"


def pytest_collection_modifyitems(config, items):
    if CHROMIUM:
        return
    if os.environ.get("CI") == "true":
        raise pytest.UsageError("CI=true but no 'chromium' on PATH: .ci/run must install Debian's chromium.")
    skip = pytest.mark.skip(reason="no 'chromium' on PATH (apt-get install chromium); browser tests skipped")
    for item in items:
        if "browser" in str(item.fspath):
            item.add_marker(skip)


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args):
    return {**browser_type_launch_args, "executable_path": CHROMIUM, "args": ARGS}


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="session")
def app_url():
    from app.serve import serve

    port = _free_port()
    server = serve(None, port=port, show=False, threaded=True)
    yield f"http://127.0.0.1:{port}/"
    server.stop()


@pytest.fixture
def workbench(page, app_url):
    page.set_viewport_size({"width": 1500, "height": 1100})
    page.goto(app_url)
    page.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0"
                           " && Bokeh.documents[0].get_model_by_name('fit_curve')"
                           " && Bokeh.documents[0].get_model_by_name('fit_curve').data.y.length > 0",
                           timeout=30000)
    return page


@pytest.fixture(scope="session")
def artifacts():
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS
