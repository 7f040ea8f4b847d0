"""The whole run of a case: equilibrium measure -> model problem -> direct polynomials -> comparisons.

Stages
------
1. *equilibrium*: ``μ_V`` of the field on Σ (``solve``, or ``solve_signed``),
   with its checks, and ψ, F on a grid for the figures.
2. *model*: the predictions of the steepest-descent analysis at every n
   (``gfunction.predict``): ``a_n^{(n)}, b_n^{(n)}`` from the outer
   parametrix, zeros of the oscillatory bulk form on the bands, Airy zeros at soft
   edges, the zero in each gap and the count of zeros per band.
3. *direct*: at every n the recurrence coefficients of ``exp(-nV) h`` on Σ
   up to degree ``n + extra`` (``workbench.polynomials``, with their error
   estimate), the zeros of ``p_n``, and ``Y(z)`` on circles around the
   support for the small-norm check.  Each finished n is stored at once
   (``partial/n_XXXXX.h5``, atomic), so an interrupted run resumes.
4. *comparison*: errors of every predicted quantity against n, counts per
   band, and rates fitted by least squares, all by the array functions of
   :mod:`workbench.compare` (the small-norm matrix by :mod:`gfunction.small_norm`).

The Hankel determinant ``log D_n`` of ``w_n`` rides along: the direct stage forms it
from the coefficients it computed anyway (:func:`workbench.polynomials.hankel_determinant`,
``log_det`` attributes of ``/direct/n_XXXXX``), the model stage evaluates its large-n
expansion (:func:`gfunction.hankel.hankel_expansion`, ``/model/log_hankel`` and each term
in ``/model/log_hankel_terms``), and ``/comparison`` holds ``log_hankel_direct``,
``log_hankel_model`` and ``err_log_hankel`` with its rate (``[comparisons] log_hankel``).

The run tree (:class:`workbench.results.Group`) is written atomically to
one HDF5 file, then the figures are drawn from that tree alone.

The small-norm check (Deift, Kriecherbauer, McLaughlin, Venakides, Zhou,
Comm. Pure Appl. Math. 52 (1999) 1335-1425, §7): with
``T = e^{nℓσ₃/2} Y e^{-n(g + ℓ/2)σ₃}`` and ``M`` the outer parametrix, the
matrix ``R = T M^{-1}`` satisfies ``R = I + O(1/n)`` uniformly away from the
support; on a circle of radius ``r`` (``contour_radius`` times the half-width
of the support hull) about its centre the quantity ``max |R - I|`` should
shrink like ``1/n``.
"""

from __future__ import annotations

import functools
import re
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.refinement import refinement_figures
from workbench import compare
from workbench.case import Case
from workbench.hdf5 import check_output_directory, check_output_file, make_output_directory
from workbench.orders import (check_model_request, measure_for_orders, model_orders, model_zero_orders,
                              order_error_keys, order_errors, order_suffixes)
from workbench.results import (
    Group,
    load_partials,
    provenance,
    remove_stale_temporaries,
    write_partial,
    write_run,
)

__all__ = ["RunOutcome", "run_case", "ERROR_QUANTITIES"]

#: error quantities of /comparison that get a fitted rate
ERROR_QUANTITIES = ("err_a", "err_b", "err_values", "err_zeros_bulk", "err_zeros_edge", "err_zeros_edge_right",
                    "err_zeros_edge_left", "err_zeros_edge_scaling", "err_zeros_gap", "small_norm",
                    "err_log_hankel")

#: zeros next to each outer edge compared with the Airy (soft) or Bessel (hard) prediction
EDGE_ZEROS = 5
#: the outer edges compared (edge number, -1: the last), and the suffix of their datasets
EDGE_SIDES = (("right", -1), ("left", 0))
EDGE_SUFFIX = {"right": "", "left": "_left"}


# ------------------------------------------------------------------ the objects
def build_weight(case: Case, field_, on, n: float):
    """The weight ``exp(-nV) h`` on Σ of the direct computation."""
    from equilibrium.weight import Weight

    factors = case.factor.build(on, case.field.parameters)
    return Weight(field=field_, n=float(n), on=on, factors=tuple(factors))


def solve_case(case: Case):
    """The equilibrium measure that models the polynomials of the case, and the signed one set aside.

    Returns ``(field, on, mu, set_aside)``.  With ``[set] signed = true`` the signed
    equilibrium measure of Σ is solved; when it is positive it is the equilibrium
    measure constrained to Σ (support all of Σ) and is the model.  When it is
    negative somewhere it is no model of orthogonal polynomials on Σ, whose zeros
    follow the positive equilibrium measure constrained to Σ (Saff and Totik 1997,
    Thm IV.1.11, from memory); the run then switches to that measure (``solve``) and
    returns the signed one as ``set_aside`` so the file keeps it and says so.
    ``set_aside`` is None otherwise.
    """
    from equilibrium import solve, solve_signed

    field_ = case.build_field()
    on = case.build_set()
    set_aside = None
    try:
        mu = (solve_signed if case.set.signed else solve)(field_, on=on, on_failure="mark")
        if not mu.positive:
            set_aside, mu = mu, solve(field_, on=on, on_failure="mark")
    except InputError as exc:
        # name the file and the tables the refused field and set come from
        raise InputError(f"{case.source} [field] on [set]: {exc}") from None
    return field_, on, mu, set_aside


def switch_note(signed, mu) -> str:
    """The note of a run whose signed measure was negative and set aside for the positive one."""
    pieces, mass = signed.negative_part()
    where = " U ".join(f"[{a:.6g}, {b:.6g}]" for a, b in pieces)
    support = " U ".join(f"[{a:.6g}, {b:.6g}]" for a, b in mu.support)
    return (f"[set] signed = true: the signed measure on the set is negative on {where} (negative mass "
            f"{mass:.3g}), so it is no model of the polynomials; the model uses the positive equilibrium "
            f"measure on the set instead (support {support}); the signed one is kept in /equilibrium_signed")


# ----------------------------------------------------------------------- stages
def equilibrium_group(mu, case: Case) -> Group:
    """The /equilibrium group (see :func:`workbench.equilibrium_io.measure_group`), labelled with the case."""
    from workbench.equilibrium_io import measure_group

    node = measure_group(mu)
    node.attrs.update({"field": case.field.describe(), "set": case.set.text()})
    return node


