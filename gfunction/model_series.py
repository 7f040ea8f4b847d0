r"""Large-argument series of the Airy and Bessel model problems.

Both model problems of :mod:`gfunction.local` satisfy, uniformly in their
sectors,

    Q(ζ) = I + Σ_{k≥1} Q_k s^{-k},

where ``Q`` is the normalised model matrix of ``local._airy_Q`` /
``local._bessel_Q`` and ``s`` its large variable:

*Airy*   ``Q = A_0^{-1} ζ^{σ₃/4} Φ(ζ) e^{(2/3)ζ^{3/2}σ₃}``, ``s = ξ = (2/3) ζ^{3/2}``.
From DLMF 9.7.5 (``Ai(ζ) ~ e^{-ξ}/(2√π ζ^{1/4}) Σ (-1)^k u_k ξ^{-k}``) and
DLMF 9.7.6 (``Ai'(ζ) ~ -ζ^{1/4} e^{-ξ}/(2√π) Σ (-1)^k v_k ξ^{-k}``), applied to
``Ai(ζ)`` and to ``ω² Ai(ω²ζ)`` (``(ω²ζ)^{3/2} = -ζ^{3/2}``,
``(ω²ζ)^{1/4} = e^{-iπ/6} ζ^{1/4}`` in the first sector), the columns of
``ζ^{σ₃/4} Φ e^{ξσ₃}`` are ``(2√π)^{-1} ((-1)^k u_k, -(-1)^k v_k)`` and
``(2√π)^{-1} (i u_k, i v_k)`` times ``ξ^{-k}``, so (derived here)

    Q_k = ½ [[(-1)^k (u_k + v_k),   i (u_k - v_k)],
             [-i (-1)^k (u_k - v_k),    u_k + v_k ]].

*Bessel* ``Q = B_0^{-1} (2πζ^{1/2})^{σ₃/2} Ψ(ζ) e^{-2ζ^{1/2}σ₃}``, ``s = x = 2ζ^{1/2}``.
From DLMF 10.40.1 (``I_ν(x) ~ e^x (2πx)^{-1/2} Σ (-1)^k a_k(ν) x^{-k}``) and
DLMF 10.40.2 (``K_ν(x) ~ (π/(2x))^{1/2} e^{-x} Σ a_k(ν) x^{-k}``), with the
derivative series ``I_ν' ~ e^x (2πx)^{-1/2} Σ (-1)^k b_k x^{-k}``,
``K_ν' ~ -(π/(2x))^{1/2} e^{-x} Σ b_k x^{-k}`` (term-by-term differentiation,
``b_k = a_k + (k - 1/2) a_{k-1}``; DLMF 10.40.1–10.40.2 list the same
coefficients), the same algebra gives the same form with ``(u, v) → (a, b)``:

    Q_k = ½ [[(-1)^k (a_k + b_k),   i (a_k - b_k)],
             [-i (-1)^k (a_k - b_k),    a_k + b_k ]].

Coefficients: DLMF 9.7.2, ``u_k = (2k+1)(2k+3)···(6k-1) / (216^k k!)``,
``v_k = -(6k+1)/(6k-1) u_k``; DLMF 10.17.1,
``a_k(ν) = (4ν²-1²)(4ν²-3²)···(4ν²-(2k-1)²) / (k! 8^k)``.  ``v_k`` also follows
from differentiating the series of ``Ai``: ``v_k = u_k - (k - 5/6) u_{k-1}``
(checked in the tests).

Conjugated form.  ``A_0 Q_k A_0^{-1}`` (resp. ``B_0 Q_k B_0^{-1}``) is
``diag(u_k, v_k)`` for even ``k`` and ``[[0, u_k], [v_k, 0]]`` for odd ``k``
(Bessel: ``diag(a_k, b_k)`` and ``[[0, i a_k], [-i b_k, 0]]``), which is why the
jump terms ``Δ_k`` of :mod:`gfunction.residual` are meromorphic at the edge:
the analytic prefactor ``E`` of the local parametrix conjugates an integer
power of ``ζ``.  Pole orders of ``Δ_k`` at the edge: Airy ``⌈3k/2⌉ + (k odd)``
(2, 3, 5, 6, …), Bessel ``⌈k/2⌉ + (k odd)`` … in practice 2, 3 (Airy) and
1, 1 (Bessel) for ``k = 1, 2`` (:func:`pole_order`).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from equilibrium.errors import InputError

__all__ = ["airy_coefficients", "bessel_coefficients", "series_matrices", "pole_order"]

_MAX_ORDER = 30


def _check_order(order: int) -> int:
    if not isinstance(order, (int, np.integer)) or isinstance(order, bool) or not 0 <= order <= _MAX_ORDER:
        raise InputError(f"series order must be an integer 0..{_MAX_ORDER}; got {order!r}")
    return int(order)


def airy_coefficients(order: int) -> tuple[np.ndarray, np.ndarray]:
    """``(u_k, v_k)`` for ``k = 0 … order`` (DLMF 9.7.2)."""
    order = _check_order(order)
    u = np.ones(order + 1)
    v = np.ones(order + 1)
    for k in range(1, order + 1):
        num = np.prod(np.arange(2 * k + 1, 6 * k, 2, dtype=float))
        u[k] = num / (216.0 ** k * np.prod(np.arange(1, k + 1, dtype=float)))
        v[k] = -(6 * k + 1) / (6 * k - 1) * u[k]
    return u, v


def bessel_coefficients(order: int, nu: float) -> tuple[np.ndarray, np.ndarray]:
    """``(a_k(ν), b_k(ν))`` for ``k = 0 … order`` (DLMF 10.17.1; ``b_k`` of the derivatives)."""
    order = _check_order(order)
    mu = 4.0 * float(nu) ** 2
    a = np.ones(order + 1)
    for k in range(1, order + 1):
        a[k] = a[k - 1] * (mu - (2 * k - 1) ** 2) / (8.0 * k)
    b = a.copy()
    b[1:] = a[1:] + (np.arange(1, order + 1) - 0.5) * a[:-1]
    return a, b


def series_matrices(kind: str, order: int, alpha: float = 0.0) -> np.ndarray:
    """``Q_1 … Q_order`` of the module docstring, shape ``(order, 2, 2)`` (read-only).

    ``kind`` is ``"soft"`` (Airy, series in ``ξ = (2/3)ζ^{3/2}``) or ``"hard"``
    (Bessel of order ``alpha``, series in ``x = 2ζ^{1/2}``).
    """
    return _series_matrices(kind, _check_order(order), float(alpha) if kind == "hard" else 0.0)


@lru_cache(maxsize=64)
def _series_matrices(kind: str, order: int, alpha: float) -> np.ndarray:
    if kind == "soft":
        p, q = airy_coefficients(order)
    elif kind == "hard":
        p, q = bessel_coefficients(order, alpha)
    else:
        raise InputError(f"edge kind must be 'soft' or 'hard'; got {kind!r}")
    out = np.zeros((order, 2, 2), dtype=complex)
    for k in range(1, order + 1):
        sgn = (-1.0) ** k
        out[k - 1] = 0.5 * np.array([[sgn * (p[k] + q[k]), 1j * (p[k] - q[k])],
                                     [-1j * sgn * (p[k] - q[k]), p[k] + q[k]]])
    out.setflags(write=False)
    return out


def horner(terms: np.ndarray, x: np.ndarray) -> np.ndarray:
    """``Σ_{k≥1} terms[k-1] x^k`` for matrices ``terms`` (K, 2, 2) at points ``x`` (P,); (P, 2, 2)."""
    acc = np.zeros(x.shape + (2, 2), dtype=complex)
    for k in range(terms.shape[0], 0, -1):
        acc = (acc + terms[k - 1]) * x[..., None, None]
    return acc


def pole_order(kind: str, k: int) -> int:
    """Order of the pole of ``Δ_k`` at the edge (module docstring).

    Airy: ``ξ^{-k} ~ ζ^{-3k/2}`` and the conjugation by ``ζ^{σ₃/4}`` adds
    ``ζ^{-1/2}`` to the 12 entry for odd ``k``; Bessel: ``x^{-k} ~ ζ^{-k/2}``,
    plus ``ζ^{-1/2}`` for odd ``k``.
    """
    if kind == "soft":
        return (3 * k + (k % 2)) // 2
    return (k + (k % 2)) // 2
