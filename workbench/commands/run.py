"""``workbench run CASE [--out DIR]``: the whole pipeline of one case file."""

from __future__ import annotations

import argparse
import sys


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "run", help="run a case file: equilibrium, model problem, direct polynomials, comparisons",
        description="Run every stage of a case file and write one HDF5 file (atomically) and its "
                    "figures.  Finished n are kept in partial/ so an interrupted run resumes.")
    parser.add_argument("case", metavar="CASE", help="TOML case file (see cases/)")
    parser.add_argument("--out", metavar="DIR", default=None,
                        help="output folder (default: [output] directory of the case, else out/NAME)")
    parser.add_argument("--reduced", action="store_true",
                        help="use the [reduced] sizes of the case (quick check)")
    parser.add_argument("--no-figures", action="store_true", help="do not draw figures")
    parser.add_argument("--quiet", action="store_true", help="no progress bar, summary only")
    parser.add_argument("--workers", type=int, default=None,
                        help="processes for the direct stage (default: one, in this process)")
    parser.add_argument("--scheduler", metavar="tcp://HOST:PORT", default=None,
                        help="run the direct stage on this Dask distributed scheduler")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from workbench.case import load_case
    from workbench.commands._common import check_parallel_options
    from workbench.commands.show import summary_lines
    from workbench.pipeline import run_case

    check_parallel_options(args)
    case = load_case(args.case, reduced=args.reduced)
    outcome = run_case(case, args.out, progress=not args.quiet,
                       draw=False if args.no_figures else None, workers=args.workers,
                       scheduler=args.scheduler)
    done = (f"computed n = {list(outcome.computed)}" if outcome.computed else "nothing to compute")
    if outcome.reused:
        done += f"; resumed n = {list(outcome.reused)} from partial results"
    print(f"{case.name}: {done} in {outcome.seconds:.1f} s")
    print("\n".join(summary_lines(outcome.tree, str(outcome.path))))
    print(f"results: {outcome.path}")
    if outcome.figures:
        print(f"figures: {outcome.path.parent / 'figures'} ({', '.join(outcome.figures)})")
    for note in outcome.notes:
        print(f"workbench run: note: {note}", file=sys.stderr)
    if not outcome.verified:
        print(f"workbench run: results written but not verified: {'; '.join(outcome.messages)}",
              file=sys.stderr)
        return 3
    return 0
