"""``workbench predict``: steepest-descent predictions for a range of degrees.

For each degree N in LO … HI-1 the weight is exp(-N V) on the set and the
prediction is for the diagonal coefficients a_N^{(N)}, b_N^{(N)}, the zero of
p_N in each gap (or none) and the number of zeros in each band.

``--order K`` (0, 1, 2; 0 is the leading order) adds the corrections c_1/N … c_K/N^K
of the residual matrix (gfunction.series; the gap zeros of the corrected outer form,
gfunction.polynomial_form); ``--method residual`` takes a_N, b_N from the residual
problem solved numerically (gfunction.residual_problem), with an error estimate, and the
gap zeros of ``--order``.  Below n* = log(1/1e-13)/c the residual method's values are
marked not verified (the lens and gap jumps it neglects exceed 1e-13; exit 3), never refused.

``--edge-zeros M`` adds the first M zeros of p_N next to each outer edge of the support
(gfunction.edge_zeros): the Airy form Ai(ζ) + c Ai'(ζ) at a soft edge, the Bessel form
J_α(u) + (κ/2) u J_α'(u) at a hard edge with Jacobi exponent α, in the exact local variable
and with the residual matrix through R^(K)/N^K at ``--order K`` (errors: soft edge N^{-K-2},
hard edge relative N^{-K-2}); zeros beyond the matching disc are null.

``--shifts=J1:J2`` adds the near-diagonal coefficients a_{N+j}^{(N)}, b_{N+j}^{(N)} for
j = J1 … J2-1 at every degree N (gfunction.near_diagonal: the diagonal problem of the field
(N/(N+j)) V at degree N + j, by the same --order and --method).
"""

from __future__ import annotations

import argparse
import re
import sys

import numpy as np

from equilibrium.errors import InputError
from equilibrium.refinement import refinement_figures
from workbench.jsontext import json_text
from workbench.orders import measure_for_orders

from ._common import add_field_options, factors_from_args, field_and_set_from_args


_ASCII_INTEGER = re.compile(r"[+-]?[0-9]+")


def _degrees(text: str) -> np.ndarray:
    from workbench.limits import MAX_DEGREE_RANGE, check_degree

    lo, sep, hi = text.partition(":")
    if not (_ASCII_INTEGER.fullmatch(lo.strip()) and _ASCII_INTEGER.fullmatch(hi.strip())):
        raise InputError(f"--degrees needs LO:HI with integers in ASCII digits; got {text!r} (e.g. --degrees 100:110)")
    lo_i, hi_i = int(lo), int(hi)
    if not sep or lo_i < 1 or hi_i <= lo_i:
        raise InputError(f"--degrees needs 1 <= LO < HI; got {text!r} (e.g. --degrees 100:110)")
    check_degree(hi_i - 1, "--degrees HI - 1")
    if hi_i - lo_i > MAX_DEGREE_RANGE:
        raise InputError(f"--degrees range {text!r} is longer than {MAX_DEGREE_RANGE} degrees; split it")
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
    p.add_argument("--order", default="0", metavar="K",
                   help="corrections through c_K/N^K: 0 (leading order, default), 1 or 2")
    p.add_argument("--method", default="series", metavar="METHOD",
                   help="'series' (the correction series, default) or 'residual' (a_N, b_N from the residual "
                        "problem solved numerically, with an error estimate)")
    p.add_argument("--edge-zeros", default="0", metavar="M",
                   help="also the first M zeros next to each outer edge (Airy form at soft, Bessel form at hard "
                        "edges, at --order; default 0: none; at most 50)")
    p.add_argument("--shifts", default=None, metavar="J1:J2",
                   help="also the near-diagonal a_(N+j)^(N), b_(N+j)^(N) for j = J1 ... J2-1 (e.g. --shifts=-2:3), "
                        "by the same --order and --method")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(handler=run)


#: measured seconds per degree on the development machine (loaded), used to refuse long ranges up front:
#: corrected gap zeros (gfunction.polynomial_form, genus >= 1; batched over degrees: 1.6 ms per degree
#: with a_n, b_n and the band counts at order 2, three bands, measured unloaded; 0.01 leaves room for
#: load and harder fields) and the residual problem
_SECONDS_PER_DEGREE = {"gap_zeros": 0.01, "residual": 0.06, "edge_zeros": 0.05, "near_diagonal": 0.4}
_MAX_EDGE_ZEROS = 50
_BUDGET_SECONDS = 600.0


def _order(text) -> int:
    from gfunction.corrected import ORDERS

    try:
        value = int(str(text).strip())
    except ValueError:
        value = None
    if value not in ORDERS:
        raise InputError(f"--order must be one of {', '.join(map(str, ORDERS))}; got {text!r} (e.g. --order 2)")
    return value


def _method(text) -> str:
    from gfunction.corrected import METHODS

    if text not in METHODS:
        raise InputError(f"--method must be one of {', '.join(METHODS)}; got {text!r} (e.g. --method residual)")
    return text


