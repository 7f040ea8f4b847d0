"""The budgets of the workbench: what a small input may ask for, the estimates and the refusals.

A few bytes of input can ask for hours or gigabytes (``--count 19000000``,
``value_points = 1e9``, a 7 KB HDF5 file declaring 10^10 doubles).  Every such
request is estimated here before any work and refused when the estimate
exceeds a stated budget, with the estimate and what would work, as one
:class:`~equilibrium.errors.InputError` line (exit code 2).  The budgets are
the constants below; README.md ("Limits") lists them.

The time estimates are measured on the development machine (2 cores, under
a load of about 8) and are therefore pessimistic on a free machine.  A user
who wants the work anyway sets ``WORKBENCH_LIMITS=off`` in the environment:
then nothing below refuses on cost (sizes no file system or float can
represent, such as degrees beyond 2^53, are refused always).
"""

from __future__ import annotations

import os
import sys

from equilibrium.errors import InputError

#: seconds of estimated work a single command may take unless WORKBENCH_LIMITS=off
TIME_BUDGET_S = 600.0
#: bytes of estimated memory a single command may take unless WORKBENCH_LIMITS=off
MEMORY_BUDGET = 8 * 2**30
#: bytes a dataset read from an HDF5 file may declare (show, plot, resuming): the files of
#: the workbench hold at most a few MB per dataset
READ_BUDGET = 2**30
#: largest n of a case ([polynomials] n)
MAX_N = 20000
#: points per band where p_n is compared ([polynomials] value_points; default 9) and points
#: per circle of the small-norm check ([comparisons] contour_points; default 64)
MAX_POINTS = 100_000
#: intervals of a set: measured, the equilibrium solve takes 3.4 s with 60 intervals,
#: 5.3 s with 80 and 89 s with 100 (V = 0 on [2i, 2i+1])
MAX_INTERVALS = 80
#: degrees and n up to 2^53: beyond it consecutive integers are no longer distinct doubles
#: (IEEE 754 binary64 has a 53-bit significand; common practice)
MAX_DEGREE = 2**53
#: longest degree range of ``workbench predict`` (one array element per degree)
MAX_DEGREE_RANGE = 100_000
#: nodes of an expression tree (the field, the factor): symbolic differentiation of
#: products grows with the square of the nodes
MAX_EXPRESSION_NODES = 2000
#: seconds per node-step of the two Stieltjes discretisations (measured: count 8000 and
#: 16000 at n = 10 on x^2, 2.4 s and 5.9 s of work for 3.7e8 and 1.2e9 node-steps under load)
SECONDS_PER_NODE_STEP = 6.5e-9

def limits_enforced() -> bool:
    """False when the user has asked for costly work explicitly (``WORKBENCH_LIMITS=off``)."""
    return os.environ.get("WORKBENCH_LIMITS", "").strip().lower() not in ("off", "0", "no", "false")


def _override() -> str:
    return "or set WORKBENCH_LIMITS=off to run it anyway"


def check_time(seconds: float, what: str, instead: str) -> None:
    """Refuse ``what`` when its estimated time exceeds :data:`TIME_BUDGET_S`."""
    if seconds > TIME_BUDGET_S and limits_enforced():
        raise InputError(f"{what} would take about {_duration(seconds)} (estimate; the budget is "
                         f"{_duration(TIME_BUDGET_S)}); {instead}, {_override()}")


def check_memory(nbytes: float, what: str, instead: str) -> None:
    """Refuse ``what`` when its estimated memory exceeds :data:`MEMORY_BUDGET`."""
    if nbytes > MEMORY_BUDGET and limits_enforced():
        raise InputError(f"{what} would need about {_size(nbytes)} of memory (estimate; the budget is "
                         f"{_size(MEMORY_BUDGET)}); {instead}, {_override()}")


def check_points(value: int, what: str, default: int) -> None:
    """Refuse a number of sample points beyond :data:`MAX_POINTS` (it would only cost memory)."""
    if value > MAX_POINTS and limits_enforced():
        raise InputError(f"{what} = {value} is more than the {MAX_POINTS} points the budget allows "
                         f"(each point costs memory for every n: {value:.3g} points need about "
                         f"{_size(24.0 * value)} per array); use at most {MAX_POINTS} (default {default}), "
                         f"{_override()}")


