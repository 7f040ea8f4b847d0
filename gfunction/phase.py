r"""The phases ``n Ω`` of the outer parametrix, reduced without losing digits at large n.

With several bands every prediction depends on the degree through ``w_j = n Ω_j (mod 1)`` (and
the local parametrices through ``e^{±iπ n Ω(e)}``, i.e. ``n Ω (mod 2)``).  The product of two
doubles is rounded to ``2^-53 |n Ω|``: 1e-7 at ``n = 10⁹``, far above what the residual problem
resolves.  When Ω is known beyond double precision as an unevaluated sum ``Ω = Ω_hi + Ω_lo``
(:func:`equilibrium.refinement.with_refined_frequencies` sets ``omega_low``), the product is formed
exactly and reduced exactly:

    n Ω_hi = p + e  exactly (Dekker's product, p = fl(n Ω_hi)),
    n Ω mod m = [fmod(p, m) + (e + n Ω_lo)] mod m,

``fmod`` of doubles being exact (IEEE 754 remainder, common practice), so the only roundings left
are those of the final sum, ~2^-53.  Dekker, *A floating-point technique for extending the
available precision*, Numer. Math. 18 (1971), for the splitting and the exact product.
"""

from __future__ import annotations

import numpy as np

from equilibrium.compensated import two_prod

__all__ = ["exact_product", "reduced_phase"]


def exact_product(a, b) -> tuple[np.ndarray, np.ndarray]:
    """``(p, e)`` with ``p = fl(a b)`` and ``a b = p + e`` exactly (Dekker 1971), elementwise.

    :func:`equilibrium.compensated.two_prod` (the one home of the error-free transformations)
    on the broadcast arrays.  Valid while ``|a b|`` stays far from overflow and underflow
    (here: degrees up to 10¹⁵ times frequencies in [0, 1]).

    Examples
    --------
    >>> p, e = exact_product(np.array([10.0 ** 9]), np.array([0.1]))
    >>> float(p[0]), float(e[0]) != 0.0
    (100000000.0, True)
    """
    a, b = np.broadcast_arrays(np.asarray(a, dtype=float), np.asarray(b, dtype=float))
    return two_prod(a, b)


def reduced_phase(n, omega, omega_low=None, modulus: float = 1.0) -> np.ndarray:
    """``n Ω (mod modulus)`` in ``[0, modulus)``, broadcasting ``n`` against ``omega``.

    Parameters
    ----------
    n : degrees (integers as floats, |n| < 2^53).
    omega : Ω (double, or the leading part of Ω = omega + omega_low).
    omega_low : the trailing part of Ω, or None: then Ω is the double ``omega`` and only the product
        is made exact (the result is ``n fl(Ω)`` reduced, correct to ~2^-53).
    modulus : 1 for the phases of the theta functions, 2 for ``e^{iπ n Ω}``.
    """
    n = np.asarray(n, dtype=float)
    omega = np.asarray(omega, dtype=float)
    p, e = exact_product(n, omega)
    tail = e if omega_low is None else e + n * np.asarray(omega_low, dtype=float)
    w = np.fmod(p, modulus) + tail
    return w - modulus * np.floor(w / modulus)
