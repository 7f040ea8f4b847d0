"""Predictions beyond leading order in a run: ``[model] order`` and ``method``.

A case with ``[model] order = K`` stores, besides the leading-order predictions of
``/model``, ``a_order{k}``, ``b_order{k}`` (``a_n`` through ``c_k/n^k``, k = 1 … K) and the
coefficients ``corrections_a``, ``corrections_b`` (``c_1 … c_K`` per n;
:mod:`gfunction.series`); with ``method = "residual"`` also ``a_residual``, ``b_residual`` and
``residual_error_estimate`` (:mod:`gfunction.residual_problem`).  ``/comparison`` then holds
``err_a`` (order 0), ``err_a_order1`` …, ``err_a_residual`` and the same for ``b``, each with a
fitted rate in ``/comparison/rates``; the errors figure draws them side by side.

The zeros and values of ``p_n`` go the same way (:func:`model_zero_orders`): with order K
``/model`` also holds ``edge_zeros_order{k}`` and ``edge_zeros_left_order{k}`` (the Airy or
Bessel form with ``R`` through ``R^{(k)}``, :func:`gfunction.edge_zeros.edge_zeros`),
``gap_zeros_order{k}`` and ``values_shape_order{k}`` (:mod:`gfunction.polynomial_form`), all
from one residual expansion per order and n; ``/comparison`` holds
``err_zeros_edge_right_order{k}``, ``err_zeros_edge_left_order{k}``, ``err_zeros_edge_order{k}``,
``err_zeros_gap_order{k}`` and ``err_values_order{k}`` with their rates.  Expected slopes
(derived in those modules): edge zeros ``-(k+2)`` at soft edges, ``-(k+4)`` at hard edges
(absolute; relative ``-(k+2)``), gap zeros ``-(k+1)``, bulk values ``-(k+1)``.

To add a corrected quantity q: store ``q_order{k}`` in :func:`model_orders`, compare it in
:func:`order_errors` as ``err_q_order{k}``, and give it a label in ``workbench.figures``.
"""

from __future__ import annotations

import numpy as np

from equilibrium.errors import InputError
from workbench.compare import absolute_errors

__all__ = ["model_orders", "model_zero_orders", "order_errors", "order_error_keys", "order_suffixes",
           "check_model_request", "measure_for_orders"]

#: the coefficient quantities with orders
_QUANTITIES = ("a", "b")
#: the zero and value errors with orders (``err_<name>_order{k}``; ``workbench.pipeline``)
_ZERO_QUANTITIES = ("values", "zeros_edge", "zeros_edge_right", "zeros_edge_left", "zeros_gap")


def measure_for_orders(mu, order: int, method: str) -> tuple[object, str]:
    """The measure the predictions start from: with ``order ≥ 1`` or the residual method and
    several bands, Ω_j re-solved in extended precision (:func:`equilibrium.refinement.
    with_refined_frequencies`: the phases nΩ_j multiply the double Ω's error of a few 1e-16 by n,
    ~1e-12 at n = 3000, above what those predictions resolve).

    Returns ``(measure, note)``: the note is empty when Ω was refined or nothing needed it, else it
    says why the double Ω is kept (a field that is not a polynomial, a singular measure, no
    convergence, an estimated cost above the time budget: :func:`workbench.limits.
    refinement_over_budget`) -- the residual method's phase error then carries that Ω's error.
    """
    if (order == 0 and method == "series") or len(mu.support) < 2:
        return mu, ""
    from equilibrium.errors import NumericalFailure
    from equilibrium.refinement import with_refined_frequencies
    from workbench.limits import refinement_over_budget

    kept = f"the double Omega is kept (its error {mu.checks.get('mass_error', 0.0):.1g} grows like n in the phases)"
    if mu.field.degree is not None:
        over = refinement_over_budget(len(mu.support), mu.field.degree)
        if over:
            return mu, f"{over}; {kept}"
    try:
        return with_refined_frequencies(mu), ""
    except (InputError, NumericalFailure) as exc:
        return mu, f"{exc}; {kept}"


def check_model_request(case, mu) -> None:
    """Refuse, before anything is written, orders ≥ 1 or the residual method with a singular
    point of the factor inside a band (no local parametrix there;
    :func:`gfunction.szego.interior_singular_points`), whether the factor is given as
    ``kind = "fisher_hartwig"`` or as an expression such as ``abs(x-0.2)^0.8``."""
    spec = case.model
    if (spec.order == 0 and spec.method == "series") or case.factor.is_one:
        return
    from gfunction.szego import interior_singular_points

    factors = case.factor.build(case.build_set(), case.field.parameters)
    inside = interior_singular_points(factors, mu.support)
    if inside:
        points = ", ".join(f"c = {c:g}" for c in inside)
        which = f"point {points} lies" if len(inside) == 1 else f"points {points} lie"
        raise InputError(f"{case.source}: [model] order = {spec.order}, method = {spec.method!r} need a local "
                         f"parametrix at every singular point of the factor; the Fisher–Hartwig {which} inside a band and has none (the confluent hypergeometric parametrix "
                         "is not implemented): use order = 0 with method = \"series\"")


