"""Build the page and serve it on 127.0.0.1 (thin: every session gets its own state)."""

from __future__ import annotations

from pathlib import Path

import panel as pn

from .state import Workbench
from .views import Workspace

SAMPLE = Path(__file__).resolve().parents[1] / "sample_sets" / "furnace_yield.csv"


def build_page(path=None, stats=None):
    """A fresh state and page for one browser session."""
    state = Workbench(None if stats else (path or SAMPLE), stats=stats)
    return Workspace(state).panel()


def serve(path=None, *, port: int = 5006, show: bool = True, address: str = "127.0.0.1",
          threaded: bool = False, stats=None):
    """Start the Panel server; returns the server object (``.stop()`` ends it)."""
    if path is not None and not Path(path).is_file():
        from core.errors import DataError, message
        raise DataError(message(f"File '{path}'", "an existing file", "nothing at that path"))
    pn.extension(notifications=False)
    if stats is not None and not Path(stats).is_file():
        from core.errors import DataError, message
        raise DataError(message(f"Statistics file '{stats}'", "an existing file", "nothing at that path"))
    return pn.serve({"/": lambda: build_page(path, stats)}, port=port, address=address, show=show,
                    title="curvewright", threaded=threaded,
                    websocket_origin=[f"{address}:{port}", f"localhost:{port}", f"127.0.0.1:{port}"])
