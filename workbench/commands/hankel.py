"""``workbench hankel``: log D_n (and log Z_n) computed from the weight, next to its large-n expansion."""

from __future__ import annotations

import argparse
import math
import sys

from equilibrium.errors import InputError

from workbench.jsontext import json_text

from ._common import add_field_options, positive_integer
from .recurrence import build_weight

#: largest n: the direct side costs about n · (number of nodes) ≈ 3.5 n² node-steps per discretisation
MAX_N = 100_000


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "hankel",
        help="Hankel determinant log D_n of exp(-nV) h: direct and by its large-n expansion",
        description="log D_n = log det[∫ x^(j+k) exp(-n V(x)) h(x) dx] (j, k < n) from the norms of the orthogonal "
                    "polynomials (error estimate from a second discretisation), log Z_n = log n! + log D_n, and the "
                    "expansion -n^2 I_V + n (log 2 pi + ∫ log h dμ) + c log n + C (+ log theta, + c_1/n + c_2/n^2 "
                    "where known) term by term.",
    )
    add_field_options(parser)
    parser.add_argument("--n", metavar="N", required=True, help="the size of the determinant and the scaling of exp(-n V)")
    parser.add_argument("--json", action="store_true", help="print exactly one JSON object on stdout")
    parser.set_defaults(handler=run)


def _number(x) -> float | None:
    return float(x) if x is not None and math.isfinite(x) else None


def run(args: argparse.Namespace) -> int:
    from equilibrium import solve
    from gfunction.hankel import TERM_LABELS, expansion_support, hankel_expansion
    from workbench.polynomials.hankel import hankel_determinant
    from workbench.polynomials.recurrence import check_memory

    n = positive_integer(args.n, "--n")
    if n > MAX_N:
        raise InputError(f"--n {n} would take about {7 * n * n / 1e8 / 3600:.1f} hours (7 n² node-steps at ~1e8 per "
                         f"second); the direct determinant is offered up to --n {MAX_N}")
    weight, field, on, _ = build_weight(args)
    check_memory(weight, n)
    direct = hankel_determinant(weight, on_failure="mark")
    measure = solve(field, on=on, on_failure="mark")  # an unverified measure: no model, said why
    model_message = "" if measure.verified else f"equilibrium measure not verified: {measure.message}"
    expansion = None
    if not model_message:
        model_message = expansion_support(measure, weight.factors) or ""
    if not model_message:
        expansion = hankel_expansion(measure, weight.factors, on_failure="mark")
    terms = {} if expansion is None else {name: float(v[0]) for name, v in expansion.terms([n]).items()}
    model = None if expansion is None else float(expansion.log_det([n])[0])
    verified = bool(direct.verified and (expansion is None or expansion.verified))
    message = "; ".join(m for m in (direct.message, "" if expansion is None else expansion.message) if m)
    result = {
        "n": n,
        "log_det": direct.log_det,
        "log_partition": direct.log_partition,
        "error_estimate": direct.error_estimate,
        "log_det_model": model,
        "log_partition_model": None if model is None else math.lgamma(n + 1.0) + model,
        "model_minus_direct": None if model is None else math.fsum([model, -direct.log_det]),
        "terms": terms,
        "regime": None if expansion is None else expansion.regime,
        "constant_parts": {} if expansion is None else {k: float(v) for k, v in expansion.constant_parts.items()},
        "sources": {} if expansion is None else dict(expansion.sources),
        "verified": verified,
        "checks": {"direct": {k: _number(v) for k, v in direct.checks.items()},
                   "model": {} if expansion is None else {k: _number(v) for k, v in expansion.checks.items()}},
        "message": message,
        "model_message": model_message,
    }
    if args.json:
        print(json_text(result))
    else:
        _table(sys.stdout, weight, direct, expansion, result, TERM_LABELS)
    if not verified:
        print(f"workbench hankel: not verified: {message}", file=sys.stderr)
        return 3
    return 0


def _table(out, weight, direct, expansion, result, labels) -> None:
    n = result["n"]
    out.write(f"weight   {weight.description}\n")
    out.write(f"log D_{n:<8}{direct.log_det:>26.17g}   direct, error estimate {direct.error_estimate:.1e}"
              f"{'' if direct.verified else '  NOT VERIFIED'}\n")
    out.write(f"log Z_{n:<8}{direct.log_partition:>26.17g}   = log n! + log D_n\n")
    if expansion is None:
        out.write(f"expansion: not available ({result['model_message']})\n")
        return
    out.write(f"expansion ({expansion.regime}){'' if expansion.verified else '  NOT VERIFIED'}:\n")
    for name, value in result["terms"].items():
        out.write(f"  {labels[name]:<34}{value:>26.17g}\n")
    out.write(f"  {'sum':<34}{result['log_det_model']:>26.17g}\n")
    out.write(f"model - direct {result['model_minus_direct']:>30.3e}\n")
    out.write("the constant C is the sum of\n")
    for name, value in expansion.constant_parts.items():
        out.write(f"  {value:>22.15g}  {name}\n")