def model_orders(case, pred, ns: np.ndarray, node) -> list[str]:
    """Add the predictions of orders 1 … K and of the residual method to the ``/model`` group.

    Returns the messages of the parts that are not verified.
    """
    from gfunction.residual_problem import residual_solver
    from gfunction.series import corrected_recurrence

    spec = case.model
    messages = []
    node.attrs["order"] = int(spec.order)
    node.attrs["method"] = spec.method
    if spec.order >= 1:
        rec = corrected_recurrence(pred, ns, spec.order, on_failure="mark")
        for k in range(1, spec.order + 1):
            node.add(f"a_order{k}", rec.a.at_order(k), f"a_n^{{(n)}} through c_{k}/n^{k} (gfunction.series)")
            node.add(f"b_order{k}", rec.b.at_order(k), f"b_n^{{(n)}} through c_{k}/n^{k} (gfunction.series)")
        node.add("corrections_a", rec.a.corrections.T.copy(),
                 "c_1 ... c_K of a_n = c_0 + c_1/n + ... per n (row i: n[i]; they depend on n through n Omega)")
        node.add("corrections_b", rec.b.corrections.T.copy(), "c_1 ... c_K of b_n per n")
        node.attrs["series_checks"] = dict(rec.checks)
        if not rec.verified:
            messages.append(rec.message)
    if spec.method == "residual":
        sol = residual_solver(pred).solve(ns, on_failure="mark")
        node.add("a_residual", sol.a, "a_n^{(n)} from the residual problem solved by spectral collocation")
        node.add("b_residual", sol.b, "b_n^{(n)} from the residual problem solved by spectral collocation")
        node.add("residual_error_estimate", sol.error_estimate,
                 "max(two resolutions, e^{-nc} of the neglected lens and gap jumps) per n")
        node.attrs["residual_checks"] = dict(sol.checks)
        node.attrs["residual_critical_degree"] = float(sol.critical_degree)
        if not sol.verified:
            messages.append(sol.message)
    return messages


def model_zero_orders(case, pred, ns: np.ndarray, node, edges, points, count: int) -> list[str]:
    """Edge zeros, gap zeros and bulk values at orders 1 … K into ``/model`` (module docstring).

    ``edges`` -- ``(suffix, edge number)`` of the outer edges whose zeros the run predicts at
    order 0 (``""`` right, ``"_left"`` left); ``points`` -- the bulk points of the values (None:
    values not predicted); ``count`` -- zeros per edge.  One residual expansion per order and n serves all three.  Returns
    the messages of the parts that are not verified.
    """
    from gfunction.edge_zeros import edge_zeros
    from gfunction.polynomial_form import corrections, gap_zeros, value_form
    from gfunction.residual import jump_expansion

    top = int(case.model.order)
    if top < 1:
        return []
    messages = []
    jump = jump_expansion(pred, top)
    for k in range(1, top + 1):
        cor = corrections(pred, ns, k, jump=jump)
        if not cor.verified:
            messages.append(f"order {k} residual expansion: {cor.message}")
        for suffix, index in edges:
            found = [edge_zeros(pred, index, int(n), count, order=k, corrections=cor, on_failure="mark")
                     for n in ns]
            messages += sorted({z.message for z in found if not z.verified})
            node.add(f"edge_zeros{suffix}_order{k}", np.array([z.zeros for z in found]),
                     f"zeros next to the {'left' if suffix else 'right'} edge from the {found[0].form} with R "
                     f"through R^({k})/n^{k} (gfunction.edge_zeros), counted from the edge inward")
        if pred.genus:
            gaps = gap_zeros(pred, ns, k, corrections=cor, on_failure="mark")
            if not gaps.verified:
                messages.append(gaps.message)
            node.add(f"gap_zeros_order{k}", np.asarray(gaps.zeros, dtype=float),
                     f"zero of p_n in gap j from the outer form with R through R^({k})/n^{k} "
                     "(gfunction.polynomial_form; NaN: none)")
        if points is not None:
            node.add(f"values_shape_order{k}", np.array([value_form(pred, points, int(n), k, corrections=cor)
                                                         for n in ns]),
                     f"predicted p_n w^{{1/2}} / (gamma_n e^{{-n ell/2}}) at value_x with R through R^({k})/n^{k} "
                     "(gfunction.polynomial_form.value_form)", dims=("n", "value_x"))
    return messages


def order_suffixes(model, stem: str) -> list[str]:
    """The suffixes ``_order1``, ``_order2`` … of the datasets ``<stem>_order{k}`` in ``model``."""
    return [f"_order{k}" for k in range(1, 10) if model.has(f"{stem}_order{k}")]


def _variants(model) -> list[str]:
    """Suffixes of the stored predictions beyond leading order, in order: ``_order1`` …, ``_residual``."""
    out = [f"_order{k}" for k in range(1, 10) if model.has(f"a_order{k}")]
    if model.has("a_residual"):
        out.append("_residual")
    return out


def order_errors(node, model, direct: dict) -> None:
    """``err_a_order{k}``, ``err_b_order{k}``, ``err_a_residual``, … into ``/comparison``.

    ``direct`` maps ``"a"``, ``"b"`` to the direct ``a_n^{(n)}``, ``b_n^{(n)}`` at the run's n.
    """
    for suffix in _variants(model):
        for q in _QUANTITIES:
            predicted = np.asarray(model.get(f"{q}{suffix}"), dtype=float)
            what = ("the residual problem" if suffix == "_residual"
                    else f"the series through order {suffix[len('_order'):]}")
            node.add(f"{q}_model{suffix}", predicted, f"{q}_n^{{(n)}} predicted by {what}")
            node.add(f"err_{q}{suffix}", absolute_errors(direct[q], predicted), f"|{q}_n direct - {what}|")


def order_error_keys(node) -> list[str]:
    """The error datasets of :func:`order_errors` present in ``node`` (for rates and checks)."""
    keys = [f"err_{q}{suffix}" for suffix in ([f"_order{k}" for k in range(1, 10)] + ["_residual"])
            for q in _QUANTITIES if node.has(f"err_{q}{suffix}")]
    return keys + [f"err_{q}_order{k}" for k in range(1, 10) for q in _ZERO_QUANTITIES
                   if node.has(f"err_{q}_order{k}")]