def direct_group(case: Case, weight, n: int, mu, model_at_n: Mapping[str, Any] | None) -> Group:
    """Direct polynomials at one n: coefficients, zeros, values, and Y on the contours."""
    from workbench.polynomials import hankel_determinant, recurrence_coefficients, weighted_values, zeros

    count = n + case.polynomials.extra_degrees
    small_norm = case.comparisons.small_norm and model_at_n is not None and "small_norm" in model_at_n
    started = time.perf_counter()
    rc = recurrence_coefficients(weight, count, on_failure="mark")
    node = Group()
    node.attrs.update({
        "description": f"direct orthogonal polynomials of exp(-n V) h on the set, n = {n}",
        "n": int(n),
        "degree": int(n),
        "error_estimate": float(rc.error_estimate),
        "verified": bool(rc.verified),
        "method": rc.method,
        "weight": rc.weight_description,
        "checks": {k: float(v) for k, v in dict(rc.checks).items()},
        "log_mass": float(rc.log_mass),
    })
    # log D_n = n log h_0 + sum 2(n-k) log a_k from these coefficients (and their second discretisation)
    det = hankel_determinant(weight, coefficients=rc, on_failure="mark")
    node.attrs.update({"log_det": float(det.log_det), "log_det_error_estimate": float(det.error_estimate),
                       "log_det_verified": bool(det.verified)})
    node.add("a", rc.a, "a_k^{(n)}, k = 0..K (a[0] = 0); x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1}")
    node.add("b", rc.b, "b_k^{(n)}, k = 0..K")
    roots = zeros(rc, n)
    node.add("zeros", roots, "zeros of p_n, ascending (eigenvalues of the Jacobi matrix)")
    points = _bulk_points(mu, case.polynomials.value_points)
    node.add("value_x", points, "bulk points x (inner 70% of each band) where p_n is compared")
    node.add("values", weighted_values(rc, weight, points, n),
             "p_n(x) w_n(x)^{1/2} at value_x (orthonormal, weight square root)")
    if small_norm:
        # Y off the support needs the continued fraction of the second-kind functions,
        # i.e. coefficients beyond n (Gautschi, Math. Comp. 36 (1981) 547-554); 64 extra
        # usually suffice on our circles, more are taken when its convergence check fails.
        # They serve only Y: their error estimate is recorded, apart from the verified ones.
        extra = 64
        rc_full = recurrence_coefficients(weight, n + extra, on_failure="mark")
        while True:
            try:
                deviation = model_at_n["small_norm"](rc_full)
                break
            except _NeedMoreCoefficients:
                if extra >= 1024:
                    raise NumericalFailure(
                        f"small-norm check at n = {n}: the continued fraction of Y did not converge "
                        f"with {extra} coefficients beyond n; use a larger contour_radius") from None
                extra *= 4
                rc_full = recurrence_coefficients(weight, n + extra, on_failure="mark")
        node.add("small_norm_radii", deviation["radii"], "radii of the circles (absolute)")
        node.add("small_norm", deviation["deviation"], "max over each circle of |T M^{-1} - I|")
        node.attrs["det_Y_error"] = float(deviation["det_error"])
        node.attrs["small_norm_coefficients"] = int(rc_full.count)
        node.attrs["small_norm_coefficient_error"] = float(rc_full.error_estimate)
    node.attrs["seconds"] = time.perf_counter() - started
    return node


def _bulk_points(mu, count: int) -> np.ndarray:
    """``count`` points in the inner 70% of each band (the bulk form is not uniform at edges)."""
    t = 0.15 + 0.7 * (np.arange(count) + 0.5) / count
    return np.concatenate([a + (b - a) * t for a, b in np.asarray(mu.support, dtype=float).reshape(-1, 2)])


def comparison_group(tree: Group, ns: Sequence[int], case: Case) -> Group:
    """Errors, counts and rates computed from the stored direct and model data only."""
    node = Group(attrs={"description": "direct against predicted, as functions of n"})
    ns = np.asarray(sorted(ns), dtype=np.int64)
    node.add("n", ns, "values of n (degree = scaling)")
    direct = [tree.get(f"direct/n_{n:05d}") for n in ns]
    model = tree.groups.get("model", Group())
    eq = tree.groups["equilibrium"]
    support = np.asarray(eq.get("support"), dtype=float).reshape(-1, 2)
    k = support.shape[0]

    a_direct = np.array([d.get("a")[n] for d, n in zip(direct, ns)])
    b_direct = np.array([d.get("b")[n] for d, n in zip(direct, ns)])
    node.add("a_direct", a_direct, "a_n^{(n)} from the direct computation")
    node.add("b_direct", b_direct, "b_n^{(n)} from the direct computation")
    node.add("direct_error_estimate", np.array([d.attrs["error_estimate"] for d in direct]),
             "error estimate of the direct coefficients (two discretisations)")

    zeros_direct = [np.asarray(d.get("zeros"), dtype=float) for d in direct]
    counts = np.array([compare.band_counts(x, support) for x in zeros_direct], dtype=np.int64).reshape(ns.size, k)
    gap_direct = np.array([compare.gap_zeros(x, support) for x in zeros_direct]).reshape(ns.size, k - 1)
    node.add("band_counts_direct", counts, "number of zeros of p_n in each band [a_j, b_j]")
    node.add("gap_zeros_direct", gap_direct, "the zero of p_n in gap j (NaN: none there)")

    if model.has("a"):
        a_model, b_model = model.get("a"), model.get("b")
        node.add("a_model", a_model, "a_n^{(n)} predicted by the model problem")
        node.add("b_model", b_model, "b_n^{(n)} predicted by the model problem")
        if case.comparisons.coefficients:
            node.add("err_a", compare.absolute_errors(a_direct, a_model), "|a_n direct - a_n model|")
            node.add("err_b", compare.absolute_errors(b_direct, b_model), "|b_n direct - b_n model|")
            order_errors(node, model, {"a": a_direct, "b": b_direct})
    if model.has("band_counts") and case.comparisons.band_counts:
        predicted = np.asarray(model.get("band_counts"))
        node.add("band_counts_model", predicted, "predicted number of zeros per band")
        node.add("band_count_mismatch", np.abs(counts - predicted).sum(axis=1),
                 "sum over bands of |direct count - predicted count|")
    if case.comparisons.zeros:
        _zero_errors(node, zeros_direct, model, support, gap_direct)
    if model.has("values_shape") and case.comparisons.values:
        ell = float(eq.attrs["lagrange"])
        # the model's bulk form times gamma_n e^{-n ell/2} from the direct log-mass and a_k
        norms = np.array([compare.value_normalisation(float(d.attrs["log_mass"]), d.get("a"), int(n), ell)
                          for d, n in zip(direct, ns)])
        values = np.array([d.get("values") for d in direct])
        for suffix in [""] + order_suffixes(model, "values_shape"):
            predicted = norms[:, None] * np.asarray(model.get(f"values_shape{suffix}"), dtype=float)
            what = _order_words(suffix)
            node.add(f"values_model{suffix}", predicted, f"predicted p_n w^{{1/2}} at the bulk points ({what}; "
                     "model form times the direct gamma_n)")
            node.add(f"err_values{suffix}", np.max(compare.absolute_errors(values, predicted), axis=1),
                     f"max over the bulk points of |p_n w^{{1/2}} direct - model| ({what})")
    _log_hankel_comparison(node, direct, ns, model, case)
    if all(d.has("small_norm") for d in direct) and case.comparisons.small_norm:
        node.add("small_norm", np.array([np.max(d.get("small_norm")) for d in direct]),
                 "max over the circles of |T M^{-1} - I| (should be O(1/n))")
    if case.comparisons.rates:
        rates = node.group("rates")
        rates.attrs["description"] = "fits log error = intercept + slope log n (least squares)"
        floor = compare.rounding_floor(float(np.max(np.abs(support))))
        for key in ERROR_QUANTITIES + tuple(order_error_keys(node)):
            if node.has(key):
                err = np.asarray(node.get(key), dtype=float)
                # errors at rounding level carry no rate: they are left out of the fit
                key_floor = floor
                if key == "err_log_hankel":
                    # log D_n is of size n^2: its floor is the direct error estimate (rounding of the sum)
                    key_floor = max(floor, 2.0 * float(np.max(node.get("log_hankel_error_estimate"))))
                fit = compare.fit_rate(ns, err, floor=key_floor)
                entry = rates.group(key)
                if not np.isfinite(err).any():
                    entry.attrs["note"] = "nothing to compare at any n"
                elif not np.any(err > key_floor):
                    entry.attrs["note"] = f"all errors below {key_floor:.1e} (rounding level)"
                # max n·error bounded shows O(1/n) where the coefficient is quasi-periodic in n
                # (compare.scaled_maximum)
                entry.attrs.update({
                    "slope": fit.slope, "stderr": fit.stderr, "intercept": fit.intercept,
                    "points": fit.points, "residual": fit.residual,
                    "max_n_times_error": compare.scaled_maximum(ns, err),
                    "max_n_times_error_second_half": compare.scaled_maximum(ns, err, second_half=True),
                    "description": f"rate of {key}: error ~ exp(intercept) n^slope; "
                                   "max_n_times_error bounded means O(1/n) with a quasi-periodic coefficient",
                })
    return node


