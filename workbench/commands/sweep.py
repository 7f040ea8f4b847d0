"""``workbench sweep CASE``: the equilibrium measure over a parameter grid (phase diagrams)."""

from __future__ import annotations

import argparse

import numpy as np

from equilibrium.errors import InputError


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "sweep", help="equilibrium measures over the [sweep] grid of a case (phase diagram)",
        description="Evaluate the equilibrium measure at every point of the case's [sweep] grid, "
                    "in parallel; finished points are journalled, so a rerun resumes.")
    parser.add_argument("case", metavar="CASE", help="TOML case file with a [sweep] table")
    parser.add_argument("--out", metavar="DIR", default=None, help="output folder")
    parser.add_argument("--workers", type=int, default=None,
                        help="processes of the local pool (default: number of CPUs)")
    parser.add_argument("--scheduler", metavar="tcp://HOST:PORT", default=None,
                        help="use this Dask distributed scheduler instead of the local pool")
    parser.add_argument("--reduced", action="store_true", help="use the [reduced] grid sizes")
    parser.add_argument("--budget", type=int, default=None,
                        help="stop after this many new points (resume later)")
    parser.add_argument("--retries", type=int, default=2,
                        help="retries of a point whose worker died (default 2)")
    parser.add_argument("--no-figures", action="store_true", help="do not draw the phase diagram")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from workbench.case import load_case
    from workbench.commands.show import summary_lines
    from workbench.results import read_run
    from workbench.commands._common import check_parallel_options
    from workbench.sweep import sweep_case

    check_parallel_options(args)
    if args.budget is not None and args.budget < 0:
        raise InputError(f"--budget {args.budget} must be >= 0")
    if args.retries < 0:
        raise InputError(f"--retries {args.retries} must be >= 0")
    case = load_case(args.case, reduced=args.reduced)
    result = sweep_case(case, args.out, workers=args.workers, scheduler=args.scheduler,
                        budget=args.budget, retries=args.retries, progress=not args.quiet,
                        draw=False if args.no_figures else None)
    o = result.outcome
    print(f"{case.name}: {o.computed} point(s) computed, {o.reused} taken from the journal, "
          f"{o.failed} failed, {o.retried} resubmitted after a worker died, {o.seconds:.1f} s")
    if result.path is None:
        print(f"sweep incomplete ({len(o.results)} of {int(np.prod(result.shape))} "
              f"points); rerun the same command to resume. journal: {result.journal}")
        return 0
    print("\n".join(summary_lines(read_run(result.path), str(result.path))))
    if result.figures:
        print("figures: " + ", ".join(str(p) for files in result.figures.values() for p in files))
    return 0
