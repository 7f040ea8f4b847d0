r"""Local parametrices at the edges: Airy (soft edges) and Bessel (hard edges).

Conventions are those of ``gfunction.gfunction`` (φ-functions, local
variables, (★): ``g = (V - ℓ)/2 ± πiΩ(e) - φ_e/2`` for ``±Im z > 0``) and of
``gfunction.outer`` / ``gfunction.szego`` (outer parametrix
``N = D_∞^{σ₃} M(z; w̃) D(z)^{-σ₃}``).  After ``T = e^{nℓσ₃/2} Y e^{-n(g+ℓ/2)σ₃}``
and the lens ``S = T [[1, 0], [∓W^{-1} e^{nφ}, 1]]`` (upper/lower lens) the
jumps near an edge are ``[[0, h], [-1/h, 0]]`` on the band,
``[[1, 0], [W^{-1} e^{nφ}, 1]]`` on the lips and ``[[1, h e^{-nφ}], [0, 1]]`` on
the real line outside the band (soft edges).

Model problems
--------------
*Airy* (Deift, Kriecherbauer, McLaughlin, Venakides, Zhou, Comm. Pure Appl.
Math. 52 (1999) 1335–1425, §7; Deift, Courant Lecture Notes 3 (1999), §7.6).
With ``y_0 = Ai(ζ)``, ``y_1 = ωAi(ωζ)``, ``y_2 = ω²Ai(ω²ζ)``, ``ω = e^{2πi/3}``
(Airy functions: NIST DLMF §9.2, ``y_0 + y_1 + y_2 = 0`` is DLMF 9.2.8),

    Φ = [[y_0, -y_2], [y_0', -y_2']]     0 < arg ζ < 2π/3,
    Φ = [[-y_1, -y_2], [-y_1', -y_2']]   2π/3 < arg ζ < π,
    Φ(ζ) = conj(Φ(ζ̄)) diag(1, -1)       lower half-plane,

has jumps ``[[1,1],[0,1]]`` on ``arg ζ = 0`` (outward), ``[[1,0],[1,1]]`` on
``arg ζ = ±2π/3`` and ``[[0,1],[-1,0]]`` on ``arg ζ = π`` (both toward 0), and
``Φ = ζ^{-σ₃/4} A_0 (I + O(ζ^{-3/2})) e^{-(2/3)ζ^{3/2}σ₃}``,
``A_0 = (2√π)^{-1} [[1, i], [-1, i]]`` (DLMF 9.7.5–9.7.6).

*Bessel* (Kuijlaars, McLaughlin, Van Assche, Vanlessen, Adv. Math. 188
(2004) 337–398, §6; Bessel functions: DLMF §10.25–10.40).  For ``|arg ζ| < 2π/3``

    Ψ = [[I_α(2ζ^{1/2}), (i/π) K_α(2ζ^{1/2})],
         [2πi ζ^{1/2} I_α'(2ζ^{1/2}), -2ζ^{1/2} K_α'(2ζ^{1/2})]],

continued into ``2π/3 < ±arg ζ < π`` through the ray jumps
``[[1,0],[e^{±απi},1]]`` (rays oriented toward 0); the band jump is
``[[0,1],[-1,0]]`` and ``Ψ = (2πζ^{1/2})^{-σ₃/2} B_0 (I + O(ζ^{-1/2}))
e^{2ζ^{1/2}σ₃}``, ``B_0 = 2^{-1/2} [[1, i], [i, 1]]`` (DLMF 10.40.1–10.40.2).

Parametrices (derived here in our conventions)
----------------------------------------------
At edge ``e`` with ``Ω = Ω(e)``, ``± = sign Im z``:

    P(z) = E(z) Φ(ζ) e^{-n(g - (V-ℓ)/2)σ₃} W(z)^{-σ₃/2},
    E(z) = N(z) W^{σ₃/2} e^{±πinΩσ₃} A^{-1} ζ^{σ₃/4}           (Airy),
    E(z) = N(z) W^{σ₃/2} e^{±πinΩσ₃} B^{-1} (2πζ^{1/2})^{σ₃/2}  (Bessel),

with ``ζ = n^{2/3} f_e(z)`` (Airy; ``(2/3)ζ^{3/2} = nφ_e/2``) or
``ζ^{1/2} = -nφ_e(z)/4`` (Bessel; ``φ_e < 0`` outside Σ next to a hard edge).
At right edges ``(Φ, A) = (Φ, A_0)``; at left edges the orientation of the
band is reversed and ``(Φ, A) = (σ₃Φσ₃, σ₃A_0σ₃)``.  ``W = h`` at soft edges
(``h`` analytic there); at a hard edge with ``h = |x - e|^α h̃`` it is
``W = (z - b)^α h̃`` at a right edge ``b`` and ``W = (a - z)^α h̃`` at a left
edge ``a`` (principal powers, cut along the band), which turns the lens jump
into the ray jumps ``e^{±απi}`` of Ψ.  Using (★), ``e^{-n(g-(V-ℓ)/2)σ₃} =
e^{n(φ/2 ∓ πiΩ)σ₃}``, so

    P N^{-1} = N U (Q(ζ) - I) U^{-1} N^{-1} + I,     U = W^{σ₃/2} e^{±πinΩσ₃},

``Q = A^{-1} ζ^{σ₃/4} Φ(ζ) e^{(2/3)ζ^{3/2}σ₃}`` (or the Bessel analogue),
which is how the matching ``P = (I + O(1/n)) N`` on a fixed circle
(DKMVZ 1999, Prop. 7.x; KMVV 2004, (6.x)) is measured: ``Q - I = O(ζ^{-3/2})``
(Airy) or ``O(ζ^{-1/2})`` (Bessel), both ``O(1/n)`` on the circle.  The scaled
functions (``scipy.special.airye``, ``ive``, ``kve``) keep every factor bounded.

Airy form of π_n (``degree = scaling``): outside and inside the lens near a
soft edge the first column of Φ continues analytically, so

    π_n(x) ≈ e^{n(V(x) - ℓ)/2} W^{-1/2} (E_11 Ai(ζ) ± E_12 Ai'(ζ))

(+ at right edges, − at left edges); its zeros solve
``Ai(ζ) ± r Ai'(ζ) = 0``, ``r = E_12/E_11 = O(n^{-1/3})``, with ``ζ(x)`` the
exact local variable.

Not implemented: the confluent-hypergeometric parametrix at a
Fisher–Hartwig point inside a band, and complex ``z`` with a factor that is
not given near the edge (the factor is continued from its Chebyshev series on
the band, ``SzegoFunction.log_h_continued``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.special import airye, ive, kve

from equilibrium.errors import InputError

from .gfunction import trusted_radius
from .phase import reduced_phase
from .predict import EdgeZeros

__all__ = ["airy_model", "bessel_model", "EdgeParametrix", "edge_parametrix", "matching_mismatch"]

_OMEGA = np.exp(2j * np.pi / 3)
_A0 = np.array([[1.0, 1j], [-1.0, 1j]]) / (2.0 * np.sqrt(np.pi))
_B0 = np.array([[1.0, 1j], [1j, 1.0]]) / np.sqrt(2.0)
_S3 = np.diag([1.0, -1.0]).astype(complex)


def _airy_positive(x: np.ndarray) -> np.ndarray:
    r"""Scaled ``Φ(x + i0) e^{(2/3)x^{3/2}σ₃}`` for real ``x > 0`` from the real Airy functions.

    ``Ai(x e^{-2πi/3}) = ½ e^{-πi/3} (Ai(x) + i Bi(x))`` (DLMF 9.2.11) and its derivative
    ``Ai'(x e^{-2πi/3}) = ½ e^{πi/3} (Ai'(x) + i Bi'(x))``, with ``ω² x = x e^{-2πi/3}``; one real
    ``airye`` (scaled by ``e^{ξ}`` for Ai, ``e^{-ξ}`` for Bi, ``ξ = (2/3)x^{3/2}``) instead of two
    complex ones (~6 times faster; the same values to rounding).
    """
    ai, aip, bi, bip = airye(x)
    tiny = np.exp(-(4.0 / 3.0) * x ** 1.5)          # e^{-2ξ}: Ai e^{-ξ} = eAi · e^{-2ξ}
    a2 = 0.5 * np.exp(-1j * np.pi / 3) * (ai * tiny + 1j * bi)
    a2p = 0.5 * np.exp(1j * np.pi / 3) * (aip * tiny + 1j * bip)
    out = np.empty(x.shape + (2, 2), dtype=complex)
    out[..., 0, 0], out[..., 1, 0] = ai, aip
    out[..., 0, 1], out[..., 1, 1] = -_OMEGA ** 2 * a2, -_OMEGA * a2p
    return out


def _airy_upper(zeta: np.ndarray) -> np.ndarray:
    """Scaled ``Φ(ζ) e^{(2/3)ζ^{3/2}σ₃}`` for ``Im ζ >= 0``.

    Points on the positive axis (``0 ≤ Im ζ ≤ 1e-200 Re ζ``: the real line outside the band, lifted
    to its upper side) by :func:`_airy_positive`.
    """
    real = (zeta.real > 0) & (zeta.imag <= 1e-200 * zeta.real)
    if np.any(real):
        out = np.empty(zeta.shape + (2, 2), dtype=complex)
        out[real] = _airy_positive(zeta.real[real])
        if not np.all(real):
            out[~real] = _airy_upper(zeta[~real])
        return out
    out = np.empty(zeta.shape + (2, 2), dtype=complex)
    a0, a0p, _, _ = airye(zeta)
    a2, a2p, _, _ = airye(_OMEGA ** 2 * zeta)
    a1, a1p, _, _ = airye(_OMEGA * zeta)
    sector1 = np.angle(zeta) < 2 * np.pi / 3
    # column 2: -y_2 = -ω² Ai(ω²ζ), -y_2' = -ω Ai'(ω²ζ); the scaling of airye is e^{-ξ} here
    out[..., 0, 1] = -_OMEGA ** 2 * a2
    out[..., 1, 1] = -_OMEGA * a2p
    # column 1: y_0 (sector I) or -y_1 = -ω Ai(ωζ), -ω² Ai'(ωζ) (sector II); scaling e^{ξ}
    out[..., 0, 0] = np.where(sector1, a0, -_OMEGA * a1)
    out[..., 1, 0] = np.where(sector1, a0p, -_OMEGA ** 2 * a1p)
    return out


def airy_model(zeta) -> np.ndarray:
    r"""``Φ(ζ) e^{(2/3)ζ^{3/2}σ₃}`` (module docstring), shape ``ζ.shape + (2, 2)``."""
    zeta = np.asarray(zeta, dtype=complex)
    lower = zeta.imag < 0
    up = _airy_upper(np.where(lower, np.conj(zeta), zeta))
    down = np.conj(up) @ _S3
    return np.where(lower[..., None, None], down, up)


def bessel_model(zeta, alpha: float) -> np.ndarray:
    r"""``Ψ_α(ζ) e^{-2ζ^{1/2}σ₃}`` (module docstring), shape ``ζ.shape + (2, 2)``.

    ``ζ^{1/2}`` is the principal root; :func:`edge_parametrix` passes
    ``ζ^{1/2}`` itself through :func:`_bessel_from_root` to avoid branch loss.
    """
    zeta = np.asarray(zeta, dtype=complex)
    return _bessel_from_root(np.sqrt(zeta), alpha)


def _bessel_from_root(r: np.ndarray, alpha: float) -> np.ndarray:
    x = 2.0 * r
    ph = np.exp(-1j * x.imag)          # I_ν(x) e^{-x} = ive(ν, x) e^{-i Im x} for Re x >= 0
    I0 = ive(alpha, x) * ph
    Ip = 0.5 * (ive(alpha - 1, x) + ive(alpha + 1, x)) * ph
    K0 = kve(alpha, x)
    Kp = -0.5 * (kve(alpha - 1, x) + kve(alpha + 1, x))
    out = np.empty(r.shape + (2, 2), dtype=complex)
    out[..., 0, 0] = I0
    out[..., 1, 0] = 2j * np.pi * r * Ip
    out[..., 0, 1] = 1j / np.pi * K0
    out[..., 1, 1] = -2.0 * r * Kp
    arg = np.angle(r ** 2)
    decay = np.exp(-2.0 * x)           # column-2 scaling e^{x} against column-1 scaling e^{-x}
    up = arg > 2 * np.pi / 3
    dn = arg < -2 * np.pi / 3
    for sel, sgn in ((up, -1.0), (dn, 1.0)):
        if np.any(sel):
            # Ψ_II = Ψ_I [[1,0],[-e^{απi},1]],  Ψ_III = Ψ_I [[1,0],[e^{-απi},1]]
            coef = -np.exp(1j * np.pi * alpha) if sgn < 0 else np.exp(-1j * np.pi * alpha)
            for row in (0, 1):
                out[..., row, 0] = np.where(sel, out[..., row, 0] + coef * out[..., row, 1] * decay,
                                            out[..., row, 0])
    return out


def _airy_Q(zeta: np.ndarray) -> np.ndarray:
    """``A_0^{-1} ζ^{σ₃/4} Φ̂(ζ)`` → I."""
    q = zeta ** 0.25
    L = np.linalg.inv(_A0)
    Z = np.zeros(zeta.shape + (2, 2), dtype=complex)
    Z[..., 0, 0], Z[..., 1, 1] = q, 1 / q
    return L @ Z @ airy_model(zeta)


#: |ξ| from which the Airy model matrix is taken from its large-ξ series (:func:`airy_Q`)
AIRY_SERIES_FROM = 20.0
_AIRY_SERIES_TERMS = 20


def airy_Q(zeta, xi=None) -> np.ndarray:
    r"""``Q(ζ) = A_0^{-1} ζ^{σ₃/4} Φ(ζ) e^{(2/3)ζ^{3/2}σ₃}`` (→ I), accurate to rounding for every ζ.

    scipy's scaled Airy functions lose ~ eps·|ξ| (3.7e-14 at |ζ| = 100, 3.7e-11 at 1e4, against
    mpmath; ``ξ = (2/3)ζ^{3/2}``); where ``|ξ| ≥ 20`` the 20-term series
    ``I + Σ Q_k ξ^{-k}`` of :mod:`gfunction.model_series` (DLMF 9.7.5-9.7.6, uniform in the
    sectors) is exact to 2e-16 (its first omitted term ``u_21 ξ^{-21}``) and replaces them; only
    its terms above 1e-18 at the smallest such ``|ξ|`` are summed.  ``xi`` may pass ``ξ`` when the
    caller has it (``n ξ_1``).  Shape ``ζ.shape + (2, 2)``.
    """
    from .model_series import horner, series_matrices

    zeta = np.asarray(zeta, dtype=complex)
    xi = (2.0 / 3.0) * zeta ** 1.5 if xi is None else np.asarray(xi, dtype=complex)
    big = np.abs(xi) >= AIRY_SERIES_FROM
    Q = np.empty(xi.shape + (2, 2), dtype=complex)
    if np.any(big):
        terms = series_matrices("soft", _AIRY_SERIES_TERMS)
        size = np.max(np.abs(terms), axis=(1, 2)) * float(np.min(np.abs(xi[big]))) ** -np.arange(
            1.0, _AIRY_SERIES_TERMS + 1)
        used = int(np.nonzero(size > 1e-18)[0].max(initial=0)) + 1
        Q[big] = np.eye(2) + horner(terms[:used], 1.0 / xi[big])
    if not np.all(big):
        Q[~big] = _airy_Q(zeta[~big])
    return Q


def _bessel_Q(root: np.ndarray, alpha: float) -> np.ndarray:
    """``B_0^{-1} (2πζ^{1/2})^{σ₃/2} Ψ̂(ζ)`` → I (``root = ζ^{1/2}``)."""
    q = np.sqrt(2 * np.pi * root)
    Z = np.zeros(root.shape + (2, 2), dtype=complex)
    Z[..., 0, 0], Z[..., 1, 1] = q, 1 / q
    return np.linalg.inv(_B0) @ Z @ _bessel_from_root(root, alpha)


def outer_scaling(M: np.ndarray, log_limit, lu) -> np.ndarray:
    """``D_∞^{σ₃} M e^{lu σ₃}``: rows of ``M`` times ``e^{±log D_∞}``, columns times ``e^{±lu}``."""
    out = M.copy()
    out[..., 0, :] *= np.exp(log_limit)
    out[..., 1, :] *= np.exp(-log_limit)
    out[..., :, 0] *= np.exp(lu)[..., None]
    out[..., :, 1] *= np.exp(-lu)[..., None]
    return out


@dataclass(frozen=True)
class EdgeParametrix:
    """Local parametrix data at edge number ``index`` of a :class:`~gfunction.predict.Predictor`.

    ``alpha`` is the exponent of ``h`` at a hard edge (0 at soft edges);
    ``radius`` the radius of the matching circle (a third of the distance to
    the nearest other edge, default).
    """

    predictor: Any
    index: int
    edge: float
    kind: str
    side: int
    omega: float
    alpha: float
    radius: float
    #: trailing part of Ω(e) (gfunction.phase; 0 unless Ω was refined)
    omega_low: float = 0.0

    # -- pieces ------------------------------------------------------------
    def zeta(self, z, degree) -> np.ndarray:
        """Airy ``ζ = n^{2/3} f_e(z)``; Bessel ``ζ^{1/2} = -nφ_e(z)/4`` (returned for hard edges).

        ``degree`` is a number or an array broadcasting with ``z`` (one degree per point).
        """
        z = np.asarray(z, dtype=complex)
        n = np.asarray(degree, dtype=float)
        if self.kind == "soft":
            return n ** (2.0 / 3.0) * self.predictor.g.local_variable(self.index, z)
        return -n * self.predictor.g.phi(self.index, z) / 4.0

    def _half_log_W_minus_log_D(self, z: np.ndarray) -> np.ndarray:
        """``(1/2) log W(z) - log D(z)`` near the edge (0 without a factor)."""
        D = self.predictor.szego
        if D is None:
            return np.zeros_like(z)
        return D.half_log_w_over_d(z, self.edge, self.side)

    def outer(self, z, degree: int) -> np.ndarray:
        """``N(z)`` for the weight ``e^{-nV} h`` at ``degree = n`` (S-normalisation)."""
        pr = self.predictor
        w = pr.phases([degree])[0]
        M = pr.model.evaluate(np.asarray(z, dtype=complex), w)
        D = pr.szego
        if D is None:
            return M
        ld = D.log(z)
        lim = np.log(D.limit)
        out = M.copy()
        out[..., 0, 0] *= np.exp(lim - ld)
        out[..., 0, 1] *= np.exp(lim + ld)
        out[..., 1, 0] *= np.exp(-lim - ld)
        out[..., 1, 1] *= np.exp(-lim + ld)
        return out

    def _U(self, z: np.ndarray, degree) -> np.ndarray:
        """``log`` of the diagonal ``U = W^{σ₃/2} e^{±πinΩσ₃}`` combined with ``D^{-σ₃}`` of N."""
        pm = np.where(z.imag >= 0, 1.0, -1.0)
        # nΩ reduced mod 2 exactly before the factor π (gfunction.phase: keeps the digits at large n)
        return 1j * np.pi * reduced_phase(degree, self.omega, self.omega_low, 2.0) * pm

    def model_Q(self, z, degree: int) -> np.ndarray:
        """``Q(ζ(z))`` (→ I), with the σ₃-conjugation at left edges."""
        zt = self.zeta(z, degree)
        Q = airy_Q(zt) if self.kind == "soft" else _bessel_Q(zt, self.alpha)
        if self.side < 0:
            Q = _S3 @ Q @ _S3
        return Q

    def outer_times_U(self, z, degree, *, outer=None) -> np.ndarray:
        """``N U = D_∞^{σ₃} M e^{(log W/2 - log D ± iπnΩ) σ₃}`` at ``z`` (module docstring).

        ``degree`` is a number or an array broadcasting with ``z`` (one degree per point).
        ``outer`` -- ``M(z; w_n)`` (``predictor.model.evaluate`` at the phases of the degrees,
        broadcast shape ``+ (2, 2)``) when the caller has it already.
        """
        z = np.asarray(z, dtype=complex)
        pr = self.predictor
        if outer is not None:
            M = outer
        else:
            if np.ndim(degree):
                degree = np.broadcast_to(np.asarray(degree), z.shape)
                w = pr.phases(degree.ravel()).reshape(z.shape + (pr.genus,))
            else:
                w = pr.phases([degree])[0]
            M = pr.model.evaluate(z, w)
        lu = self._half_log_W_minus_log_D(z) + self._U(z, degree)
        D = pr.szego
        return outer_scaling(M, np.log(D.limit) if D is not None else 0.0, lu)

    def mismatch(self, z, degree, *, outer=None) -> np.ndarray:
        """``P(z) N(z)^{-1} - I`` at points ``z`` off the real axis (module docstring).

        ``degree`` is a number or an array broadcasting with ``z`` (one degree per point; a
        column of degrees against a row of points gives the grid, the local variable computed
        once per point).  ``outer`` -- ``M(z; w_n)`` of the same points and degrees, reused
        (:meth:`outer_times_U`).
        """
        z = np.asarray(z, dtype=complex)
        NU = self.outer_times_U(z, degree, outer=outer)
        Q = self.model_Q(z, degree)
        return NU @ (Q - np.eye(2)) @ np.linalg.inv(NU)

    def circle(self, samples: int = 48) -> np.ndarray:
        t = 2 * np.pi * (np.arange(samples) + 0.5) / samples
        return self.edge + self.radius * np.exp(1j * t)


def edge_parametrix(predictor, index: int, *, radius: float | None = None) -> EdgeParametrix:
    """The local parametrix at edge number ``index`` (``0 … 2k-1``) of ``predictor``."""
    gf = predictor.g
    if not 0 <= index < len(gf.edge_points):
        raise InputError(f"edge index {index} out of range 0..{len(gf.edge_points) - 1}")
    e = gf.edge_points[index]
    kind = gf.edge_kinds[index]
    side = gf.edges[index].side
    others = [abs(p - e) for j, p in enumerate(gf.edge_points) if j != index]
    if radius is None:
        # a third of the way to the next edge, half way to the nearest other singular point of the
        # factor h and to the nearest finite end of Σ (so the functions on the circle are analytic
        # on a disc two or three times as large and their Fourier modes fall like 2^{-m} or faster:
        # gfunction.residual), and inside the region where h is trusted off the real line (a
        # non-polynomial V: gfunction.trusted_radius).  Without the factor's points a Jacobi factor
        # (1-x)^α beyond a soft edge at 1/3 left modes of 1e-7 at m = 32.
        D = predictor.szego
        singular = [float(c) for f in (D._factors if D is not None else ()) for c, _ in f.singular_points]
        on = getattr(gf.measure, "on", None)
        ends = [x for ab in getattr(on, "intervals", ()) for x in ab if np.isfinite(x)]
        near = [abs(x - e) for x in singular + ends if abs(x - e) > 1e-12 * max(1.0, abs(e))]
        rad = min(min(others) / 3.0 if others else 1.0, min(near) / 2.0 if near else np.inf,
                  0.9 * trusted_radius(gf.measure, e))
    else:
        rad = float(radius)
    alpha = 0.0
    D = predictor.szego
    if D is not None:
        for c, p in D.points:
            if c == e:
                if kind == "soft":
                    raise InputError(f"the factor is singular at the soft edge {e:g}; the Airy parametrix "
                                     "needs h analytic there")
                alpha = p
    return EdgeParametrix(predictor, index, e, kind, side, gf.edge_omega(index), alpha, rad,
                          gf.edge_omega(index, low=True))


def matching_mismatch(predictor, index: int, degrees, *, samples: int = 48, radius: float | None = None) -> np.ndarray:
    """``max_{|z-e|=r} |P N^{-1} - I|`` for each degree (``degree = scaling``)."""
    ep = edge_parametrix(predictor, index, radius=radius)
    z = ep.circle(samples)
    return np.array([float(np.max(np.abs(ep.mismatch(z, int(n))))) for n in np.atleast_1d(degrees)])


def soft_edge_zeros(predictor, index: int, degree: int, count: int = 5, *,
                    on_failure: str = "raise") -> EdgeZeros:
    r"""First ``count`` zeros of π_n at soft edge ``index`` from the Airy form (from the edge inward).

    The zeros of ``Ai(ζ(x)) + c(x) Ai'(ζ(x))`` (module docstring) of
    ``gfunction.edge_zeros.edge_zeros`` at order 0 (``R = I``), soft edges only.
    ``on_failure``: ``"raise"`` or ``"mark"`` (:mod:`equilibrium.verification`).
    """
    from .edge_zeros import edge_zeros

    if predictor.g.edge_kinds[index] != "soft":
        raise InputError(f"edge {index} is a hard edge; the Airy form applies at soft edges")
    return edge_zeros(predictor, index, degree, count, order=0, on_failure=on_failure)
