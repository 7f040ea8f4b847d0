"""Error-free transformations and the compensated Horner scheme, vectorised in numpy.

Why
---
The direct engine needs ``log w_n(x) = -n V(x) + …`` at every node.  At ``n = 10⁵`` the
value is of size ``~10⁵`` and its double rounding alone is ``~10⁻¹¹`` absolute, a
relative error of every weight ``λ_i`` far above the ``10⁻¹²`` asked of the
recurrence coefficients.  For a polynomial field the value is computed here as an
unevaluated sum ``hi + lo`` of two doubles (double-double) accurate to about
``eps²`` relative, so that the weight is exact to rounding after any shift.

Transformations (exact in binary floating point with round-to-nearest, barring
overflow; Dekker, Numer. Math. 18 (1971) 224–242; Knuth, TAOCP vol. 2, §4.2.2)
-----------------------------------------------------------------------------
* ``two_sum(a, b) = (s, e)`` with ``s = fl(a + b)`` and ``a + b = s + e`` exactly.
* ``split(a) = (h, l)``: ``a = h + l`` with ``h``, ``l`` of at most 26 significant bits
  (Veltkamp splitting with the factor ``2^27 + 1``; valid for ``|a| < 2^996``).
* ``two_prod(a, b) = (p, e)`` with ``p = fl(a b)`` and ``a b = p + e`` exactly (Dekker).

Compensated Horner (Graillat, Langlois & Louvet, "Compensated Horner scheme",
Research Report RR2005-04, Université de Perpignan 2005; also Graillat, Langlois &
Louvet, Japan J. Indust. Appl. Math. 26 (2009) 191–214)
---------------------------------------------------------------------------------
Horner's recursion ``s_i = s_{i+1} x + c_i`` with each product and sum replaced by its
error-free transformation; the rounding errors ``π_i + σ_i`` are themselves run
through Horner's recursion (in plain double), giving ``p(x) = s_0 + e_0`` with

    |s_0 + e_0 - p(x)| ≤ γ_{2d}² p̃(|x|),   γ_k = k u / (1 - k u),  u = 2^-53,

``p̃(|x|) = Σ |c_j| |x|^j`` (their Thm 3.1 before the final rounding): the result is as
accurate as Horner in twice the working precision.  Rounded once (``s_0 + e_0``) it is
faithful (within one ulp) whenever the condition number ``p̃(|x|)/|p(x)|`` is below
``(1 - u) u / ((2 + u) γ_{2d}²)`` (their Thm 3.2; ``~10¹⁴`` for degree 4).
"""

from __future__ import annotations

import numpy as np

__all__ = ["two_sum", "split", "two_prod", "compensated_horner", "scaled_polynomial"]

#: Veltkamp's splitting factor 2^27 + 1 for binary64
_SPLITTER = 134217729.0


def two_sum(a, b):
    """``(s, e)``: ``s = fl(a + b)``, ``a + b = s + e`` exactly (Knuth's TwoSum, six flops)."""
    s = a + b
    bb = s - a
    e = (a - (s - bb)) + (b - bb)
    return s, e


def split(a):
    """``(h, l)`` with ``a = h + l`` exactly, each of at most 26 bits (Veltkamp; ``|a| < 2^996``)."""
    c = _SPLITTER * a
    h = c - (c - a)
    return h, a - h


def two_prod(a, b):
    """``(p, e)``: ``p = fl(a b)``, ``a b = p + e`` exactly (Dekker's product, 17 flops)."""
    p = a * b
    ah, al = split(a)
    bh, bl = split(b)
    e = ((ah * bh - p) + ah * bl + al * bh) + al * bl
    return p, e


def compensated_horner(coefficients, x):
    """``(s, e)`` with ``s + e = Σ_j c_j x^j`` to about twice the working precision.

    Parameters
    ----------
    coefficients : ascending ``c_0, c_1, …, c_d`` (doubles, taken as exact).
    x : real array (or scalar).

    Returns
    -------
    (s, e) : arrays; ``s`` is the plain Horner value with the compensation not yet
        added, ``e`` the compensation (module docstring: ``|s + e - p(x)| ≤ γ_{2d}² p̃(|x|)``).
    """
    c = np.asarray(coefficients, dtype=float).ravel()
    x = np.asarray(x, dtype=float)
    s = np.full(x.shape, c[-1])
    e = np.zeros(x.shape)
    for coefficient in c[-2::-1]:
        p, pi = two_prod(s, x)
        s, sigma = two_sum(p, coefficient)
        e = e * x + (pi + sigma)
    return s, e


def scaled_polynomial(scale: float, coefficients, x, shift: float = 0.0):
    """``(hi, lo)`` with ``hi + lo = scale · p(x) - shift`` to about ``eps²`` relative, ``hi = fl(hi + lo)``.

    ``p`` by :func:`compensated_horner`; the product by ``scale`` by :func:`two_prod`
    (``scale · (s + e) = P + π + scale·e``, the last term's rounding is of order
    ``eps²``), then the shift by :func:`two_sum`, and the pair renormalised so that
    ``hi`` is the double nearest to the value and ``lo`` the remainder (``|lo| ≤ ulp(hi)/2``,
    up to the ``eps²`` error of the value).
    """
    s, e = compensated_horner(coefficients, x)
    p, pi = two_prod(float(scale), s)
    low = pi + float(scale) * e
    total, sigma = two_sum(p, -float(shift))
    return two_sum(total, sigma + low)
