"""``curvewright report``: a standalone HTML report of a choice file, and optionally its plots
as images."""

from __future__ import annotations

from .common import add_force, add_out


def add_parser(subparsers):
    p = subparsers.add_parser("report", help="write a standalone HTML report of a choice file")
    p.add_argument("choice")
    p.add_argument("data", help="the data file the curve was chosen on")
    add_out(p, default="report.html")
    p.add_argument("--images", help="also save every plot as an image into this folder")
    p.add_argument("--image-format", choices=["png", "svg"], default="png")
    add_force(p)
    return p


def run(args, out) -> int:
    from ..report import write_report   # imports bokeh: only when a report is asked for

    path = write_report(args.choice, args.data, args.out, force=args.force)
    print(f"wrote {path}", file=out)
    if args.images:
        from ..export import export_images

        files = export_images(path, args.images, args.image_format, force=args.force)
        print(f"wrote {len(files)} {args.image_format.upper()} images to {args.images}", file=out)
    return 0