def _edge_count(text) -> int:
    try:
        value = int(str(text).strip())
    except ValueError:
        value = None
    if value is None or not 0 <= value <= _MAX_EDGE_ZEROS or not str(text).strip().isascii():
        raise InputError(f"--edge-zeros must be an integer from 0 to {_MAX_EDGE_ZEROS}; got {text!r} "
                         "(e.g. --edge-zeros 5)")
    return value


def _shifts(text) -> np.ndarray | None:
    """``J1:J2`` (ASCII integers, J1 < J2) -> ``J1 … J2-1``; None without the option."""
    if text is None:
        return None
    m = re.fullmatch(r"\s*([+-]?[0-9]{1,4})\s*:\s*([+-]?[0-9]{1,4})\s*", str(text))
    if not m or int(m.group(1)) >= int(m.group(2)):
        raise InputError(f"--shifts needs J1:J2 with integers J1 < J2 (at most 4 digits); got {text!r} "
                         f"(e.g. --shifts=-2:3)")
    return np.arange(int(m.group(1)), int(m.group(2)))


def _refuse_long(degrees: np.ndarray, order: int, method: str, genus: int, edge_count: int = 0,
                 shifts=None) -> None:
    cost = 0.0
    if shifts is not None:
        cost += _SECONDS_PER_DEGREE["near_diagonal"] * degrees.size * shifts.size
    if order and genus:
        cost += _SECONDS_PER_DEGREE["gap_zeros"] * degrees.size
    if method == "residual":
        cost += _SECONDS_PER_DEGREE["residual"] * degrees.size
    if edge_count:
        # two outer edges, each zero a bracketed root of the form (measured ~5 ms per zero and degree)
        cost += _SECONDS_PER_DEGREE["edge_zeros"] * degrees.size * 2 * max(1.0, edge_count / 5)
    if cost > _BUDGET_SECONDS:
        edge = f" --edge-zeros {edge_count}" if edge_count else ""
        edge += "" if shifts is None else f" and {shifts.size} shifts"
        hints = ["split the range"] + (["use --order 0 / --method series"] if order or method != "series" else [])
        hints += ["ask for fewer --edge-zeros"] if edge_count else []
        hints += ["ask for fewer --shifts"] if shifts is not None else []
        raise InputError(f"--degrees with {degrees.size} degrees at --order {order} --method {method}{edge} would "
                         f"take about {cost / 60:.0f} minutes (limit {_BUDGET_SECONDS / 60:.0f}); "
                         + ", or ".join(hints))


def _edge_zeros(pr, degrees: np.ndarray, count: int, order: int) -> tuple[dict, list[str]]:
    """The zeros next to the outer edges (``gfunction.edge_zeros``), one residual expansion per degree
    shared by both edges; returns ``(JSON part, messages of unverified parts)``."""
    from gfunction.edge_zeros import edge_zeros
    from gfunction.local import edge_parametrix
    from gfunction.polynomial_form import corrections

    cor = corrections(pr, degrees, order)
    last = 2 * len(pr.measure.support) - 1
    out, messages = {}, []
    if cor is not None and not cor.verified:
        messages.append(cor.message)
    for side, index in (("left", 0), ("right", last)):
        try:
            edge_parametrix(pr, index)
        except InputError as exc:   # e.g. a factor singular at a soft edge: no Airy parametrix there
            out[side] = {"zeros": None, "note": str(exc)}
            continue
        found = [edge_zeros(pr, index, int(n), count, order=order, corrections=cor, on_failure="mark")
                 for n in degrees]
        messages += sorted({z.message for z in found if not z.verified})
        first = found[0]
        out[side] = {"edge": float(first.position), "kind": first.kind, "form": first.form,
                     "alpha": float(first.alpha) if first.kind == "hard" else None,
                     "zeros": [[_number(x) for x in z.zeros] for z in found]}
    return out, messages