def _log_hankel_comparison(node: Group, direct: Sequence[Group], ns: np.ndarray, model: Group,
                           case: Case) -> None:
    """``log_hankel_direct`` (always, for formulas and notebooks), and against ``/model/log_hankel``
    ``log_hankel_model`` and ``err_log_hankel = |log D_n direct - expansion|``."""
    from workbench.polynomials.hankel import log_det_from_coefficients

    values, estimates = [], []
    for d, n in zip(direct, ns):
        if "log_det" in d.attrs:
            values.append(float(d.attrs["log_det"]))
            estimates.append(float(d.attrs["log_det_error_estimate"]))
        else:   # partial results of an earlier version: the sum from the stored coefficients
            values.append(log_det_from_coefficients(d.get("a"), float(d.attrs["log_mass"]), int(n)))
            estimates.append(np.nan)
    node.add("log_hankel_direct", np.array(values), "log D_n of w_n = exp(-nV) h from the norms of the "
             "direct polynomials, n log h_0 + sum_k 2(n-k) log a_k (workbench.polynomials.hankel)")
    node.add("log_hankel_error_estimate", np.array(estimates),
             "error estimate of log_hankel_direct: second discretisation plus rounding of the sum (NaN: "
             "not recorded by the partial result reused)")
    if model.has("log_hankel") and case.comparisons.log_hankel:
        predicted = np.asarray(model.get("log_hankel"), dtype=float)
        node.add("log_hankel_model", predicted, "log D_n from its large-n expansion (gfunction.hankel)")
        node.add("err_log_hankel", compare.absolute_errors(values, predicted),
                 "|log D_n direct - expansion| (every term known for the weight, /model/log_hankel_terms)")


def _order_words(suffix: str) -> str:
    """``""`` -> ``"order 0"``, ``"_order2"`` -> ``"order 2"``: the order of a stored prediction."""
    return "order 0" if not suffix else suffix.lstrip("_").replace("order", "order ")


def _n_list(ns: np.ndarray, limit: int = 8) -> str:
    values = [int(v) for v in ns]
    shown = ", ".join(str(v) for v in values[:limit])
    return shown + (f" and {len(values) - limit} more" if len(values) > limit else "")


def comparison_notes(tree: Group, case: Case) -> tuple[list[str], list[str]]:
    """Every comparison asked for and not made, or made and not a number: ``(notes, failures)``.

    A *note* names a comparison the run skipped and why (by design, e.g. no small-norm
    check with a factor h; or nothing to compare, e.g. no zero in any gap on either
    side).  A *failure* is a comparison that should have a value and is NaN; it makes
    the run unverified (NaN is never verified).  Both go to the file and the screen.
    Reads the stored groups only.
    """
    notes: list[str] = []
    failures: list[str] = []
    comp = tree.groups.get("comparison")
    model = tree.groups.get("model", Group())
    if comp is None or not model.attrs.get("available", True):
        return notes, failures  # the failed model has its own message
    ns = np.asarray(comp.get("n"))
    wanted = case.comparisons
    if wanted.values and not comp.has("err_values"):
        notes.append("values of p_n not compared: " + str(model.attrs.get(
            "values_skipped", "the model side gave no bulk form")))
    if wanted.small_norm and not comp.has("small_norm"):
        notes.append("small-norm check not made: " + str(model.attrs.get(
            "small_norm_skipped", "the model side gave no outer parametrix on the circles")))
    if wanted.log_hankel and not comp.has("err_log_hankel"):
        notes.append("log D_n not compared with its expansion: " + str(model.attrs.get(
            "log_hankel_skipped", "the model side gave no expansion")))
    if wanted.zeros and not comp.has("err_zeros_edge"):
        notes.append("edge zeros not compared: " + str(model.attrs.get(
            "edge_zeros_skipped", model.attrs.get("edge_zeros_left_skipped", "the model side gave no edge zeros"))))
    if wanted.zeros and comp.has("gap_zeros_direct") and comp.has("gap_zeros_model"):
        direct = np.atleast_2d(np.asarray(comp.get("gap_zeros_direct"), dtype=float))
        predicted = np.atleast_2d(np.asarray(comp.get("gap_zeros_model"), dtype=float))
        none = ~np.isfinite(direct).any(axis=1) & ~np.isfinite(predicted).any(axis=1)
        if direct.shape[1] and none.any():
            notes.append(f"gap zeros: nothing to compare at n = {_n_list(ns[none])} "
                         "(no zero in any gap, neither direct nor predicted)")
        one_side = (np.isfinite(direct) != np.isfinite(predicted)).any(axis=1)
        if direct.shape[1] and one_side.any():
            notes.append(f"gap zeros: a zero on one side only at n = {_n_list(ns[one_side])} "
                         "(gap_zero_presence_mismatch; usually a zero close to a band end)")
    # edge zeros: at small n the matching disc may hold none of them (no prediction there)
    compared = [np.asarray(comp.get(f"edge_zeros{suffix}_compared")) for suffix in EDGE_SUFFIX.values()
                if comp.has(f"edge_zeros{suffix}_compared")]
    no_edge_zero = np.sum(compared, axis=0) == 0 if compared else np.zeros(ns.shape, dtype=bool)
    if wanted.zeros and np.any(no_edge_zero):
        notes.append(f"edge zeros: nothing to compare at n = {_n_list(ns[no_edge_zero])} (no predicted zero "
                     "inside the matching discs of the outer edges, where the Airy/Bessel forms hold)")
    # a comparison that was made must have a number at every n
    for key in ERROR_QUANTITIES + tuple(order_error_keys(comp)):
        if key.startswith("err_zeros_gap") or not comp.has(key):
            continue
        values = np.asarray(comp.get(key), dtype=float)
        bad = ~np.isfinite(values)
        if key.startswith("err_zeros_edge"):
            side = re.sub(r"_order\d+$", "", key.removeprefix("err_zeros_edge")).removeprefix("_")
            if side in EDGE_SUFFIX and comp.has(f"edge_zeros{EDGE_SUFFIX[side]}_compared"):
                bad &= np.asarray(comp.get(f"edge_zeros{EDGE_SUFFIX[side]}_compared")) > 0
            else:
                bad &= ~no_edge_zero
        if bad.any():
            failures.append(f"{key} is not a number at n = {_n_list(ns[bad])}: that comparison failed "
                            "there and is not verified")
    return notes, failures


