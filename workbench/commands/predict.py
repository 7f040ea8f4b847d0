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

# The shared options (field, set, parameters) -- duplicated from the planned
# workbench.commands._common until that module exists.
try:  # pragma: no cover - depends on a sibling module
    from ._common import add_field_options, field_and_set_from_args  # type: ignore
except ImportError:  # pragma: no cover
    add_field_options = None
    field_and_set_from_args = None


def _add_field_options_local(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--potential", required=True, metavar="EXPR", help="external field V(x), e.g. 'x**4/4 - x**2'")
    parser.add_argument("--on", default=None, metavar="SET", help="the set Σ, e.g. '-1:1,2:3' (default: the real line)")
    parser.add_argument("--param", action="append", default=[], metavar="NAME=VALUE", help="parameter value")


def _field_and_set_local(args):
    from equilibrium import Field, IntervalSet
    params = {}
    for item in args.param:
        name, sep, value = item.partition("=")
        if not sep or not name.strip():
            raise InputError(f"--param needs NAME=VALUE; got {item!r} (e.g. --param t=3)")
        try:
            params[name.strip()] = float(value)
        except ValueError:
            raise InputError(f"--param {name.strip()}: {value!r} is not a number") from None
    field = Field.from_expression(args.potential, params)
    on = IntervalSet.real_line() if args.on is None else IntervalSet.parse(args.on)
    return field, on


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


def register(subparsers) -> None:
    p = subparsers.add_parser("predict", help="steepest-descent predictions (recurrence coefficients, gap zeros)",
                              description=__doc__)
    (add_field_options or _add_field_options_local)(p)
    if not any(a.dest == "factor" for a in p._actions):
        p.add_argument("--factor", default=None, metavar="EXPR",
                       help="n-independent weight factor h(x), e.g. '(1-x)^0.5*abs(x-0.2)^1'")
    p.add_argument("--degrees", required=True, metavar="LO:HI", help="degrees LO … HI-1")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(handler=run)


def run(args) -> int:
    from equilibrium import solve
    from gfunction import predictor

    from workbench.polynomials import parse_factor

    degrees = _degrees(args.degrees)
    field, on = (field_and_set_from_args or _field_and_set_local)(args)
    factors = None
    text = getattr(args, "factor", None)
    if text not in (None, "", "1"):
        params = {}
        for item in getattr(args, "param", []) or []:
            name, _, value = item.partition("=")
            try:
                params[name.strip()] = float(value)
            except ValueError:
                pass  # reported by the field parser already
        factors = parse_factor(text, params, on)
    mu = solve(field, on=on)
    pred = predictor(mu, factors).predict(degrees)
    result = {
        "degrees": [int(d) for d in pred.degrees],
        "a": [float(x) for x in pred.a],
        "b": [float(x) for x in pred.b],
        "gap_zeros": pred.gap_zeros,
        "band_counts": [[int(c) for c in row] for row in pred.band_counts],
        "support": [list(ab) for ab in mu.support],
        "omega": [float(x) for x in mu.omega],
        "checks": {k: float(v) for k, v in pred.checks.items()},
    }
    if args.json:
        json.dump(result, sys.stdout)
        sys.stdout.write("\n")
        return 0
    out = sys.stdout
    out.write(f"support {result['support']}  Ω {result['omega']}\n")
    out.write(f"{'N':>8} {'a_N':>20} {'b_N':>20}  gap zeros / band counts\n")
    for i, d in enumerate(result["degrees"]):
        gz = ", ".join("-" if v is None else f"{v:.10g}" for v in result["gap_zeros"][i])
        out.write(f"{d:>8} {result['a'][i]:>20.15f} {result['b'][i]:>20.15f}  [{gz}] {result['band_counts'][i]}\n")
    return 0
