r"""The Szegő function of a weight factor ``h`` on a multi-band support.

Problem
-------
Bands ``S = [a_1,b_1] ∪ … ∪ [a_k,b_k]``, genus ``g = k-1``, ``h > 0`` on ``S``.
Find ``D`` analytic and non-zero off ``[a_1, b_k]`` with

* ``D_+ D_- = h`` on the bands,
* ``D_+ / D_- = e^{2πi c_j}`` (a constant) on gap ``j``,
* ``D(z) → D_∞ ∈ (0, ∞)`` as ``z → ∞``.

For one band the constants are absent (Kuijlaars, McLaughlin, Van Assche,
Vanlessen, Adv. Math. 188 (2004) 337–398, §5).  For several bands a
bounded solution without gap jumps does not exist in general; the ``g`` real
constants ``c_j`` are what makes the problem solvable (Deift, Kriecherbauer,
McLaughlin, Venakides, Zhou, Comm. Pure Appl. Math. 52 (1999) 1335–1425, §4,
where the same structure appears for ``log D`` replaced by ``g``).  They enter
the outer parametrix as a shift of the theta phases: with
``N = D_∞^{σ₃} M(z; w̃) D(z)^{-σ₃}`` the band jump ``[[0, h], [-1/h, 0]]`` of
``N`` becomes ``[[0, 1], [-1, 0]]`` for ``M``, and the gap jump
``e^{-2πi n Ω_j σ₃}`` becomes ``D_-^{-σ₃} e^{-2πi nΩ_jσ₃} D_+^{σ₃} =
e^{-2πi (nΩ_j - c_j) σ₃}``, so

    w̃_j = n Ω_j + m Ω̂_j - c_j      (:attr:`SzegoFunction.phase_shift` = c).

Since ``(N_1)_{12} (N_1)_{21} = (M_1)_{12} (M_1)_{21}`` and the first
coefficient ``d_1`` of ``D/D_∞ = 1 + d_1/z + …`` cancels in
``(N_2)_{12}/(N_1)_{12} - (N_1)_{22}``, the leading-order recurrence
coefficients depend on ``h`` only through this phase shift (derivation in
this docstring; for one band they do not depend on ``h`` at all).

Construction (derived here)
---------------------------
Split ``h = h_s ∏_i |x - c_i|^{p_i}`` where the ``c_i`` are the singular points
of ``h`` lying on ``S`` (Jacobi-type endpoint factors at hard or soft edges,
Fisher–Hartwig roots ``|x - c|^{2γ}`` inside a band) and ``h_s`` is analytic
and positive near ``S``.  ``D = D_sing · D_s``.

*Singular part.*  ``(z - c)^{p/2}`` (principal branch) already satisfies
``D_+ D_- = |x - c|^p`` on all of ``S`` (on either side of ``c``) and has the
constant ratio ``e^{iπp}`` left of ``c``; what is wrong is the jump on
``(-∞, a_1)`` and the growth ``z^{P/2}``, ``P = Σ p_i``.  Both are removed by
the g-function ``ĝ`` of the harmonic measure ``ω`` of ``S`` (the equilibrium
measure of ``V = 0`` on ``S``; ``ĝ_+ + ĝ_- = -ℓ̂`` on ``S``, ``ĝ_+ - ĝ_- = 2πi``
left of ``a_1``, ``2πi Ω̂_j`` on gap ``j``, ``ĝ = log z + O(1/z)``):

    D_sing(z) = ∏_i (z - c_i)^{p_i/2} · exp(-(P/2)(ĝ(z) + ℓ̂/2)),
    c_j^sing  = Σ_{c_i right of gap j} p_i/2 - (P/2) Ω̂_j,    D_∞^sing = cap(S)^{P/2}.

For ``S = [-1, 1]``: ``ĝ = log(φ/2)``, ``ℓ̂ = 2 log 2``, ``φ = z + (z²-1)^{1/2}``, so
``D = (z-1)^{α/2} (z+1)^{β/2} / φ^{(α+β)/2}`` for ``h = (1-x)^α (1+x)^β`` --
the closed form of KMVV 2004, §5.

*Smooth part.*  ``log D_s = R^{1/2}(z) F(z)`` with ``R^{1/2} ~ z^k`` (cuts on
the bands) and

    F(z) = (1/2πi) ∫_S log h_s(s) ds / (R^{1/2}_+(s)(s - z))
           + Σ_j c_j^s ∫_{gap j} ds / (R^{1/2}(s)(s - z)).

``R^{1/2}_+ = -R^{1/2}_-`` on the bands gives ``log D_+ + log D_- = log h_s``;
``R^{1/2}`` is continuous on the gaps, so ``log D_+ - log D_- = 2πi c_j^s``
there.  ``F = -(1/2πi) Σ_m μ_m z^{-m-1}``; boundedness of ``log D_s`` at
infinity needs ``μ_0 = … = μ_{g-1} = 0``: ``g`` real linear equations for
the ``g`` real constants ``c_j^s`` (the band moments are imaginary, the gap
moments real).  Then ``log D_∞^s = -μ_{k-1}/(2πi)``.

Each band (and each gap) integral is ``∫ G(s) / (((s-α)(β-s))^{1/2} (s - z)) ds``
with ``G`` analytic on ``[α, β]``; ``G`` is expanded in a Chebyshev series
``Σ c_m T_m(t)``, ``t = (2s - α - β)/(β - α)``, and each term has the closed form

    ∫_{-1}^{1} T_m(t) dt / ((1-t²)^{1/2} (t - ζ)) = -π (ζ - (ζ²-1)^{1/2})^m / (ζ²-1)^{1/2}

(Mason and Handscomb, Chebyshev Polynomials, 2003, §5.1 and §9 -- equation
from memory, verified in tests against quadrature), valid up to the
interval, so boundary values are as accurate as the series.  The moments use
the same samples (Gauss–Chebyshev nodes).

Interface of the factor
-----------------------
Factors follow the protocol :class:`equilibrium.weight.Factor`:
``singular_points`` (pairs ``(c, p)``, near ``c`` the factor is
``|x - c|^p`` times a smooth positive function) and ``log_value(x, omit)``
(``log`` of the factor at real ``x`` without the ``|x - c|^p`` of the points in
``omit``) are what is used here; ``description`` and ``domain()`` complete the
protocol (any object with the four members works).

Not implemented: the local parametrix at a Fisher–Hartwig point inside a
band (confluent hypergeometric functions); predictions there use the outer
parametrix, whose ``D`` behaves like ``(z - c)^{γ}``.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Sequence

import numpy as np

from equilibrium.chebyshev import dct2
from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, float_checks, settle
from equilibrium.radical import sqrt_R
from equilibrium.weight import Factor

__all__ = ["SzegoFunction", "szego_function", "chebyshev_cauchy", "interior_singular_points"]

_LIFT = 1e-300
_MAX_NODES = 4096
_ON_SUPPORT = 1e-12   # a singular point within this (relative) distance of S is on S


def chebyshev_cauchy(coefficients: np.ndarray, lo: float, hi: float, z: np.ndarray) -> np.ndarray:
    r"""``∫_lo^hi G(s) ds / (((s-lo)(hi-s))^{1/2} (s - z))`` for ``G = Σ c_m T_m(t(s))``.

    Closed form per term (module docstring); ``z`` complex, off ``[lo, hi]``
    or with a tiny imaginary part selecting a boundary value.
    """
    zeta = (2.0 * z - (lo + hi)) / (hi - lo)
    s = np.sqrt(zeta - 1.0) * np.sqrt(zeta + 1.0)
    w = 1.0 / (zeta + s)         # = ζ - (ζ²-1)^{1/2}, |w| <= 1, without cancellation at large ζ
    series = np.polynomial.polynomial.polyval(w, coefficients)
    return -np.pi * series / s * (2.0 / (hi - lo))


def _chebyshev_samples(fun, lo: float, hi: float):
    """Adaptive Chebyshev coefficients of ``fun`` on ``[lo, hi]`` at first-kind nodes.

    Returns ``(coefficients, nodes, values)``; the nodes are Gauss–Chebyshev
    nodes, so ``π mean(values · s^m)`` is ``∫ s^m G / ((s-lo)(hi-s))^{1/2}``.
    """
    n = 64
    while True:
        t = np.cos(np.pi * (np.arange(n) + 0.5) / n)
        s = 0.5 * (lo + hi) + 0.5 * (hi - lo) * t
        v = fun(s)
        c = dct2(v) / n  # scipy.fft.dct(v, type=2), the same numbers
        c[0] /= 2.0
        scale = max(np.max(np.abs(c)), 1e-300)
        if np.max(np.abs(c[-8:])) <= 1e-15 * scale or n >= _MAX_NODES:
            tail = float(np.max(np.abs(c[-8:])) / scale)
            return c, s, v, tail
        n *= 2


@dataclass(frozen=True)
class SzegoFunction:
    """``D(z)`` of a factor ``h`` on a support (module docstring).

    Attributes
    ----------
    support : bands.
    points : tuple of ``(c, p)`` -- singular points of ``h`` on the support.
    phase_shift : ndarray (g,) -- ``c_j`` with ``D_+/D_- = e^{2πi c_j}`` on gap ``j``.
    limit : float -- ``D_∞``.
    checks : dict -- ``'chebyshev_tail'`` (relative size of the last Chebyshev
        coefficients), ``'jump'`` (max relative ``|D_+ D_- - h|`` on sample points),
        ``'gap_ratio'`` (max ``|D_+/D_- - e^{2πic_j}|``), ``'infinity'``
        (``|2D(2z) - D(z) - D_∞|/D_∞`` at ``|z| ≈ 10^3`` band widths: O(z^{-2}),
        accepted up to 1e-6), ``'moment_imag'`` (imaginary parts that must vanish).
    verified, message : whether every check is within tolerance, and the failed ones
        (:mod:`equilibrium.verification`).
    """

    support: tuple
    points: tuple
    phase_shift: np.ndarray
    limit: float
    checks: dict
    verified: bool = True
    message: str = ""
    _factors: tuple = field(repr=False, default=())
    _harmonic: Any = field(repr=False, default=None)
    _lagrange_hat: float = 0.0
    _band_coefs: tuple = field(repr=False, default=())
    _gap_coefs: tuple = field(repr=False, default=())
    _gap_smooth: np.ndarray = field(repr=False, default=None)
    _log_limit_smooth: float = 0.0

    @property
    def genus(self) -> int:
        return len(self.support) - 1

    @property
    def interior_points(self) -> tuple[float, ...]:
        """The singular points of ``h`` inside a band, not at an edge (:func:`interior_singular_points`)."""
        return _inside_bands(self.points, self.support)

    def log_h(self, x) -> np.ndarray:
        """``log h(x)`` at real ``x`` (all factors)."""
        x = np.asarray(x, dtype=float)
        return sum((f.log_value(x) for f in self._factors), np.zeros_like(x))

    def _log_h_smooth(self, x: np.ndarray) -> np.ndarray:
        omit = tuple(c for c, _ in self.points)
        return sum((f.log_value(x, omit) for f in self._factors), np.zeros_like(x))

    def log_h_continued(self, z, band: int) -> np.ndarray:
        """Analytic continuation of ``log h_s`` (smooth part) off band ``band``.

        From the Chebyshev series of ``log h_s / Π_j`` on the band times the
        continuation of ``Π_j = ∏_{e' ∉ band} |s - e'|^{1/2}``; valid inside the
        Bernstein ellipse of the band that avoids the other edges and the
        singularities of ``h_s``.
        """
        z = np.asarray(z, dtype=complex)
        a, b = self.support[band]
        c = self._band_coefs[band]
        keep = np.nonzero(np.abs(c) > 1e-15 * np.max(np.abs(c)))[0]
        c = c[: keep[-1] + 1] if keep.size else c[:1]
        t = (2.0 * z - (a + b)) / (b - a)
        rho = np.abs(t + np.sqrt(t - 1) * np.sqrt(t + 1))
        if c.size > 8:
            # geometric decay rate of the series = parameter of its ellipse of convergence
            m = np.arange(c.size)
            big = np.abs(c) > 0
            slope = np.polyfit(m[big], np.log(np.abs(c[big])), 1)[0]
            rho_max = float(np.exp(-slope))
            if np.max(rho) > 0.8 * rho_max:
                raise NumericalFailure(
                    f"log h continued off band {band + 1} to Bernstein parameter {np.max(rho):.2f}; its "
                    f"series converges only up to about {rho_max:.2f} (use a smaller circle)")
        G = np.polynomial.chebyshev.chebval(t, c)
        edges = [e for j, ab in enumerate(self.support) if j != band for e in ab]
        Pi = np.ones_like(z)
        for e in edges:
            Pi = Pi * np.sqrt(z - e if e < a else e - z)
        return G * Pi

    def half_log_w_over_d(self, z, edge: float, side: int) -> np.ndarray:
        """``(1/2) log W(z) - log D(z)`` near the edge ``edge`` (``gfunction.local``).

        ``W`` is ``h`` continued analytically from the band; an exponent ``p``
        at the edge itself is carried as ``(z - b)^p`` (right edge, ``side = +1``) or
        ``(a - z)^p`` (left edge), principal branches.
        """
        z = np.asarray(z, dtype=complex)
        band = next(j for j, (a, b) in enumerate(self.support) if edge in (a, b))
        out = 0.5 * self.log_h_continued(z, band) - self._log_smooth(z)
        for c, p in self.points:
            if c == edge:
                if side < 0:
                    out = out + 0.5 * p * (np.log(edge - z) - np.log(z - edge))
            elif c > edge:
                out = out + 0.5 * p * (np.log(c - z) - np.log(z - c))
        if self.points:
            P = sum(p for _, p in self.points)
            out = out + 0.5 * P * (self._harmonic(z) + 0.5 * self._lagrange_hat)
        return out

    def _log_smooth(self, z: np.ndarray) -> np.ndarray:
        """``log D_s(z) = R^{1/2} F`` (module docstring), ``Im z ≥ 0``."""
        edges = np.array([e for ab in self.support for e in ab])
        k = len(self.support)
        F = np.zeros_like(z)
        for j, ((a, b), c) in enumerate(zip(self.support, self._band_coefs)):
            sigma = (-1.0) ** (k - 1 - j)
            # (1/2πi) ∫ log h_s / (R_+^{1/2} (s - z)),  R_+^{1/2} = iσ ((s-a)(b-s))^{1/2} / G-factor
            F = F - sigma / (2.0 * np.pi) * chebyshev_cauchy(c, a, b, z)
        for j, c in enumerate(self._gap_coefs):
            lo, hi = self.support[j][1], self.support[j + 1][0]
            sigma = (-1.0) ** (k - 1 - j)
            F = F + self._gap_smooth[j] * sigma * chebyshev_cauchy(c, lo, hi, z)
        return sqrt_R(z, edges) * F

    def _log_singular(self, z: np.ndarray) -> np.ndarray:
        if not self.points:
            return np.zeros_like(z)
        P = sum(p for _, p in self.points)
        out = sum((0.5 * p * np.log(z - c) for c, p in self.points), np.zeros_like(z))
        return out - 0.5 * P * (self._harmonic(z) + 0.5 * self._lagrange_hat)

    def log(self, z) -> np.ndarray:
        """``log D(z)`` (a continuous branch off the real axis, ``→ log D_∞``).

        Real ``z`` on ``[a_1, b_k]``: the + boundary value.  ``D(z̄) = conj D(z)``.
        """
        z = np.asarray(z, dtype=complex)
        lower = z.imag < 0
        zu = np.where(lower, np.conj(z), z)
        zu = np.where(zu.imag == 0.0, zu + 1j * _LIFT, zu)
        out = self._log_smooth(zu) + self._log_singular(zu)
        return np.where(lower, np.conj(out), out)

    def __call__(self, z) -> np.ndarray:
        """``D(z)``; real ``z`` on ``[a_1, b_k]``: the + boundary value."""
        return np.exp(self.log(z))

    def boundary_values(self, x) -> tuple[np.ndarray, np.ndarray]:
        """``(D_+(x), D_-(x))`` at real ``x``."""
        dp = self(np.asarray(x, dtype=float).astype(complex))
        return dp, np.conj(dp)


def _singular_on_support(factors, support) -> tuple:
    merged: dict = {}
    for f in factors:
        for c, p in getattr(f, "singular_points", ()):
            c, p = float(c), float(p)
            if not any(a - _ON_SUPPORT * max(1, abs(a)) <= c <= b + _ON_SUPPORT * max(1, abs(b))
                       for a, b in support):
                continue
            # snap to an edge when it is one (the branch point must sit exactly there)
            for e in (x for ab in support for x in ab):
                if abs(c - e) <= _ON_SUPPORT * max(1, abs(e)):
                    c = e
            merged[c] = merged.get(c, 0.0) + p
    return tuple(sorted((c, p) for c, p in merged.items() if p != 0.0))


def _inside_bands(points, support) -> tuple[float, ...]:
    edges = {e for ab in support for e in ab}
    return tuple(c for c, _ in points if c not in edges)


def interior_singular_points(factors: Sequence[Factor], support) -> tuple[float, ...]:
    """The singular points ``c`` of ``h = ∏ factors`` strictly inside a band of ``support``.

    A point ``c`` of :attr:`Factor.singular_points` (``h ~ |x - c|^p``, e.g. a
    Fisher–Hartwig root ``|x - c|^{2γ}`` from ``kind = fisher_hartwig`` or from the
    expression ``abs(x - c)^p``) counts once the factors are merged and points within
    a relative ``1e-12`` of an edge are moved onto it (there it is a Jacobi-type end,
    handled by the Bessel parametrix).  At an interior point the local parametrix
    is the confluent hypergeometric one, which is not implemented: the corrections
    beyond leading order (``gfunction.series``, ``gfunction.residual``) assume ``h``
    smooth inside the bands and refuse such a factor.
    """
    support = tuple((float(a), float(b)) for a, b in support)
    return _inside_bands(_singular_on_support(tuple(factors), support), support)


def szego_function(factors: Sequence[Factor], support, *, harmonic=None, tolerance: float = 1e-11,
                   on_failure: str = "raise") -> SzegoFunction:
    """Build the Szegő function of ``h = ∏ factors`` on ``support``.

    Parameters
    ----------
    factors : objects of the :class:`equilibrium.weight.Factor` protocol (module docstring).
    support : the bands ``((a_1, b_1), …)``.
    harmonic : optionally the ``GFunction`` of the harmonic measure of the support
        (built from ``equilibrium.solve(Field.zero(), on=support)`` otherwise).
    tolerance : largest accepted value of a check (``'infinity'``: 1e-6, an O(z^{-2}) check).
    on_failure : ``"raise"`` (NumericalFailure beyond tolerance) or ``"mark"`` (the
        result with ``verified = False``); see :mod:`equilibrium.verification`.
    """
    failure_policy(on_failure)
    support = tuple((float(a), float(b)) for a, b in support)
    if not support or any(not a < b for a, b in support):
        raise InputError(f"the support must be increasing bands (a_j < b_j); got {support}")
    factors = tuple(factors)
    for f in factors:
        if not isinstance(f, Factor):
            raise InputError("a factor needs description, singular_points, log_value(x, omit) and domain() "
                             f"(the protocol equilibrium.weight.Factor); got {f!r}")
    k = len(support)
    g = k - 1
    edges = np.array([e for ab in support for e in ab])
    points = _singular_on_support(factors, support)
    omit = tuple(c for c, _ in points)

    def log_hs(x):
        return sum((f.log_value(x, omit) for f in factors), np.zeros_like(x))

    checks: dict = {}
    band_coefs, band_mom = [], []
    tail = 0.0
    for j, (a, b) in enumerate(support):
        others = np.delete(edges, [2 * j, 2 * j + 1])

        def G(s, others=others):
            return log_hs(s) * np.prod(np.abs(s[:, None] - others[None, :]) ** -0.5, axis=1)

        c, s, v, tl = _chebyshev_samples(G, a, b)
        tail = max(tail, tl)
        band_coefs.append(c)
        sigma = (-1.0) ** (k - 1 - j)
        # ∫ s^m log h_s / R_+^{1/2} = (1/(iσ)) ∫ s^m G / sqrt(..) ;  Gauss–Chebyshev
        band_mom.append(np.array([np.pi * np.mean(v * s ** m) for m in range(k)]) / (1j * sigma))
    gap_coefs, gap_mom = [], []
    for j in range(g):
        lo, hi = support[j][1], support[j + 1][0]
        others = np.delete(edges, [2 * j + 1, 2 * j + 2])

        def Gg(s, others=others):
            return np.prod(np.abs(s[:, None] - others[None, :]) ** -0.5, axis=1)

        c, s, v, tl = _chebyshev_samples(Gg, lo, hi)
        tail = max(tail, tl)
        gap_coefs.append(c)
        sigma = (-1.0) ** (k - 1 - j)
        gap_mom.append(np.array([np.pi * np.mean(v * s ** m) for m in range(k)]) / sigma)
    checks["chebyshev_tail"] = tail
    B = np.sum(band_mom, axis=0)                                  # (k,)
    if g:
        Gm = np.array(gap_mom).T                                  # (k, g): moment m, gap j
        # Σ_bands B_m + 2πi Σ_j c_j Γ_{j,m} = 0, m = 0..g-1
        cs = np.linalg.solve(2j * np.pi * Gm[:g], -B[:g])
        checks["moment_imag"] = float(np.max(np.abs(cs.imag)))
        cs = cs.real
        mu_top = B[k - 1] + 2j * np.pi * Gm[k - 1] @ cs
    else:
        cs = np.zeros(0)
        checks["moment_imag"] = 0.0
        mu_top = B[0]
    log_lim_s = -mu_top / (2j * np.pi)
    checks["moment_imag"] = max(checks["moment_imag"], abs(log_lim_s.imag))
    # singular part
    lag_hat = 0.0
    if points:
        if harmonic is None:
            from equilibrium import Field, IntervalSet, solve
            from .gfunction import g_function
            harmonic = g_function(solve(Field.zero(), on=IntervalSet(list(support)), on_failure=on_failure),
                                  on_failure=on_failure)
        lag_hat = float(harmonic.lagrange)
        P = sum(p for _, p in points)
        omega_hat = np.asarray(harmonic.omega, dtype=float)
        c_sing = np.array([sum(p / 2 for c, p in points if c > support[j][1]) - 0.5 * P * omega_hat[j]
                           for j in range(g)])
        log_lim_sing = -0.25 * P * lag_hat
    else:
        c_sing = np.zeros(g)
        log_lim_sing = 0.0
    D = SzegoFunction(support=support, points=points, phase_shift=cs + c_sing,
                      limit=float(np.exp(log_lim_s.real + log_lim_sing)), checks=checks,
                      _factors=factors, _harmonic=harmonic, _lagrange_hat=lag_hat,
                      _band_coefs=tuple(band_coefs), _gap_coefs=tuple(gap_coefs),
                      _gap_smooth=cs, _log_limit_smooth=float(log_lim_s.real))
    _verify(D)
    checks = float_checks(D.checks)
    tolerances = {key: tolerance for key in checks}
    tolerances["infinity"] = max(tolerance, 1e-6)
    message = failure_message(checks, tolerances, what="the Szegő function")
    if harmonic is not None and not getattr(harmonic, "verified", True):
        message = "; ".join(m for m in (message, f"its harmonic measure: {harmonic.message}") if m)
    return settle(replace(D, checks=checks, verified=not message, message=message), on_failure)


def _verify(D: SzegoFunction) -> None:
    """Jump relations on sample points, gap constants and the limit at infinity."""
    t = np.array([0.013, 0.21, 0.5, 0.77, 0.991])
    pts = {c for c, _ in D.points}
    xs = np.concatenate([a + (b - a) * t for a, b in D.support])
    xs = xs[[all(abs(x - c) > 1e-6 for c in pts) for x in xs]]
    dp, dm = D.boundary_values(xs)
    lh = D.log_h(xs)
    D.checks["jump"] = float(np.max(np.abs(np.log(dp * dm).real - lh) + np.abs(np.log(dp * dm).imag)))
    gap = 0.0
    for j in range(D.genus):
        lo, hi = D.support[j][1], D.support[j + 1][0]
        xg = lo + (hi - lo) * np.array([0.1, 0.5, 0.9])
        dp, dm = D.boundary_values(xg)
        gap = max(gap, float(np.max(np.abs(dp / dm - np.exp(2j * np.pi * D.phase_shift[j])))))
    D.checks["gap_ratio"] = gap
    lo, hi = D.support[0][0], D.support[-1][1]
    z1 = 0.5 * (lo + hi) + 1e3 * max(1.0, hi - lo) * np.exp(1j * np.array([0.3, 2.0, -1.0]))
    # D/D_∞ = 1 + d_1/z + O(z^-2): Richardson from |z| = 1e3 and 2e3 (widths) leaves O(1e-7)
    est = 2.0 * D(0.5 * (lo + hi) + 2.0 * (z1 - 0.5 * (lo + hi))) - D(z1)
    D.checks["infinity"] = float(np.max(np.abs(est / D.limit - 1)))