def _zero_errors(node: Group, zeros_direct, model: Group, support, gap_direct) -> None:
    if model.has("bulk_zeros"):
        # each predicted zero against the nearest zero of p_n (NaN pads of the rows are no zeros)
        errs = []
        for x, predicted in zip(zeros_direct, model.get("bulk_zeros")):
            predicted = np.asarray(predicted, dtype=float)
            distances = compare.nearest_zero_distances(x, predicted[np.isfinite(predicted)])
            errs.append(float(np.max(distances)) if distances.size else np.nan)
        node.add("err_zeros_bulk", np.asarray(errs),
                 "max over the predicted bulk zeros of the distance to the nearest zero of p_n")
    worst_form, worst_scaling = [], []
    worst_orders: dict[str, list] = {}
    for side, _ in EDGE_SIDES:
        suffix = EDGE_SUFFIX[side]
        if not model.has(f"edge_zeros{suffix}"):
            continue
        predicted = np.asarray(model.get(f"edge_zeros{suffix}"), dtype=float)  # (N, m): from the edge inward
        m = predicted.shape[1]
        edge = support[-1, 1] if side == "right" else support[0, 0]
        found = np.array([compare.zeros_from_edge(x, m, side) for x in zeros_direct])
        node.add(f"edge_zeros{suffix}_direct", found, f"zeros of p_n next to the {side} edge, counted inward")
        # zeros beyond the matching disc have no prediction (NaN): the error is over the others
        worst_form.append(compare.finite_maximum(compare.absolute_errors(found, predicted)))
        kind = model.attrs.get(f"edge_kind{suffix}", "soft")
        for order in order_suffixes(model, f"edge_zeros{suffix}"):
            err = compare.finite_maximum(compare.absolute_errors(found, model.get(f"edge_zeros{suffix}{order}")))
            worst_orders.setdefault(order, []).append(err)
            node.add(f"err_zeros_edge_{side}{order}", err, f"max over the zeros next to the {side} ({kind}) "
                     f"edge of |direct - predicted| ({_order_words(order)})")
        scaling = np.asarray(model.get(f"edge_zeros{suffix}_scaling"), dtype=float)
        worst_scaling.append(compare.finite_maximum(compare.absolute_errors(found, scaling)))
        node.add(f"edge_zeros{suffix}_compared", np.isfinite(predicted).sum(axis=1),
                 f"number of zeros next to the {side} edge predicted inside the matching disc and compared")
        node.add(f"err_zeros_edge_{side}", worst_form[-1],
                 f"max over the zeros next to the {side} ({kind}) edge of |direct - predicted| (order 0)")
        reference = np.asarray(model.get(f"edge_model_zeros{suffix}"), dtype=float)[:m]
        node.add(f"edge_model_zeros{suffix}", reference, "zeros of the model problem in the local variable "
                 "(Airy zeros a_j, or -j_{alpha,j}^2/4 at a hard edge)")
        # c n^{2/3} (soft) or c n^2 (hard) implied by the scaling prediction of the first zero
        node.add(f"edge_scaled_direct{suffix}", compare.edge_scaled(found, scaling[:, :1], reference[0], edge),
                 f"c n^{{2/3}} (x_j - e) (soft) or c n^2 (x_j - e) (hard), e the {side} edge: direct zeros in "
                 "the scaling of the local variable")
    if worst_form:
        node.add("err_zeros_edge", compare.finite_maximum(np.array(worst_form).T),
                 "max over the outer edges and their zeros of |direct - predicted| (Airy or Bessel form, order 0)")
        node.add("err_zeros_edge_scaling", compare.finite_maximum(np.array(worst_scaling).T),
                 "max over the outer edges and their zeros of |direct - scaling prediction|")
    for order, worst in worst_orders.items():
        node.add(f"err_zeros_edge{order}", compare.finite_maximum(np.array(worst).T),
                 f"max over the outer edges and their zeros of |direct - predicted| ({_order_words(order)})")
    if model.has("gap_zeros") and gap_direct.shape[1]:
        predicted = np.asarray(model.get("gap_zeros"), dtype=float).reshape(gap_direct.shape)
        node.add("gap_zeros_model", predicted, "predicted zero in gap j (NaN: none)")
        both = np.isfinite(predicted) & np.isfinite(gap_direct)
        err = np.where(both, compare.absolute_errors(predicted, gap_direct), np.nan)
        node.add("err_zeros_gap", compare.finite_maximum(err),
                 "max over gaps of |gap zero direct - predicted| (where both exist)")
        for order in order_suffixes(model, "gap_zeros"):
            predicted = np.asarray(model.get(f"gap_zeros{order}"), dtype=float).reshape(gap_direct.shape)
            node.add(f"gap_zeros_model{order}", predicted, f"predicted zero in gap j ({_order_words(order)})")
            both = np.isfinite(predicted) & np.isfinite(gap_direct)
            err = np.where(both, compare.absolute_errors(predicted, gap_direct), np.nan)
            node.add(f"err_zeros_gap{order}", compare.finite_maximum(err),
                     f"max over gaps of |gap zero direct - predicted| where both exist ({_order_words(order)})")
        node.add("gap_zero_presence_mismatch",
                 (np.isfinite(predicted) != np.isfinite(gap_direct)).sum(axis=1),
                 "gaps where one of direct/model has a zero and the other none")


# ------------------------------------------------------------------------- runs
def check_formulas(case: Case, mu) -> None:
    """Refuse, before anything is written, formulas naming bands or gaps the support lacks
    (workbench.formulas)."""
    from workbench.formulas import check_run_names

    bands = len(mu.support)
    for spec in case.formulas:
        try:
            check_run_names(spec, bands)
        except InputError as exc:
            raise InputError(f"{case.source} [[formulas]] '{spec.name}': {exc}") from None


