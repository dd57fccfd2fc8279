"""``curvewright open``: start the workbench page on this machine and open it in the browser."""

from __future__ import annotations


def add_parser(subparsers):
    p = subparsers.add_parser("open", help="start the workbench page on 127.0.0.1 and open it in the browser")
    p.add_argument("data", nargs="?", help="data file (default: a bundled invented sample set)")
    p.add_argument("--port", type=int, default=5006)
    p.add_argument("--address", default="127.0.0.1", help="interface to listen on (default 127.0.0.1)")
    p.add_argument("--no-browser", action="store_true", help="do not open a browser window")
    p.add_argument("--stats", help="explore a statistics file from `sweep --save-stats` instead of rows")
    return p


def run(args, out) -> int:
    from ..serve import serve   # imports panel: only when the page is asked for

    print(f"curvewright: serving on http://{args.address}:{args.port}/ (Ctrl-C to stop)", file=out)
    serve(args.data, port=args.port, show=not args.no_browser, address=args.address, stats=args.stats)
    return 0
