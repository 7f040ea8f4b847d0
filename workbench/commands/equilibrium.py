"""``workbench equilibrium``: the equilibrium measure of a field on a set."""

from __future__ import annotations

import argparse
import sys
import time

from equilibrium import solve, solve_signed
from workbench.commands._common import add_field_options, add_output_options, check_output, field_and_set_from_args
from workbench.equilibrium_io import measure_group, measure_json, measure_table


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "equilibrium",
        help="equilibrium measure of a field: support, masses, filling fractions, ell, energy, checks",
        description="Compute the equilibrium measure of V on a set (support found automatically), "
        "or with --signed the signed equilibrium measure of the whole compact set.",
    )
    add_field_options(parser, factor=False)
    parser.add_argument("--signed", action="store_true", help="signed problem on the whole (compact) set given by --on")
    add_output_options(parser)
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    check_output(args)
    field, on = field_and_set_from_args(args)
    # marked, not raised: an unverified measure is printed (and written) with its failed figures, exit 3
    started = time.perf_counter()
    mu = solve_signed(field, on, on_failure="mark") if args.signed else solve(field, on, on_failure="mark")
    if args.out:
        from workbench.results import write_command_file

        tree = measure_group(mu)
        tree.attrs.update({"field": field.description, "set": on.describe()})
        write_command_file(args.out, _wrap(tree), "equilibrium",
                           {"field": f"V = {field.description}", "field_parameters": dict(field.parameters),
                            "set": on.describe(), "signed": bool(args.signed), "factor": "h = 1"},
                           time.perf_counter() - started)
    if args.json:
        print(measure_json(mu))
    else:
        parameters = ", ".join(f"{k} = {v:g}" for k, v in field.parameters.items())
        title = f"equilibrium measure of V(x) = {field.description}" + (f"  ({parameters})" if parameters else "")
        print(measure_table(mu, title + f" on {on}"))
    if not mu.positive:
        pieces, mass = mu.negative_part()
        print(f"workbench equilibrium: note: the signed measure is negative on "
              f"{' U '.join(f'[{a:.6g}, {b:.6g}]' for a, b in pieces)} (mass {mass:.3g}); it is the "
              "signed equilibrium measure asked for, but not the limit of the zeros of orthogonal "
              "polynomials on the set: without --signed the positive measure on the set is computed",
              file=sys.stderr)
    if not mu.verified:
        print(f"workbench equilibrium: the result is not verified: {mu.message}", file=sys.stderr)
        return 3
    return 0


def _wrap(node):
    from workbench.results import Group

    root = Group()
    root.groups["equilibrium"] = node
    return root
