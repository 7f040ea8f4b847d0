"""``workbench zeros``: zeros of p_K for the weight exp(-nV) h, with the Gauss weights."""

from __future__ import annotations

import argparse
import sys
import time


from workbench.jsontext import json_text

from ._common import add_field_options, check_output, positive_integer
from .recurrence import _attributes, _tolerance, build_weight, file_parameters


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "zeros",
        help="zeros of the orthogonal polynomial p_K of exp(-nV) h (Gauss nodes and weights)",
        description="Zeros of p_K (default K = n) for the weight exp(-n V(x)) h(x): eigenvalues of the Jacobi "
                    "matrix of the recurrence coefficients; Gauss weights as Christoffel numbers in log form.",
    )
    add_field_options(parser, output=True)
    parser.add_argument("--n", metavar="N", required=True, help="the scaling n of exp(-n V) (a positive integer)")
    parser.add_argument("--degree", metavar="K", help="degree of the polynomial (default: n)")
    parser.add_argument("--tolerance", metavar="TOL", default="1e-10",
                        help="largest accepted difference between the two discretisations (default 1e-10)")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from workbench.polynomials.recurrence import check_memory, recurrence_coefficients
    from workbench.polynomials.zeros import gauss_rule

    check_output(args)
    weight, field, on, n = build_weight(args)
    degree = n if args.degree is None else positive_integer(args.degree, "--degree")
    tolerance = _tolerance(args.tolerance)
    check_memory(weight, degree)
    started = time.perf_counter()
    rc = recurrence_coefficients(weight, degree - 1, tolerance=tolerance)
    rule = gauss_rule(rc, degree)
    if args.out:
        import numpy as np

        from workbench.results import Group, write_command_file

        root = Group()
        group = root.group("zeros")
        attributes = _attributes(rc, weight, field, on, degree - 1)
        attributes.update(degree=degree, gauss_checks=dict(rule.checks),
                          description=f"zeros of p_{degree} ascending; log of the Gauss (Christoffel) weights")
        group.attrs.update(attributes)
        group.add("j", np.arange(1, degree + 1), "number j of the zero, ascending")
        group.add("zeros", rule.nodes, f"zeros x_j of p_{degree}, ascending (eigenvalues of the Jacobi matrix)")
        group.add("log_weights", rule.log_weights, "log of the Gauss (Christoffel) weights lambda_j")
        write_command_file(args.out, root, "zeros", file_parameters(weight, field, on),
                           time.perf_counter() - started)
    if args.json:
        print(json_text({
            "zeros": rule.nodes.tolist(), "log_weights": rule.log_weights.tolist(), "degree": degree, "n": n,
            "error_estimate": rc.error_estimate, "verified": rc.verified, "checks": dict(rule.checks),
        }))
        return 0
    out = sys.stdout
    out.write(f"weight   {weight.description}\n")
    out.write(f"zeros of p_{degree}; recurrence error estimate {rc.error_estimate:.2e}\n")
    out.write(f"{'j':>7}  {'x_j':>24}  {'log λ_j':>24}\n")
    for j, (x, lw) in enumerate(zip(rule.nodes, rule.log_weights), start=1):
        out.write(f"{j:>7}  {x:>24.17g}  {lw:>24.17g}\n")
    return 0