def run(args) -> int:
    from equilibrium import solve
    from gfunction import predictor
    from gfunction.corrected import corrected_prediction

    degrees = _degrees(args.degrees)
    order, method = _order(args.order), _method(args.method)
    edge_count = _edge_count(getattr(args, "edge_zeros", "0"))
    shifts = _shifts(getattr(args, "shifts", None))
    if shifts is not None and np.any(degrees[0] + shifts < 1):
        raise InputError(f"--shifts {args.shifts!r} reaches degree {int(degrees[0] + shifts[0])} at N = "
                         f"{int(degrees[0])}: N + j must be >= 1")
    field, on = field_and_set_from_args(args)
    factors = factors_from_args(args, on)
    mu = solve(field, on=on, on_failure="mark")
    # beyond leading order the phases nΩ need Ω to rounding (workbench.orders.measure_for_orders)
    mu, omega_note = measure_for_orders(mu, order, method)
    # marked, not raised: the table is printed with the failed checks, exit 3
    pr = predictor(mu, factors, on_failure="mark")
    _refuse_long(degrees, order, method, pr.genus, edge_count, shifts)
    pred = corrected_prediction(pr, degrees, order=order, method=method, on_failure="mark")
    verified, message = pred.verified, pred.message
    edges = None
    if edge_count:
        edges, unverified = _edge_zeros(pr, degrees, edge_count, order)
        if unverified:
            verified = False
            message = "; ".join([m for m in (message, *unverified) if m])
    near = None
    if shifts is not None:
        from gfunction.near_diagonal import near_diagonal_recurrence

        near = [near_diagonal_recurrence(mu, int(n), shifts, factor=factors, order=order, method=method,
                                         on_failure="mark") for n in degrees]
        bad = [f"N = {int(n)}: {r.message}" for n, r in zip(degrees, near) if not r.verified]
        if bad:
            verified = False
            message = "; ".join([m for m in (message, "near-diagonal " + "; ".join(bad)) if m])
    result = {
        "degrees": [int(d) for d in pred.degrees],
        "a": [_number(x) for x in pred.a],
        "b": [_number(x) for x in pred.b],
        "gap_zeros": [[_number(v) for v in row] for row in pred.gap_zeros],
        "band_counts": [[int(c) for c in row] for row in pred.band_counts],
        "order": order,
        "method": method,
        # c_1 … c_K of a_N = c_0 + c_1/N + … (series, order >= 1), per degree
        "corrections": None if pred.corrections is None else {
            q: [[_number(c) for c in pred.corrections[q][:, i]] for i in range(pred.degrees.size)]
            for q in ("a", "b")},
        "support": [list(ab) for ab in mu.support],
        "omega": [float(x) for x in mu.omega],
        # Ω re-solved in extended precision (orders >= 1, residual method, several bands): its figures
        "omega_refinement": refinement_figures(mu) or ({"note": omega_note} if omega_note else None),
        "verified": verified,
        "checks": {k: float(v) for k, v in pred.checks.items()},
        "message": message,
    }
    if method == "residual":
        result["error_estimate"] = [_number(x) for x in pred.error_estimate]
    if edges is not None:
        result["edge_zeros"] = edges
    if near is not None:
        # a[i][k] = a_{N+j}^{(N)} for N = degrees[i], j = shifts[k]
        result["near_diagonal"] = {
            "shifts": [int(j) for j in shifts],
            "a": [[_number(x) for x in r.a] for r in near],
            "b": [[_number(x) for x in r.b] for r in near],
            "error_estimate": None if method != "residual" else [[_number(x) for x in r.error_estimate]
                                                                  for r in near]}
    if args.json:
        sys.stdout.write(json_text(result))
        sys.stdout.write("\n")
        return _status(verified, message)
    out = sys.stdout
    out.write(f"support {result['support']}  Ω {result['omega']}\n")
    what = f"order {order}" if method == "series" else f"residual problem (gap zeros at order {order})"
    out.write(f"predictions: {what}\n")
    extra = f" {'error est':>10}" if method == "residual" else ""
    out.write(f"{'N':>8} {'a_N':>20} {'b_N':>20}{extra}  gap zeros / band counts\n")
    for i, d in enumerate(result["degrees"]):
        gz = ", ".join("-" if v is None else f"{v:.10g}" for v in result["gap_zeros"][i])
        est = f" {pred.error_estimate[i]:>10.2e}" if method == "residual" else ""
        out.write(f"{d:>8} {pred.a[i]:>20.15f} {pred.b[i]:>20.15f}{est}  [{gz}] {result['band_counts'][i]}\n")
    for side, part in (edges or {}).items():
        if part["zeros"] is None:
            out.write(f"{side} edge: no zeros predicted ({part['note']})\n")
            continue
        alpha = f", alpha {part['alpha']:g}" if part["kind"] == "hard" else ""
        out.write(f"zeros next to the {side} {part['kind']} edge {part['edge']:.10g} ({part['form']}{alpha}, "
                  f"order {order}), from the edge inward:\n")
        for d, row in zip(result["degrees"], part["zeros"]):
            out.write(f"{d:>8}  " + ", ".join("-" if v is None else f"{v:.15g}" for v in row) + "\n")
    if near is not None:
        what = f"order {order}" if method == "series" else "residual problem"
        extra = f" {'error est':>10}" if method == "residual" else ""
        out.write(f"near-diagonal a_(N+j)^(N), b_(N+j)^(N) ({what})\n")
        out.write(f"{'N':>8} {'j':>5} {'a':>20} {'b':>20}{extra}\n")
        for i, r in enumerate(near):
            for k, j in enumerate(r.shifts):
                est = f" {r.error_estimate[k]:>10.2e}" if method == "residual" else ""
                out.write(f"{int(degrees[i]):>8} {int(j):>5} {r.a[k]:>20.15f} {r.b[k]:>20.15f}{est}\n")
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
