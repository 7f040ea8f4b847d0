"""``workbench recurrence``: recurrence coefficients a_k^{(n)}, b_k^{(n)} computed from the weight."""

from __future__ import annotations

import argparse
import sys
import time

import numpy as np

from workbench.jsontext import json_text

from ._common import add_field_options, check_output, factors_from_args, field_and_set_from_args, positive_integer


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "recurrence",
        help="recurrence coefficients of the weight exp(-nV) h on a set",
        description="Recurrence coefficients a_k, b_k (k = 0..K) of x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1} "
                    "for the weight exp(-n V(x)) h(x), by a discretised Stieltjes procedure checked on a second "
                    "discretisation (error_estimate = max |Δa|, |Δb|).",
    )
    add_field_options(parser, output=True)
    parser.add_argument("--n", metavar="N", required=True, help="the scaling n of exp(-n V) (a positive integer)")
    parser.add_argument("--count", metavar="K", required=True, help="largest index k (coefficients 0..K)")
    parser.add_argument("--tolerance", metavar="TOL", default="1e-10",
                        help="largest accepted difference between the two discretisations (default 1e-10)")
    parser.set_defaults(handler=run)


def build_weight(args):
    """The weight of the command line (shared with ``workbench zeros``)."""
    from equilibrium.weight import Weight

    field, on = field_and_set_from_args(args)
    n = positive_integer(args.n, "--n")
    return Weight(field, n, on, factors_from_args(args, on)), field, on, n


def _tolerance(text: str) -> float:
    from equilibrium.errors import InputError

    try:
        value = float(text)
    except ValueError:
        raise InputError(f"--tolerance must be a number, got '{text}'") from None
    if not (value > 0 and np.isfinite(value)):
        raise InputError(f"--tolerance must be positive, got {text}")
    return value


def run(args: argparse.Namespace) -> int:
    from workbench.polynomials.recurrence import check_memory, recurrence_coefficients

    check_output(args)
    count = positive_integer(args.count, "--count", minimum=0)
    weight, field, on, n = build_weight(args)
    tolerance = _tolerance(args.tolerance)
    check_memory(weight, count)
    started = time.perf_counter()
    rc = recurrence_coefficients(weight, count, tolerance=tolerance)
    if args.out:
        from workbench.results import Group, write_command_file

        root = Group()
        group = root.group("recurrence")
        group.attrs.update(_attributes(rc, weight, field, on, count))
        group.add("k", np.arange(count + 1), "index k of the coefficients")
        group.add("a", rc.a, "a_k^{(n)} (a[0] = 0) of x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1}")
        group.add("b", rc.b, "b_k^{(n)}")
        write_command_file(args.out, root, "recurrence", file_parameters(weight, field, on),
                           time.perf_counter() - started)
    if args.json:
        print(json_text({
            "a": rc.a, "b": rc.b, "error_estimate": rc.error_estimate,
            "n": n, "count": count, "verified": rc.verified, "method": rc.method,
            "log_mass": rc.log_mass, "checks": dict(rc.checks),
        }))
        return 0
    out = sys.stdout
    out.write(f"weight   {weight.description}\n")
    out.write(f"method   {rc.method}\n")
    out.write(f"error estimate max|Δa|,|Δb| = {rc.error_estimate:.2e}\n")
    out.write(f"{'k':>7}  {'a_k':>24}  {'b_k':>24}\n")
    for k in range(count + 1):
        out.write(f"{k:>7}  {rc.a[k]:>24.17g}  {rc.b[k]:>24.17g}\n")
    return 0


def file_parameters(weight, field, on) -> dict:
    """The ``parameters`` attribute of a command file: the weight as the run files describe it."""
    return {"field": f"V = {field.description}", "field_parameters": dict(field.parameters),
            "set": on.describe(), "factor": f"h = {weight.factor_description}", "n": weight.n}


def _attributes(rc, weight, field, on, count) -> dict:
    return {
        "field": field.description, "n": weight.n, "set": on.describe(), "factor": weight.factor_description,
        "method": rc.method, "error_estimate": rc.error_estimate, "count": count, "verified": rc.verified,
        "log_mass": rc.log_mass, "checks": dict(rc.checks),
        "description": "a[0] = 0, a[k] = a_k, b[k] = b_k of x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1}",
    }
