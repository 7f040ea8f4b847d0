r"""Predictions at order K or from the residual problem: the front door of ``workbench predict``.

``order`` and ``method`` (CONVENTIONS "Beyond leading order"):

* ``method = "series"``, ``order = 0`` -- today's leading order (``Predictor.predict``);
* ``method = "series"``, ``order = K ≥ 1`` -- ``a_n``, ``b_n`` through ``c_K/n^K``
  (:func:`gfunction.series.corrected_recurrence`, with their ``c_k``), the gap zeros of the
  corrected outer form at order K (:func:`gfunction.polynomial_form.gap_zeros`);
* ``method = "residual"`` -- ``a_n``, ``b_n`` from the residual problem solved numerically
  (:mod:`gfunction.residual_problem`, "all orders", with an error estimate); the gap zeros are
  those of ``order`` (its series).

The zero counts per band are integers and need no correction: the argument principle of
``Predictor.band_counts`` is exact for large n (it uses the gap zeros only to decide on which
side of its base point a gap zero lies).

Adding a corrected quantity to the workbench: give it a function ``quantity(predictor, degrees,
order)`` returning its ``c_0 … c_K`` (a :class:`gfunction.series.CorrectionSeries`) or its values
at order K, and call it here for ``order ≥ 1``; ``workbench.pipeline`` asks for every requested
order (``[model] order``) and stores ``err_<quantity>`` per order.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import SimpleNamespace

import numpy as np

from equilibrium.errors import InputError
from equilibrium.verification import failure_policy, settle

__all__ = ["CorrectedPrediction", "corrected_prediction", "METHODS", "ORDERS"]

#: the methods and the orders offered by the workbench (orders beyond 2 are not tested)
METHODS = ("series", "residual")
ORDERS = (0, 1, 2)


@dataclass(frozen=True)
class CorrectedPrediction:
    """``a_n``, ``b_n``, gap zeros and band counts at ``order`` by ``method`` (degree = scaling n).

    ``corrections`` -- ``{"a": c, "b": c}`` with ``c[k-1, i] = c_k`` of degree ``i`` (series,
    order ≥ 1; None otherwise); ``error_estimate`` -- per degree (residual method; None otherwise).
    """

    degrees: np.ndarray
    order: int
    method: str
    a: np.ndarray
    b: np.ndarray
    corrections: dict | None
    error_estimate: np.ndarray | None
    gap_zeros: np.ndarray
    band_counts: np.ndarray
    verified: bool
    checks: dict = field(default_factory=dict)
    message: str = ""


#: degrees per block of the predictions beyond leading order in genus >= 1 (bounds the memory)
_BLOCK = 2048


def _joined(parts) -> SimpleNamespace:
    """The verdict of several blocks of one prediction: all verified, each check its worst (largest)
    value, the distinct messages."""
    checks: dict = {}
    for p in parts:
        for k, v in p.checks.items():
            checks[k] = max(float(v), checks.get(k, float(v)))
    messages = list(dict.fromkeys(p.message for p in parts if p.message))
    return SimpleNamespace(verified=all(bool(p.verified) for p in parts), checks=checks, message="; ".join(messages))


def _check(order, method) -> tuple[int, str]:
    if isinstance(order, bool) or not isinstance(order, (int, np.integer)) or int(order) not in ORDERS:
        raise InputError(f"order must be one of {', '.join(map(str, ORDERS))}; got {order!r}")
    if method not in METHODS:
        raise InputError(f"method must be one of {', '.join(METHODS)}; got {method!r}")
    return int(order), method


def corrected_prediction(predictor, degrees, *, order: int = 0, method: str = "series",
                         on_failure: str = "raise", residual=None) -> CorrectedPrediction:
    """Predictions for ``degrees`` at ``order`` by ``method`` (module docstring).

    ``residual`` -- a prepared :class:`gfunction.residual_problem.ResidualSolver` to reuse.
    """
    from .polynomial_form import corrections as polynomial_corrections
    from .polynomial_form import gap_zeros as corrected_gap_zeros
    from .residual_problem import residual_solver
    from .series import corrected_recurrence

    failure_policy(on_failure)
    order, method = _check(order, method)
    degrees = np.atleast_1d(np.asarray(degrees))
    if degrees.ndim != 1 or degrees.size == 0 or np.any(degrees < 1) or np.any(degrees != np.round(degrees)):
        raise InputError(f"degrees must be positive integers; got {degrees!r}")
    degrees = degrees.astype(np.int64)
    parts = []
    if order == 0:
        base = predictor.predict(degrees, on_failure="mark")
        a, b = np.asarray(base.a, float), np.asarray(base.b, float)
        gz = np.asarray(base.gap_zeros, dtype=float).reshape(degrees.size, predictor.genus)
        counts = np.asarray(base.band_counts)
        parts.append(("", base))
        corrections = None
    else:
        if predictor.genus:
            # one set of residual expansions serves a_n, b_n and the gap zeros; blocks of degrees
            # bound the memory (the expansions of a block: ~50 kB per degree at order 2)
            from .residual import jump_expansion
            jump = jump_expansion(predictor, order)
            got = {"rec": [], "gaps": [], "cnt": []}
            for start in range(0, degrees.size, _BLOCK):
                block = degrees[start:start + _BLOCK]
                cor = polynomial_corrections(predictor, block, order, jump=jump)
                got["rec"].append(corrected_recurrence(predictor, block, order, on_failure="mark", corrections=cor))
                got["gaps"].append(corrected_gap_zeros(predictor, block, order, corrections=cor, on_failure="mark"))
                got["cnt"].append(predictor.band_counts(block, None, got["gaps"][-1], on_failure="mark"))
            a = np.concatenate([r.a.at_order(order) for r in got["rec"]])
            b = np.concatenate([r.b.at_order(order) for r in got["rec"]])
            corrections = {q: np.concatenate([getattr(r, q).corrections for r in got["rec"]], axis=1)
                           for q in ("a", "b")}
            gz = np.concatenate([np.asarray(g.zeros, dtype=float) for g in got["gaps"]])
            parts.append(("recurrence_", _joined(got["rec"])))
            parts.append(("gaps_", _joined(got["gaps"])))
            cnt = SimpleNamespace(counts=np.concatenate([np.asarray(c.counts) for c in got["cnt"]]),
                                  **vars(_joined(got["cnt"])))
        else:
            rec = corrected_recurrence(predictor, degrees, order, on_failure="mark")
            a, b = rec.a.at_order(order), rec.b.at_order(order)
            corrections = {"a": rec.a.corrections.copy(), "b": rec.b.corrections.copy()}
            parts.append(("recurrence_", rec))
            gz = np.zeros((degrees.size, 0))
            cnt = predictor.band_counts(degrees, on_failure="mark")
        counts = np.asarray(cnt.counts)
        parts.append(("counts_", cnt))
    error = None
    if method == "residual":
        solver = residual if residual is not None else residual_solver(predictor)
        sol = solver.solve(degrees, on_failure="mark")
        a, b, error = sol.a, sol.b, sol.error_estimate
        corrections = None
        parts.append(("residual_", sol))
    if order and not getattr(predictor, "verified", True):
        # order 0 carries the predictor's verdict already (Predictor.predict)
        parts.append(("", SimpleNamespace(verified=False, checks={},
                                          message=f"predictions rest on: {predictor.message}")))
    checks = {}
    for prefix, part in parts:
        checks.update({f"{prefix}{k}": float(v) for k, v in part.checks.items()})
    message = "; ".join(p.message for _, p in parts if p.message)
    result = CorrectedPrediction(degrees, order, method, np.asarray(a, float), np.asarray(b, float), corrections,
                                 error, gz, counts, all(bool(p.verified) for _, p in parts), checks, message)
    return settle(result, on_failure)