def check_intervals(count: int, what: str = "the set") -> None:
    """Refuse a set of more than :data:`MAX_INTERVALS` intervals (the solve grows steeply)."""
    if count > MAX_INTERVALS and limits_enforced():
        raise InputError(f"{what} has {count} intervals; the equilibrium solve is budgeted for at most "
                         f"{MAX_INTERVALS} (measured: 5 s with 80, 89 s with 100); merge or drop intervals, "
                         f"{_override()}")


def check_degree(value: int, what: str) -> None:
    """Refuse a degree or n beyond 2^53 (not representable one by one in double precision)."""
    if value > MAX_DEGREE:
        raise InputError(f"{what} = {value} is beyond 2^53 = {MAX_DEGREE}, where consecutive integers are no "
                         "longer distinct in double precision; use a smaller value")


def check_workers(workers: int, cores: int) -> None:
    """Refuse more worker processes than usable cores (each would hold a solver's memory for a core share)."""
    if workers > cores and limits_enforced():
        raise InputError(f"--workers {workers} is more than the {cores} usable core(s): the extra processes "
                         f"only share the cores, and each holds its own interpreter and solver (60-80 MB measured); use "
                         f"--workers {cores} or fewer, {_override()}")


def check_read(nbytes: float, what: str) -> None:
    """Refuse reading a dataset that declares more than :data:`READ_BUDGET` bytes."""
    if nbytes > READ_BUDGET and limits_enforced():
        raise InputError(f"{what} declares {_size(nbytes)} of data, more than the {_size(READ_BUDGET)} a "
                         f"workbench file holds; the file is not one the workbench wrote, {_override()}")


def recurrence_seconds(nodes: int, count: int) -> float:
    """Estimated seconds of the two Stieltjes discretisations (``nodes`` quadrature nodes, ``count`` steps)."""
    return SECONDS_PER_NODE_STEP * float(nodes) * float(count + 1)


def usable_cores() -> int:
    """Cores this process may run on (the affinity mask on Linux)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # not on Linux
        return max(1, os.cpu_count() or 1)


def _duration(seconds: float) -> str:
    if seconds < 120:
        return f"{seconds:.0f} s"
    if seconds < 2 * 3600:
        return f"{seconds / 60:.0f} min"
    if seconds < 2 * 86400:
        return f"{seconds / 3600:.1f} h"
    if seconds < 2 * 3.15e7:
        return f"{seconds / 86400:.0f} days"
    return f"{seconds / 3.15e7:.2g} years"


def _size(nbytes: float) -> str:
    for unit, scale in (("TB", 2.0**40), ("GB", 2.0**30), ("MB", 2.0**20)):
        if nbytes >= scale:
            return f"{nbytes / scale:.3g} {unit}"
    return f"{nbytes / 1024:.3g} KB"


def derivative_sizes(node) -> tuple[float, float, float]:
    """Sizes (nodes) of f, f' and f'' for an expression tree, as symbolic differentiation builds them.

    The product rule makes the derivative of a product of k factors k products
    and the second derivative about k^2, each of about k factors: this is what
    makes a long product costly (:func:`check_expression`).
    """
    from equilibrium import expression as e

    if isinstance(node, e.Variable):
        return 1.0, 1.0, 0.0
    if isinstance(node, (e.Number, e.Pi, e.Parameter)):
        return 1.0, 0.0, 0.0
    if isinstance(node, e.Negate):
        s, d1, d2 = derivative_sizes(node.operand)
        return s + 1, d1 + 1, d2 + 1
    if isinstance(node, e.Sum):
        parts = [derivative_sizes(t) for t in node.terms]
        return tuple(float(sum(p[k] for p in parts)) for k in range(3))
    if isinstance(node, e.Product):
        parts = [derivative_sizes(f) for f in node.factors]
        total = sum(p[0] for p in parts)
        varying = [p for p in parts if p[1] > 0]
        d1 = sum(p[1] + total - p[0] for p in varying)
        d2 = sum(p[2] + total - p[0] for p in varying)
        d2 += sum(p[1] + q[1] + total - p[0] - q[0] for i, p in enumerate(varying)
                  for q in varying[i + 1:]) * 2
        return total, float(d1), float(d2)
    if isinstance(node, e.Power):
        sb, b1, b2 = derivative_sizes(node.base)
        se, e1, e2 = derivative_sizes(node.exponent)
        s = sb + se + 1
        return s, s + b1 + e1 + 3, b2 + e2 + 2 * (b1 + e1) + 3 * s + 6
    if isinstance(node, e.Call):
        s, d1, d2 = derivative_sizes(node.argument)
        return s + 1, s + d1 + 2, d2 + 2 * d1 + 2 * s + 4
    return 1.0, 1.0, 1.0


#: seconds of symbolic differentiation as scale * (nodes of f'')^power, fitted to two measurements
#: on products of cosh(x/k) under load: 19 factors (f'' of 2.3e4 nodes) 10 s, 39 factors
#: (1.9e5 nodes) 57 s; 119 factors (5.1e6 nodes) are then estimated at 880 s
SYMBOLIC_SECONDS = (2.5e-3, 0.83)


def symbolic_seconds(node) -> float:
    """Estimated seconds to build V' and V'' of an expression symbolically."""
    size = derivative_sizes(node)[2]
    scale, power = SYMBOLIC_SECONDS
    return scale * size**power