@dataclass(frozen=True)
class RunOutcome:
    """What :func:`run_case` produced."""

    path: Path
    tree: Group
    figures: Mapping[str, list[Path]]
    computed: tuple[int, ...]
    reused: tuple[int, ...]
    seconds: float
    verified: bool
    messages: tuple[str, ...] = ()   # why the run is not verified (empty when it is)
    notes: tuple[str, ...] = ()      # what was switched or skipped, and why (not failures)
    model_reused: bool = False       # the model stage was read from partial/model.h5

    @property
    def message(self) -> str:
        """The messages on one line (empty when verified)."""
        return "; ".join(self.messages)


def run_case(case: Case, out: str | Path | None = None, *, progress: bool = True,
             draw: bool | None = None, after_each_n: Callable[[int], None] | None = None,
             workers: int | None = None, scheduler: str | None = None) -> RunOutcome:
    """Run every stage of ``case``; results go to ``out`` (default: the case's output folder).

    ``after_each_n`` is called with n after each finished n has been stored
    (the tests use it to interrupt a run at a known point; serial runs only).
    ``workers`` (a local process pool) or ``scheduler`` (a Dask scheduler address) run the
    direct stage in parallel with the executors of :func:`workbench.sweep.run_points`; each
    worker stores its n in ``partial/`` as the serial loop does (:func:`direct_point`).
    """
    directory = case.output_directory(out)
    check_output_directory(directory)
    # every path the run will write is checked before any work (a folder or FIFO in the way,
    # a name no file system takes): a refused run costs nothing
    check_output_file(directory / case.output.file, what=f"the run file {directory / case.output.file}")
    check_output_directory(directory / "partial")
    if (case.figures.enabled if draw is None else draw):
        check_output_directory(directory / "figures", what=f"the figures folder {directory / 'figures'}")
    timings: dict[str, float] = {}
    start = time.perf_counter()
    messages: list[str] = []

    # the field is checked (confining, real and finite on the set) before anything is
    # written, so a refused case leaves no trace on disk
    t = time.perf_counter()
    field_, on, mu, set_aside = solve_case(case)
    timings["equilibrium"] = time.perf_counter() - t
    check_model_request(case, mu)
    check_formulas(case, mu)
    # notes: what the run did differently from what was asked, or left out, and why; shown on
    # screen and kept in the file (they do not make the run unverified, failures do)
    notes: list[str] = []
    if set_aside is not None:
        notes.append(switch_note(set_aside, mu))
    make_output_directory(directory)
    remove_stale_temporaries(directory)
    if not mu.verified:
        messages.append(f"equilibrium measure not verified: {getattr(mu, 'message', '')}")

    tree = Group(attrs={"format": "workbench-run"})
    tree.groups["equilibrium"] = equilibrium_group(mu, case)
    if set_aside is not None:
        tree.groups["equilibrium_signed"] = equilibrium_group(set_aside, case)
        tree.groups["equilibrium_signed"].attrs["description"] = (
            "the signed equilibrium measure of the set asked for by [set] signed = true; negative "
            "somewhere, so not the model (that is /equilibrium)")

    ns = list(case.polynomials.n)
    t = time.perf_counter()
    # the model stage is stored with the partial results: a resume reads it instead of recomputing
    cached = load_model_partial(directory, case.digest)
    model_reused = cached is not None
    if cached is not None:
        model = ModelSide(cached)
    else:
        bar = _bar(model_steps(ns), 0, f"{case.name}: model", "step", progress)
        try:
            model = model_predictions(case, mu, ns, step=bar.update)
            write_model_partial(directory, model.group, case.digest)
        except NumericalFailure as exc:
            # the direct side and the equilibrium measure still stand on their own
            model = ModelSide(Group(attrs={"description": "model-problem predictions", "available": False,
                                           "failure": str(exc)}))
            messages.append(f"model problem failed: {exc}")
        finally:
            bar.close()
    tree.groups["model"] = model.group
    if model.group.attrs.get("verified") is False:
        messages.append(f"model predictions not verified: {model.group.attrs['message']}")
    timings["model"] = time.perf_counter() - t

    finished = load_partials(directory, case.digest, ns)
    reused = tuple(sorted(finished))
    computed = []
    todo = [n for n in ns if n not in finished]
    parallel = workers is not None or scheduler is not None
    if model_reused and todo and not parallel:
        # the per-n checks of the model side are functions, not data: rebuilt for the n still to do
        model.helpers.update(small_norm_helpers(case, mu, todo))
    t = time.perf_counter()
    if todo and parallel:
        finished.update(_direct_in_parallel(case, directory, todo, model, workers, scheduler, progress))
        computed, todo = list(todo), []
    bar = _bar(len(ns), len(ns) - len(todo), f"{case.name}: direct", "n", progress)
    try:
        for n in todo:
            weight = build_weight(case, field_, on, n)
            node = direct_group(case, weight, n, mu, model.at(n))
            write_partial(directory, n, node, case.digest)
            finished[n] = node
            computed.append(n)
            bar.update(1)
            if after_each_n is not None:
                after_each_n(n)
    finally:
        bar.close()
    timings["direct"] = time.perf_counter() - t
    direct = tree.group("direct")
    direct.attrs["description"] = "one group per n: direct orthogonal polynomials"
    for n in ns:
        direct.groups[f"n_{n:05d}"] = finished[n]
        if not finished[n].attrs.get("verified", True):
            messages.append(f"direct coefficients at n = {n} not verified "
                            f"(error estimate {finished[n].attrs.get('error_estimate')})")
        if finished[n].attrs.get("small_norm_coefficient_error", 0.0) > 1e-6:
            messages.append(f"coefficients used for Y at n = {n} have error estimate "
                            f"{finished[n].attrs['small_norm_coefficient_error']:.1e}")

    t = time.perf_counter()
    tree.groups["comparison"] = comparison_group(tree, ns, case)
    skipped, failed = comparison_notes(tree, case)
    notes.extend(skipped)
    if case.formulas:
        from workbench.formulas import formulas_group

        tree.groups["comparison"].groups["formulas"], formula_notes = formulas_group(tree, case.formulas)
        notes.extend(formula_notes)
    messages.extend(failed)
    timings["comparison"] = time.perf_counter() - t
    timings["total"] = time.perf_counter() - start

    verified = not messages
    tree.attrs.update(provenance(case.text, case.source, case.parameters(), timings))
    tree.attrs.update({"case_name": case.name, "case_title": case.title, "verified": verified,
                       "messages": list(messages) or "none", "notes": list(notes) or "none",
                       "reduced": case.reduced})

    draw = case.figures.enabled if draw is None else draw
    figure_files: dict[str, list[Path]] = {}
    fig_node = tree.group("figures")
    fig_node.attrs.update({"description": "figures drawn from this file by 'workbench plot'",
                           "style": "one journal column (3.4 in), 8-9 pt, Okabe-Ito palette",
                           "formats": list(case.figures.formats),
                           "which": list(case.figures.which)})
    path = directory / case.output.file
    if draw:
        from workbench.figures import draw_all

        figure_files = draw_all(tree, directory / "figures", formats=case.figures.formats,
                                which=case.figures.which, dpi=case.figures.dpi)
        fig_node.attrs["drawn"] = sorted(figure_files)
        fig_node.attrs["files"] = sorted(str(p.relative_to(directory)) for v in figure_files.values()
                                         for p in v)
    write_run(path, tree)
    return RunOutcome(path=path, tree=tree, figures=figure_files, computed=tuple(computed),
                      reused=reused, seconds=time.perf_counter() - start, verified=verified,
                      messages=tuple(messages), notes=tuple(notes), model_reused=model_reused)


