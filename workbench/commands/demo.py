"""``workbench demo [--out DIR]``: the shipped showcase, run end to end, plus a table of measures.

The showcase is ``cases/two_band_irrational.toml`` (a tilted double well:
two bands, an irrational-looking filling fraction Ω, quasi-periodic
recurrence coefficients and a zero wandering through the gap).  Then a
table of equilibrium measures of a few fields is printed with the closed
forms where the literature has them.
"""

from __future__ import annotations

import argparse
import math
import time
from pathlib import Path

SHOWCASE = "two_band_irrational"


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "demo", help="run the shipped showcase case and print a table of equilibrium measures",
        description="Run cases/two_band_irrational.toml end to end (equilibrium measure, model "
                    "problem, direct polynomials, comparisons, HDF5 file, figures) and print a "
                    "table of equilibrium measures of a few fields.")
    parser.add_argument("--out", metavar="DIR", default="out/demo",
                        help="output folder (default out/demo)")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    parser.set_defaults(handler=run)


#: (field, set, closed form of (support, ell) or None, source of the closed form)
_TABLE = (
    ("x**2/2", None, ([(-2.0, 2.0)], 1.0),
     "semicircle law; ell = 1 (CONVENTIONS check values; e.g. Saff & Totik 1997, IV.5)"),
    ("x**4/4 - 3*x**2/2", None, None, "two bands (symmetric double well)"),
    ("c*cosh(x)", None, None, "non-polynomial field"),
    ("0", "-1:1", ([(-1.0, 1.0)], 2 * math.log(2.0)),
     "arcsine law; cap[-1,1] = 1/2 so ell = 2 log 2 (Ransford 1995, Cor. 5.2.4)"),
    ("0", "-1:-0.25,0.4:1", None, "fixed weight on two intervals (harmonic measure)"),
)


def table_lines() -> list[str]:
    """The table of equilibrium measures of :data:`_TABLE`, line by line."""
    from equilibrium import Field, IntervalSet, solve

    lines = ["", "equilibrium measures of a few fields (closed forms where known):",
             f"  {'field':<22}{'set':<17}{'support':<42}{'ell':>12}{'closed form':>28}"]
    for expression, interval, exact, source in _TABLE:
        field = (Field.zero() if expression == "0"
                 else Field.from_expression(expression, {"c": 0.5} if "c" in expression else {}))
        on = IntervalSet.parse(interval) if interval else IntervalSet.real_line()
        mu = solve(field, on=on, on_failure="mark")
        support = " U ".join(f"[{a:.4f}, {b:.4f}]" for a, b in mu.support)
        reference = ""
        if exact is not None:
            (bands, ell) = exact
            reference = f"ell = {ell:.6f}, err {abs(mu.lagrange - ell):.1e}"
        shown = expression.replace("c*", "0.5*")
        lines.append(f"  {shown:<22}{on.describe():<17}{support:<42}{mu.lagrange:>12.6f}{reference:>28}"
                     + ("" if mu.verified else "  (not verified)"))
        lines.append(f"  {'':<22}{'':<17}{source}")
    return lines


def run(args: argparse.Namespace) -> int:
    from workbench.case import load_case, shipped_case
    from workbench.commands.show import summary_lines
    from workbench.forked import fork_call
    from workbench.hdf5 import check_output_directory
    from workbench.pipeline import run_case

    start = time.perf_counter()
    check_output_directory(Path(args.out) / SHOWCASE)  # refuse before printing or computing
    case = load_case(shipped_case(SHOWCASE))
    # the table does not depend on the showcase: a forked child makes it meanwhile (None: made below)
    table = fork_call(table_lines)
    try:
        print(f"demo: running the showcase {shipped_case(SHOWCASE)}")
        print(f"      {case.title}: {case.field.describe()}")
        outcome = run_case(case, Path(args.out) / SHOWCASE, progress=not args.quiet)
        print("\n".join(summary_lines(outcome.tree, str(outcome.path))))
        lines = table.result() if table is not None else None
    finally:
        if table is not None:
            table.cancel()
    print("\n".join(lines if lines is not None else table_lines()))

    print(f"\ndemo finished in {time.perf_counter() - start:.1f} s")
    print(f"files: {outcome.path} (HDF5; 'workbench show {outcome.path}')")
    if outcome.figures:
        print(f"figures: {outcome.path.parent / 'figures'}: " + ", ".join(
            p.name for files in outcome.figures.values() for p in files))
    print(f"redraw: workbench plot {outcome.path}")
    return 0 if outcome.verified else 3
