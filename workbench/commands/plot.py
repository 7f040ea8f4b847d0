"""``workbench plot FILE.h5 [--out DIR]``: redraw every figure from the stored data alone."""

from __future__ import annotations

import argparse
from pathlib import Path

from equilibrium.errors import InputError


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "plot", help="redraw the figures of a run or sweep file (no recomputation)",
        description="Draw every figure that the data in FILE.h5 supports, from that data alone.")
    parser.add_argument("file", metavar="FILE.h5",
                        help="file written by 'workbench run', 'sweep' or 'equilibrium/recurrence/zeros --out'")
    parser.add_argument("--out", metavar="DIR", default=None,
                        help="folder for the figures (default: figures/ beside the file)")
    parser.add_argument("--formats", default="pdf,png", help="comma-separated: pdf, png (default both)")
    parser.add_argument("--dpi", type=int, default=300, help="PNG resolution (default 300)")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from workbench.figures import draw_all
    from workbench.hdf5 import check_output_directory
    from workbench.results import read_run

    path = Path(args.file)
    if not path.exists():
        raise InputError(f"{path} not found; give a file written by 'workbench run' or 'sweep'")
    formats = tuple(f.strip() for f in args.formats.split(",") if f.strip())
    bad = [f for f in formats if f not in ("pdf", "png")]
    if bad or not formats:
        raise InputError(f"--formats {args.formats!r}: use pdf and/or png, e.g. --formats pdf,png")
    if not 50 <= args.dpi <= 1200:
        raise InputError(f"--dpi {args.dpi} must lie in 50..1200")
    tree = read_run(path)
    out = Path(args.out) if args.out else path.parent / "figures"
    check_output_directory(out, what=f"figure folder {out}")
    from workbench.commands.show import malformed_file

    with malformed_file(path):
        written = draw_all(tree, out, formats=formats, dpi=args.dpi)
    if not written:
        print(f"{path}: no figure has its data in this file")
        return 0
    for name, files in written.items():
        print(f"{name:<13} " + "  ".join(str(f) for f in files))
    return 0