def _direct_in_parallel(case: Case, directory: Path, todo: Sequence[int], model: "ModelSide",
                        workers: int | None, scheduler: str | None, progress: bool) -> dict[int, Group]:
    """The direct stage at ``todo`` on a process pool or a Dask cluster; the stored results."""
    import functools
    import os

    from workbench.sweep import Journal, run_points

    payload = {"text": case.text, "source": case.source, "reduced": case.reduced,
               "directory": str(directory),
               # as in the serial loop, where model_predictions (or small_norm_helpers) gives the checks
               "small_norm": bool(case.comparisons.small_norm and case.factor.is_one
                                  and model.group.attrs.get("available", True))}
    journal = Journal(Path(directory) / "partial" / f"direct-{os.getpid()}.jsonl", case.digest)
    try:
        outcome = run_points([{"n": int(n)} for n in todo], functools.partial(direct_point, payload), journal,
                             workers=workers, scheduler=scheduler, progress=progress,
                             description=f"{case.name}: direct")
    finally:
        journal.path.unlink(missing_ok=True)
    failed = [result for result in outcome.results.values() if "error" in result]
    if failed:
        kind = InputError if failed[0].get("error_kind") == "InputError" else NumericalFailure
        raise kind(f"direct stage: {failed[0]['error']}")
    found = load_partials(directory, case.digest, todo)
    missing = [n for n in todo if n not in found]
    if missing:
        raise NumericalFailure(f"direct stage: the workers stored no result for n = {missing}")
    return found


@functools.lru_cache(maxsize=2)
def _worker_state(text: str, source: str, reduced: bool):
    """The case, field, set and measure in a worker process (solved once per process)."""
    from workbench.case import parse_case

    case = parse_case(text, source=source, reduced=reduced)
    field_, on, mu, _ = solve_case(case)
    return case, field_, on, mu, {}


def direct_point(payload: Mapping[str, Any], params: Mapping[str, float]) -> dict[str, Any]:
    """The direct stage at one n in a worker: computed, stored in ``partial/`` (the point function of
    :func:`workbench.sweep.run_points`; the small answer goes to its journal)."""
    case, field_, on, mu, predictors = _worker_state(payload["text"], payload["source"], payload["reduced"])
    n = int(params["n"])
    helper = None
    if payload["small_norm"]:
        if "pred" not in predictors:
            from gfunction.predict import predictor

            predictors["pred"] = predictor(mu, on_failure="mark")
        helper = _small_norm_circles(case, mu, predictors["pred"], [n])[0][n]
    node = direct_group(case, build_weight(case, field_, on, n), n, mu, helper)
    write_partial(payload["directory"], n, node, case.digest)
    return {"n": n, "seconds": float(node.attrs["seconds"])}


def _bar(total: int, initial: int, description: str, unit: str, progress: bool):
    """A tqdm bar on stderr (shown only when stderr is a terminal and ``progress``)."""
    import sys

    from tqdm import tqdm

    # no monitor thread (it only retunes the refresh rate): a run stays one thread between its
    # stages, so that its helpers may fork (workbench.forked)
    tqdm.monitor_interval = 0
    return tqdm(total=total, initial=initial, desc=description, unit=unit, file=sys.stderr,
                disable=not progress or not sys.stderr.isatty(), leave=False)


def model_path(directory: str | Path) -> Path:
    """Where the model stage of a run is kept for a resume (beside the per-n partial results)."""
    return Path(directory) / "partial" / "model.h5"


def write_model_partial(directory: str | Path, node: Group, digest: str) -> Path:
    """Store the /model group, tied to the case digest (atomic, like the per-n results)."""
    from workbench.results import write_group_file

    return write_group_file(model_path(directory), node, case_digest=digest)


def load_model_partial(directory: str | Path, digest: str) -> Group | None:
    """The stored /model group of the same case, or None (absent, another case, unreadable)."""
    import h5py

    from workbench.results import read_group_file

    path = model_path(directory)
    if not path.exists():
        return None
    try:
        with h5py.File(path, "r") as handle:
            if handle.attrs.get("case_digest") != digest:
                return None
        node = read_group_file(path)
    except OSError:
        return None
    node.attrs.pop("case_digest", None)
    node.attrs.pop("conventions", None)
    return node


# ----------------------------------------------------------------- model side
@dataclass
class ModelSide:
    """Predictions of the model problem for all n (group) and per-n helpers (``at``)."""

    group: Group
    helpers: dict[int, dict[str, Any]] = field(default_factory=dict)

    def at(self, n: int) -> dict[str, Any] | None:
        return self.helpers.get(n)


#: steps of the model stage that do not repeat per n (model_steps)
_MODEL_FIXED_STEPS = 7


def model_steps(ns: Sequence[int]) -> int:
    """Number of steps :func:`model_predictions` reports: fixed ones, then edge and bulk zeros per n."""
    return _MODEL_FIXED_STEPS + 2 * len(ns)


def model_predictions(case: Case, mu, ns: Sequence[int],
                      step: Callable[[int], Any] | None = None) -> ModelSide:
    """Everything the steepest-descent side predicts at the values ``ns`` (degree = scaling).

    Stored in ``/model``: ``a``, ``b`` (outer parametrix), ``phases`` ``w = nΩ``
    (mod 1), ``gap_zeros`` and ``band_counts`` (argument principle on M_11),
    ``edge_zeros`` (Airy or Bessel form, order 0) and ``edge_zeros_scaling`` at the
    rightmost edge, with ``edge_model_zeros`` (the same with ``_left`` at the leftmost edge),
    ``bulk_zeros`` (zeros of the bulk form, NaN-padded), ``values_shape`` (the
    oscillatory bulk form of p_n w^{1/2} up to the factor γ_n e^{-nℓ/2}),
    plus ``a_dense``/``b_dense``/``gap_zeros_dense`` at the degrees ``n_dense``
    (every integer of the range when it has at most 400, else 400 integers
    spread evenly over it) for the quasi-periodic pattern of the figures.

    ``step(k)`` is called after each piece of work, :func:`model_steps` in all (a progress bar).
    """
    step = step or (lambda k=1: None)
    from gfunction.predict import predictor

    from workbench.forked import fork_call

    ns_arr = np.asarray(sorted(ns), dtype=np.int64)
    node = Group(attrs={"description": "predictions of the model problem (a, b, zeros: leading order, "
                                       "error O(1/n); a_order<k>, b_order<k>, a_residual: beyond it, "
                                       "workbench.orders); degree = scaling = n",
                        "available": True})
    # the factor h enters through its Szegő function (the same factor objects as the direct side)
    factors = build_weight(case, mu.field, mu.on, 1.0).factors if not case.factor.is_one else None
    # beyond leading order every prediction of the stage takes Ω to rounding (workbench.orders)
    mu, omega_note = measure_for_orders(mu, case.model.order, case.model.method)
    node.attrs["omega"] = np.asarray(mu.omega, dtype=float)
    figures = refinement_figures(mu)
    if figures is not None:
        node.attrs["omega_refinement"] = figures
    elif omega_note:
        node.attrs["omega_refinement_skipped"] = omega_note
    pred = predictor(mu, factor=factors, on_failure="mark")
    step(1)
    # the bulk zeros (about half of this stage) need the predictor alone: a forked child finds them
    # while this process does the rest (workbench.forked; None: found here, in the loop below)
    bulk_child = fork_call(lambda: [np.asarray(pred.bulk_zeros(int(n)), dtype=float) for n in ns_arr])
    try:
        return _model_predictions(case, mu, ns_arr, node, pred, factors, bulk_child, step)
    finally:
        if bulk_child is not None:
            bulk_child.cancel()