#: symbolic work estimated at more than this many seconds is announced on stderr before it starts
#: (one line: the work is one library call, so there is no finer progress to show)
NOTICE_SECONDS = 5.0


def check_expression(text: str, parameters, what: str) -> float:
    """Refuse a non-polynomial expression whose symbolic derivatives would exceed the time budget.

    Returns the estimated seconds (0 for a polynomial); work estimated above
    :data:`NOTICE_SECONDS` but within the budget is announced on stderr with its estimate.
    """
    from equilibrium.expression import parse_expression

    expression = parse_expression(text, parameters)
    if expression.polynomial_coefficients() is not None:
        return 0.0  # differentiated from its coefficients, no symbolic work
    seconds = symbolic_seconds(expression.tree)
    check_time(seconds, f"{what}: the derivatives V', V'' of this expression",
               "shorten the expression (a long product of non-polynomial factors costs most)")
    if seconds >= NOTICE_SECONDS:
        print(f"workbench: note: {what}: the symbolic derivatives V', V'' take about {_duration(seconds)}",
              file=sys.stderr, flush=True)
    return seconds


#: seconds per mpmath quadrature and band end in the Ω refinement (equilibrium.refinement), measured
#: at load 3: three bands (25 quadratures of 6 ends) 0.9 s, five bands (73 of 10 ends) 1.9 s
REFINEMENT_SECONDS_PER_QUAD_END = 6e-3


def refinement_seconds(bands: int, degree: int) -> float:
    """Estimated seconds of the extended-precision Ω of a field of polynomial ``degree`` with ``bands``.

    Newton needs ``U + 3`` evaluations of the equations (``U = degree - 1 + bands`` unknowns: a
    forward-difference Jacobian and two steps), each with a quadrature per gap, then one per band.
    """
    unknowns = max(degree - 1, 0) + bands
    quadratures = (unknowns + 3) * (bands - 1) + bands
    return REFINEMENT_SECONDS_PER_QUAD_END * quadratures * 2 * bands


def refinement_over_budget(bands: int, degree: int) -> str:
    """Empty when the Ω refinement of such a field fits the time budget (announced on stderr above
    :data:`NOTICE_SECONDS`), else the reason it is skipped, with the estimate."""
    seconds = refinement_seconds(bands, degree)
    if seconds > TIME_BUDGET_S and limits_enforced():
        return (f"Omega in extended precision would take about {_duration(seconds)} (estimate; the budget "
                f"is {_duration(TIME_BUDGET_S)}; WORKBENCH_LIMITS=off runs it anyway)")
    if seconds >= NOTICE_SECONDS:
        print(f"workbench: note: Omega in extended precision ({bands} bands) takes about {_duration(seconds)}",
              file=sys.stderr, flush=True)
    return ""
