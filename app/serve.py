"""Build the page and serve it on 127.0.0.1 (thin: every browser session gets its own session and model)."""

from __future__ import annotations

import threading
from pathlib import Path

import panel as pn

from .loading import should_stream
from .model import PageModel
from .session import Session
from .views import Workspace

SAMPLE = Path(__file__).resolve().parents[1] / "sample_sets" / "furnace_yield.csv"


def build_page(path=None, stats=None):
    """A fresh session, model and page for one browser session.

    A file large enough to be streamed is loaded after the page is shown, in a thread,
    so the page's progress bar can follow it.
    """
    big = path is not None and stats is None and should_stream(path)
    model = PageModel(Session(), stats=stats)
    if pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
        pn.state.on_session_destroyed(lambda _ctx: model.close())    # uploaded copies go with the session
    page = Workspace(model).panel()
    if not (stats or big):
        # loaded once the page is connected, so the slower work after it (the curve's covariance for
        # read-back and limits) can run in a thread and report back to this page
        pn.state.onload(lambda: model.load_path(path or SAMPLE))
    if big:
        model.status = f"Streaming {Path(path).name} into the statistics..."
        doc = pn.state.curdoc

        def load():
            # the pass runs in a thread (only progress is reported from there); the switch to
            # the new statistics is handed back to the document's own thread
            def run():
                from core.errors import CurvewrightError

                with pn.io.server.set_curdoc(doc):
                    try:
                        args = model.stream_engine(path)
                    except CurvewrightError as exc:
                        msg = f"Could not load {Path(path).name}: {exc}"
                        doc.add_next_tick_callback(lambda: setattr(model, "status", msg))
                        return
                doc.add_next_tick_callback(lambda: model.finish_stream(*args))
            threading.Thread(target=run, daemon=True).start()
        pn.state.onload(load)
    return page


def serve(path=None, *, port: int = 5006, show: bool = True, address: str = "127.0.0.1",
          threaded: bool = False, stats=None):
    """Start the Panel server; returns the server object (``.stop()`` ends it)."""
    if path is not None and not Path(path).is_file():
        from core.errors import DataError, message
        raise DataError(message(f"File '{path}'", "an existing file", "nothing at that path"))
    pn.extension("filedropper", notifications=False)
    if stats is not None and not Path(stats).is_file():
        from core.errors import DataError, message
        raise DataError(message(f"Statistics file '{stats}'", "an existing file", "nothing at that path"))
    return pn.serve({"/": lambda: build_page(path, stats)}, port=port, address=address, show=show,
                    title="curvewright", threaded=threaded,
                    websocket_origin=[f"{address}:{port}", f"localhost:{port}", f"127.0.0.1:{port}"])