def _model_predictions(case: Case, mu, ns_arr: np.ndarray, node: Group, pred, factors, bulk_child,
                       step) -> ModelSide:
    """The body of :func:`model_predictions` after the predictor is built, filling ``node``
    (``bulk_child``: the bulk zeros being found by a forked child, or None)."""
    from gfunction.edge_zeros import edge_scaling_zeros, edge_zeros
    from gfunction.local import edge_parametrix
    from gfunction.polynomial_form import value_form

    prediction = pred.predict(ns_arr, on_failure="mark")
    step(1)
    unverified = [prediction.message] if not prediction.verified else []
    node.attrs["checks"] = dict(prediction.checks)
    node.attrs["g_function_checks"] = dict(pred.g.checks)
    node.attrs["model_checks"] = dict(pred.model.checks)
    node.attrs["genus"] = int(pred.genus)
    node.attrs["h_factor"] = case.factor.describe()
    if not case.factor.is_one:
        node.attrs["caution"] = ("the factor h enters the outer parametrix through its Szego function; "
                                 "no local parametrix at an interior Fisher-Hartwig point")
    node.add("n", ns_arr, "values of n")
    node.add("a", prediction.a, "predicted a_n^{(n)} (outer parametrix expansion, a^2 = (M1)12 (M1)21)")
    node.add("b", prediction.b, "predicted b_n^{(n)} = (M2)12/(M1)12 - (M1)22")
    node.add("phases", np.asarray(prediction.phases).reshape(ns_arr.size, -1),
             "phases w = n Omega (mod 1) of the outer parametrix")
    node.add("gap_zeros", np.asarray(prediction.gap_zeros, dtype=float).reshape(ns_arr.size, max(pred.genus, 0)),
             "predicted zero of p_n in gap j (NaN: none)")
    node.add("band_counts", np.asarray(prediction.band_counts, dtype=np.int64),
             "predicted number of zeros of p_n in each band")
    unverified += model_orders(case, pred, ns_arr, node)
    step(1)

    support = np.asarray(mu.support, dtype=float).reshape(-1, 2)
    k = support.shape[0]
    edges = []   # (suffix, edge number) of the outer edges with zeros predicted
    for side, index in EDGE_SIDES:
        index = index % (2 * k)
        where = "b_k" if side == "right" else "a_1"
        try:
            edge_parametrix(pred, index)
        except InputError as exc:   # a factor singular at a soft edge has no Airy parametrix
            node.attrs[f"edge_zeros{EDGE_SUFFIX[side]}_skipped"] = str(exc)
            step(len(ns_arr) // 2 if side == "right" else len(ns_arr) - len(ns_arr) // 2)
            continue
        scaling, form = [], []
        for i, n in enumerate(ns_arr):
            scaling.append(edge_scaling_zeros(pred, index, int(n), EDGE_ZEROS, on_failure="mark"))
            form.append(edge_zeros(pred, index, int(n), EDGE_ZEROS, order=0, on_failure="mark"))
        step(len(ns_arr) // 2 if side == "right" else len(ns_arr) - len(ns_arr) // 2)
        unverified += sorted({z.message for z in scaling + form if not z.verified})
        suffix, name = EDGE_SUFFIX[side], form[0].form
        edges.append((suffix, index))
        node.attrs.update({f"edge_kind{suffix}": form[0].kind, f"edge_alpha{suffix}": float(form[0].alpha)})
        node.add(f"edge_zeros{suffix}", np.array([z.zeros for z in form]),
                 f"predicted zeros next to the {side} edge {where} from the {name} of the local parametrix "
                 "with R = I (order 0; gfunction.edge_zeros), counted from the edge inward")
        node.add(f"edge_zeros{suffix}_scaling", np.array([z.zeros for z in scaling]),
                 f"scaling prediction of the zeros next to {where}: f_e(x_j) = a_j n^{{-2/3}} (soft) or "
                 "-j_{alpha,j}^2/(4 n^2) (hard), counted from the edge inward")
        node.add(f"edge_model_zeros{suffix}", form[0].model_zeros,
                 "zeros of the model problem in the local variable: Airy zeros a_j (scipy.special.ai_zeros) "
                 "at a soft edge, -j_{alpha,j}^2/4 (Bessel zeros j_{alpha,j}) at a hard edge")

    if case.comparisons.log_hankel:
        unverified += _log_hankel_model(node, mu, factors or (), ns_arr)
    step(1)

    bulk = bulk_child.result() if bulk_child is not None else None
    if bulk is None:
        bulk = []
        for n in ns_arr:
            bulk.append(np.asarray(pred.bulk_zeros(int(n)), dtype=float))
            step(1)
    else:
        step(len(ns_arr))
    width = max([b.size for b in bulk] + [1])
    padded = np.full((len(bulk), width), np.nan)
    for i, b in enumerate(bulk):
        padded[i, : b.size] = b
    node.add("bulk_zeros", padded, "zeros of the oscillatory bulk form (DKMVZ 1999, Thm 1.1, leading "
                                   "order) away from the ends of each band and from singular points "
                                   "of the factor (10% of the band width); NaN pads row i")

    points = None
    interior = () if pred.szego is None else pred.szego.interior_points
    if interior:
        node.attrs["values_skipped"] = (
            f"the factor ({case.factor.describe()}) is singular at c = {', '.join(f'{c:g}' for c in interior)} "
            "inside a band, where the bulk form has no local parametrix")
    else:
        points = _bulk_points(mu, case.polynomials.value_points)
        node.add("value_x", points, "bulk points (inner 70% of each band)")
        node.add("values_shape", np.array([value_form(pred, points, int(n)) for n in ns_arr]),
                 "D_inf |D_+| Re[M11+ e^{n(g+ - V/2 + ell/2)}/D_+ + M11- e^{n(g- - V/2 + ell/2)}/D_-]: predicted "
                 "p_n w^{1/2} divided by gamma_n e^{-n ell/2} (D the Szego function of the factor, 1 without one; "
                 "gfunction.polynomial_form.value_form, order 0)", dims=("n", "value_x"))
    unverified += model_zero_orders(case, pred, ns_arr, node, edges, points, EDGE_ZEROS)
    step(1)

    helpers = {}
    if case.comparisons.small_norm and not case.factor.is_one:
        node.attrs["small_norm_skipped"] = ("with h != 1 the global parametrix carries the Szego "
                                            "function of h (D_inf^{sigma3} M D^{-sigma3}), which the "
                                            "model side does not provide")
    elif case.comparisons.small_norm:
        helpers, radii = _small_norm_circles(case, mu, pred, ns_arr)
        node.add("contour_radii", radii, "radii of the circles of the small-norm check, "
                                         "centred at the middle of the support hull", dims=())
    step(1)

    dense = _dense_range(ns_arr)
    if dense.size:
        rec = pred.recurrence(dense, on_failure="mark")
        node.add("n_dense", dense, _dense_description(dense))
        node.add("a_dense", rec.a, "predicted a_n^{(n)} on n_dense")
        node.add("b_dense", rec.b, "predicted b_n^{(n)} on n_dense")
        dense_parts = [rec]
        if pred.genus:
            gaps = pred.gap_zeros(dense, on_failure="mark")
            node.add("gap_zeros_dense", gaps.zeros, "predicted gap zeros on n_dense (NaN: none)")
            dense_parts.append(gaps)
        unverified += [f"on n_dense: {p.message}" for p in dense_parts if not p.verified]
    step(1)
    node.attrs["verified"] = not unverified
    node.attrs["message"] = "; ".join(unverified) or "none"
    return ModelSide(node, helpers)


def _small_norm_circles(case: Case, mu, pred, ns: Sequence[int]):
    """The small-norm check of each n (a function of the direct coefficients) and the circle radii."""
    support = np.asarray(mu.support, dtype=float).reshape(-1, 2)
    helpers = {}
    lo, hi = support[0, 0], support[-1, 1]
    centre, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    radius = case.comparisons.contour_radius * half
    if case.set.is_compact:
        # Y jumps on all of Σ and its continued fraction converges slowly near Σ:
        # the circles enclose the whole set, not only the support
        ends = np.array([case.set.intervals[0][0], case.set.intervals[-1][1]])
        radius = max(radius, 1.25 * float(np.max(np.abs(ends - centre))))
    radii = np.array([radius, 2.0 * radius])
    theta = 2 * np.pi * (np.arange(case.comparisons.contour_points) + 0.5) / case.comparisons.contour_points
    circles = centre + radii[:, None] * np.exp(1j * theta)[None, :]
    g_on = pred.g(circles)
    for n in ns:
        helpers[int(n)] = {"small_norm": _small_norm_check(pred, mu, int(n), circles, radii, g_on)}
    return helpers, radii


def small_norm_helpers(case: Case, mu, ns: Sequence[int]) -> dict[int, dict[str, Any]]:
    """The per-n helpers of :class:`ModelSide` rebuilt for ``ns`` (a run resumed from a stored model)."""
    if not case.comparisons.small_norm or not case.factor.is_one:
        return {}
    from gfunction.predict import predictor

    return _small_norm_circles(case, mu, predictor(mu, on_failure="mark"), list(ns))[0]


def _log_hankel_model(node: Group, mu, factors, ns: np.ndarray) -> list[str]:
    """``/model/log_hankel``: the expansion of log D_n at the run's n, each term, its sources."""
    import json

    from gfunction.hankel import TERM_LABELS, hankel_expansion

    try:
        expansion = hankel_expansion(mu, factors, on_failure="mark")
    except InputError as exc:   # outside the formulas: said in the notes, not a failure
        node.attrs["log_hankel_skipped"] = str(exc)
        return []
    node.add("log_hankel", expansion.log_det(ns),
             f"log D_n from its large-n expansion ({expansion.regime}; gfunction.hankel)")
    terms = node.group("log_hankel_terms")
    terms.attrs.update({"description": "each term of the expansion of log D_n at the n of /model/n "
                                       "(their sum is /model/log_hankel)",
                        "regime": expansion.regime,
                        "coefficients": json.dumps(dict(expansion.coefficients)),
                        "constant_parts": json.dumps(dict(expansion.constant_parts)),
                        "sources": json.dumps(dict(expansion.sources)),
                        "checks": dict(expansion.checks)})
    terms.add("n", ns, "values of n")
    for name, value in expansion.terms(ns).items():
        terms.add(name, value, TERM_LABELS.get(name, name))
    return [] if expansion.verified else [f"log D_n expansion: {expansion.message}"]


def _orthogonality_matrix(rc, z, n: int):
    """Y(z) from the coefficients at hand, or with more of them when its continued fraction needs it."""
    from workbench.polynomials import orthogonality_matrix

    # The deviations measured are >= 1e-6 at the sizes we run; a continued fraction
    # converged to 1e-10 is ample, and its rounding floor on these circles is ~1e-12.
    try:
        return orthogonality_matrix(rc, z, n, tolerance=1e-10)
    except NumericalFailure:
        raise _NeedMoreCoefficients from None


class _NeedMoreCoefficients(Exception):
    """Raised inside the small-norm check; the direct stage retries with more coefficients."""


def _small_norm_check(pred, mu, n: int, circles: np.ndarray, radii: np.ndarray, g_on: np.ndarray):
    """A function ``rc -> {radii, deviation}``: ``max |T M^{-1} - I|`` on each circle (gfunction.small_norm)."""
    from gfunction.small_norm import small_norm_deviation

    def check(rc) -> dict[str, np.ndarray]:
        Y = _orthogonality_matrix(rc, circles, n)
        deviation = small_norm_deviation(circles, Y.mantissa, Y.log_scale, g_on, float(mu.lagrange), n,
                                         pred.model, pred.phases([n])[0])
        return {"radii": radii, "deviation": deviation.max(axis=-1), "det_error": Y.checks["det_error"]}

    return check


def _dense_description(dense: np.ndarray) -> str:
    """What ``n_dense`` holds, in words (every integer of the range, or a spread of them)."""
    lo, hi = int(dense[0]), int(dense[-1])
    if dense.size == hi - lo + 1:
        return f"every integer n from {lo} to {hi} (the model evaluated between the computed n)"
    return (f"{dense.size} integers n spread evenly from {lo} to {hi} (of the {hi - lo + 1} in the range; "
            "the model evaluated between the computed n)")


def _dense_range(ns: np.ndarray, limit: int = 400) -> np.ndarray:
    lo, hi = int(ns.min()), int(ns.max())
    if hi - lo + 1 <= limit:
        return np.arange(lo, hi + 1)
    return np.unique(np.round(np.linspace(lo, hi, limit)).astype(np.int64))


