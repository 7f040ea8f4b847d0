r"""The conventions of the whole project, in one place.

Every docstring that needs a convention refers here; the results files carry
:data:`CONVENTIONS` (ASCII) as their ``conventions`` attribute; DEVELOPERS.md
("Conventions (our words)") says the same for people.

Weight and measure
------------------
* Weight ``w_n(x) = exp(-n V(x)) h(x)`` on a closed set Σ
  (:class:`equilibrium.weight.Weight`); a fixed weight is ``n = 1`` with growing degree.
* Energy ``I_V(μ) = ∬ log 1/|x-y| dμ(x) dμ(y) + ∫ V dμ``; ``U^μ(x) = ∫ log 1/|x-y| dμ(y)``.
  Euler–Lagrange: ``2U^μ + V = ℓ`` on the support S and ``≥ ℓ`` on Σ \ S; the effective
  potential is ``2U^μ + V - ℓ``.  ``I_V = (ℓ + ∫ V dμ)/2``; for V = 0, ``ℓ = -2 log cap(Σ)``.
* Bands ``[a_j, b_j]``, ``j = 1..k``, ascending; ``Ω_j = μ([a_{j+1}, b_k])``, the mass
  to the right of gap j.  ψ = dμ/dx; ``F(x) = μ((-∞, x])``.

Functions of the bands
----------------------
* ``R(z) = ∏_j (z - a_j)(z - b_j)``; ``R^{1/2}`` is the product of principal roots:
  ``~ z^k`` at infinity, cuts on the bands, at real x the value from above (either
  sign of a zero imaginary part).  Definition and sign table: :mod:`equilibrium.radical`.
* ``g(z) = ∫ log(z - s) dμ(s)``, principal logarithms: ``g = log z + O(1/z)``;
  ``g_+ + g_- - V + ℓ = 0`` on S; ``g_+ - g_- = 2πi μ([x, b_k])`` on the real line
  (``2πi Ω_j`` in gap j).  ``G = g' = ∫ dμ(s)/(z - s)``.

Orthogonal polynomials
----------------------
* Orthonormal ``p_k`` with positive leading coefficient; ``π_k`` monic.
  ``x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1}``; lists start at k = 0 with ``a[0] = 0``.

Curve, theta functions, model problem
-------------------------------------
* Homology basis of the curve ``y² = R(z)`` (genus ``g = k - 1``): ``A_j`` a
  counter-clockwise loop on sheet 1 around band j+1; ``B_j`` from band 1 to band j+1
  through the upper half plane on sheet 1, back on sheet 2; normalised differentials
  ``∮_{A_i} ω_j = δ_ij``, ``τ_ij = ∮_{B_i} ω_j`` (picture and formulas:
  :mod:`gfunction.curve`).
* Riemann theta ``θ(u|τ) = Σ_{m ∈ Z^g} exp(πi mᵀτm + 2πi mᵀu)``.
* The outer parametrix (:mod:`gfunction.outer`) works in the *dual* basis: the
  symplectic swap ``A' = B, B' = -A`` (A-cycles through the gaps, B-cycles around the
  bands, as in Deift, Kriecherbauer, McLaughlin, Venakides, Zhou 1999, §4) gives
  ``ω' = τ^{-1} ω``, ``τ' = -τ^{-1}`` and Abel map ``u' = τ^{-1} u``; its theta
  functions take ``τ'``.

Files
-----
* Every HDF5 dataset carries a ``description`` attribute; the root carries
  :data:`CONVENTIONS` and the provenance (README, "The HDF5 file").
"""

from __future__ import annotations

__all__ = ["CONVENTIONS"]

#: the conventions as one ASCII text: the ``conventions`` attribute of every results file
CONVENTIONS = (
    "weight w_n(x) = exp(-n V(x)) h(x); energy I_V = iint log 1/|x-y| dmu dmu + int V dmu; "
    "Euler-Lagrange 2 U^mu + V = ell on S, >= ell on Sigma minus S; I_V = (ell + int V dmu)/2; "
    "bands [a_j, b_j] ascending, Omega_j = mu([a_{j+1}, b_k]); psi = dmu/dx, F(x) = mu((-inf, x]); "
    "R^(1/2) = prod (z - e)^(1/2), principal roots, ~ z^k at infinity, values from above on the real line; "
    "g(z) = int log(z - s) dmu(s), principal branches; "
    "orthonormal p_k, x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1}, a[0] = 0; "
    "theta(u|tau) = sum exp(pi i m^T tau m + 2 pi i m^T u); A_j around band j+1, "
    "B_j from band 1 to band j+1 (the outer parametrix uses the swap tau' = -tau^(-1)); "
    "details: module equilibrium.conventions"
)
