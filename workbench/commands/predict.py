"""``workbench predict``: steepest-descent predictions for a range of degrees.

For each degree N in LO … HI-1 the weight is exp(-N V) on the set and the
prediction is for the diagonal coefficients a_N^{(N)}, b_N^{(N)}, the zero of
p_N in each gap (or none) and the number of zeros in each band.
"""

from __future__ import annotations

import argparse
import json
import sys

import numpy as np

from equilibrium.errors import InputError

from ._common import add_field_options, field_and_set_from_args, parse_parameters


def _degrees(text: str) -> np.ndarray:
    lo, sep, hi = text.partition(":")
    try:
        lo_i, hi_i = int(lo), int(hi)
    except ValueError:
        raise InputError(f"--degrees needs LO:HI with integers; got {text!r} (e.g. --degrees 100:110)") from None
    if not sep or lo_i < 1 or hi_i <= lo_i:
        raise InputError(f"--degrees needs 1 <= LO < HI; got {text!r} (e.g. --degrees 100:110)")
    if hi_i - lo_i > 100_000:
        raise InputError(f"--degrees range {text!r} is longer than 100000 degrees; split it")
    return np.arange(lo_i, hi_i)


#: the --help text (plain text: argparse prints it as it is, so no reStructuredText markup)
DESCRIPTION = ("Steepest-descent predictions for a range of degrees.  For each degree N in LO ... HI-1 "
               "the weight is exp(-N V) h on the set and the prediction is for the diagonal "
               "coefficients a_N^(N), b_N^(N), the zero of p_N in each gap (or none) and the number "
               "of zeros in each band.")


def register(subparsers) -> None:
    p = subparsers.add_parser("predict", help="steepest-descent predictions (recurrence coefficients, gap zeros)",
                              description=DESCRIPTION)
    add_field_options(p)
    p.add_argument("--degrees", required=True, metavar="LO:HI", help="degrees LO … HI-1")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(handler=run)


def run(args) -> int:
    from equilibrium import solve
    from gfunction import predictor

    from workbench.polynomials import parse_factor

    degrees = _degrees(args.degrees)
    field, on = field_and_set_from_args(args)
    factors = None
    text = getattr(args, "factor", None)
    if text not in (None, "", "1"):
        factors = parse_factor(text, parse_parameters(args.param), on)
    mu = solve(field, on=on, on_failure="mark")
    # marked, not raised: the table is printed with the failed checks, exit 3
    pred = predictor(mu, factors, on_failure="mark").predict(degrees, on_failure="mark")
    verified, message = pred.verified, pred.message
    result = {
        "degrees": [int(d) for d in pred.degrees],
        "a": [_number(x) for x in pred.a],
        "b": [_number(x) for x in pred.b],
        "gap_zeros": [[_number(v) for v in row] for row in pred.gap_zeros],
        "band_counts": [[int(c) for c in row] for row in pred.band_counts],
        "support": [list(ab) for ab in mu.support],
        "omega": [float(x) for x in mu.omega],
        "verified": verified,
        "checks": {k: float(v) for k, v in pred.checks.items()},
        "message": message,
    }
    if args.json:
        json.dump(result, sys.stdout)
        sys.stdout.write("\n")
        return _status(verified, message)
    out = sys.stdout
    out.write(f"support {result['support']}  Ω {result['omega']}\n")
    out.write(f"{'N':>8} {'a_N':>20} {'b_N':>20}  gap zeros / band counts\n")
    for i, d in enumerate(result["degrees"]):
        gz = ", ".join("-" if v is None else f"{v:.10g}" for v in result["gap_zeros"][i])
        out.write(f"{d:>8} {pred.a[i]:>20.15f} {pred.b[i]:>20.15f}  [{gz}] {result['band_counts'][i]}\n")
    return _status(verified, message)


def _number(x) -> float | None:
    """A float for JSON; ``None`` for NaN (no gap zero, or a coefficient not predicted)."""
    return float(x) if np.isfinite(x) else None


def _status(verified: bool, message: str) -> int:
    """Exit status 3 (with the failed checks on stderr) for a prediction that is not verified."""
    if verified:
        return 0
    print(f"workbench predict: the prediction is not verified: {message}", file=sys.stderr)
    return 3
