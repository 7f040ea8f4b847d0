r"""The residual matrix R beyond leading order: jump expansion, correction series, coefficients at ∞.

Setting (CONVENTIONS "Beyond leading order", and the frames of :mod:`gfunction.local`)
------------------------------------------------------------------------------------
``T = e^{nℓσ₃/2} Y e^{-n(g+ℓ/2)σ₃}``, ``S`` = ``T`` with the lenses opened,
``N = D_∞^{σ₃} M(z; w) D(z)^{-σ₃}`` the outer parametrix (theta functions of the
phases ``w = nΩ - c``, Szegő function ``D`` of the factor), ``P`` the Airy or
Bessel parametrix in a disc ``U_e`` around each edge.  The residual matrix

    R = S P^{-1} in the discs,     R = S N^{-1} elsewhere,

is analytic off the circles ``∂U_e`` (up to the lens and gap jumps outside the
discs, which are ``O(e^{-nc})``; :func:`neglected_jump_exponent`) and tends to
``I`` at infinity.

**Orientation.**  Every circle is oriented *clockwise*, so its ``+`` side (on
the left of the orientation) is the *outside*; then ``R_+ = S N^{-1}``,
``R_- = S P^{-1}`` and

    R_+ = R_- J_R,     J_R = P N^{-1}    on ∂U_e

(Deift, Kriecherbauer, McLaughlin, Venakides, Zhou, Comm. Pure Appl. Math. 52
(1999) 1335–1425, §7, and KMVV, Adv. Math. 188 (2004) 337–398, §8, use the
same orientation).  Cauchy transforms below are over the clockwise circles:
``C f(z) = (1/2πi) ∫_{∂U} f(s) ds/(s - z)``, ``C_+ - C_- = 1``.

Jump expansion
--------------
``gfunction.local`` writes ``P N^{-1} = NU · Q̃(ζ) · (NU)^{-1}`` with
``NU = D_∞^{σ₃} M e^{(½ log W - log D ± iπnΩ(e)) σ₃}`` and ``Q̃ = Q`` at right
edges, ``σ₃ Q σ₃`` at left edges (the band lies on the other side).  With the
large-argument series ``Q = I + Σ Q_k s^{-k}`` of :mod:`gfunction.model_series`
(``s = ξ = (2/3)ζ^{3/2} = n ξ_1`` Airy, ``s = x = 2ζ^{1/2} = n x_1`` Bessel,
``ξ_1 = (2/3) f_e^{3/2}``, ``x_1 = -φ_e/2``):

    J_R = I + Σ_k Δ_k / n^k,     Δ_k(z) = NU(z) Q̃_k NU(z)^{-1} s_1(z)^{-k}.

``NU`` depends on ``n`` through the phases (theta functions of ``nΩ``) and
``e^{±iπnΩ(e)}``, so ``Δ_k`` are computed per degree (for one band they do
not depend on ``n``: ``Ω(e) ∈ {0, 1}``).  ``Δ_k`` is meromorphic in the disc
with a pole at the edge of the order :func:`gfunction.model_series.pole_order`
(2, 3 Airy; 1, 1 Bessel for k = 1, 2): ``NU Q̃_k NU^{-1} = E Λ_k E^{-1}`` with the
analytic prefactor ``E`` of the parametrix and ``Λ_k`` an integer power of ζ.

Correction series
-----------------
``R = I + Σ_k R^{(k)}/n^k`` with ``R^{(k)} → 0`` at ∞ and, from
``R_+ = R_- J_R`` order by order,

    R^{(k)}_+ - R^{(k)}_- = Σ_{j=1}^{k} R^{(k-j)}_- Δ_j,   R^{(0)} = I,
    R^{(k)}(z) = C[F_k](z),   F_k = Σ_{j=1}^{k} R^{(k-j)}_- Δ_j

(so ``R^{(1)} = C[Δ_1]``, ``R^{(2)} = C[R^{(1)}_- Δ_1 + Δ_2]``).  The circles
are parametrised ``s = e + r t``, ``t = e^{iθ}``, ``θ_l = 2π(l + ½)/L``
(no point on the real axis); ``F = Σ_m c_m t^m`` by the FFT (the trapezoidal
rule, geometrically convergent for functions analytic near the circle).  On
the clockwise circle

    C f(z) = +Σ_{m<0} c_m ((z-e)/r)^m     (z outside),
    C f(z) = -Σ_{m≥0} c_m ((z-e)/r)^m     (z inside),

and at infinity ``R^{(k)}(z) = Σ_p R^{(k)}_p z^{-p}`` with

    R^{(k)}_p = (1/2πi) ∮_{ccw} F_k(s) s^{p-1} ds
             = Σ_circles r Σ_{q<p} binom(p-1, q) e^{p-1-q} r^q c_{-(q+1)}.

Since ``F_k`` is meromorphic in each disc with a pole only at the edge, only
the modes ``-1 … -pole order`` are non-zero (the rest is rounding); the
*residue form* of the same transform is the principal part
``R^{(k)}(z) = Σ_m C_m (z - e)^{-m}`` outside, ``C_m = r^m c_{-m}``.  The
checks compare the trapezoidal transform with this principal part taken
from a circle of half the radius (the Laurent coefficients of a meromorphic
function do not depend on the circle): ``trapezoid_vs_residue``.

Result object and checks
------------------------
:class:`ResidualExpansion` (one per batch of degrees) evaluates
``R^{(k)}(z)`` anywhere (inside a disc: the analytic ``R = S P^{-1}`` there),
holds the coefficients at infinity per order, and carries

* ``trapezoid_vs_residue`` -- max difference of ``R^{(k)}_p`` (p = 1, 2)
  between the trapezoidal transform and the residue form from radius r/2;
* ``meromorphic`` -- the largest relative size of the Fourier modes below
  ``-pole order`` (must be rounding: ``Δ_k`` has no other singularity);
* ``symmetry`` -- ``R(z̄) = σ₃ conj(R(z)) σ₃`` (real weight), at infinity:
  ``max |R_p - σ₃ conj(R_p) σ₃|``;
* ``determinant`` -- ``det R = 1`` order by order: ``tr R^{(1)} = 0`` and
  ``tr R^{(2)} + det R^{(1)} = 0`` at test points (the ``n``-free form of
  ``det R = 1 + O(n^{-K-1})``), and ``|det(I + Σ_k R^{(k)}/n^k) - 1|``;
* ``fourier_tail`` -- relative size of the modes next to ``±L/2`` (resolution of the
  circles); for geometric decay the modes that alias onto the low ones used here
  (``|m| ≈ L``) are about its square, so 1e-8 is the tolerance;
* ``series_vs_exact_jump`` -- ``max |J_R - I - Σ_{k≤K} Δ_k/n^k|`` with the exact
  scaled Airy/Bessel jump (``local.EdgeParametrix.mismatch``), ``O(n^{-K-1})``.

How a quantity is computed "at order K"
---------------------------------------
:mod:`gfunction.series` holds the truncated power series in ``1/n`` and the
result object :class:`gfunction.series.CorrectionSeries`.  A corrected
quantity (a recurrence coefficient here, a zero or a value of ``p_n`` in
helper *zeros*' work) is built from ``I + Σ_k R^{(k)}(z)/n^k`` (or ``R_p`` at
infinity) by expanding in ``1/n`` with fixed, n-dependent coefficients, and
returns its ``c_0 … c_K`` as a ``CorrectionSeries``; the workbench asks every
quantity for ``at_order(K)``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from math import comb
from typing import Any, Sequence

import numpy as np

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, float_checks, settle

from .local import edge_parametrix, outer_scaling
from .model_series import pole_order, series_matrices
from .outer import gamma_factor
from .phase import reduced_phase
from .theta import theta_shift_table

__all__ = ["ResidualExpansion", "residual_expansion", "JumpExpansion", "jump_expansion", "OuterTable",
           "outer_table", "circle_points", "fourier_modes", "MAX_ORDER"]

#: highest order of the correction series offered
MAX_ORDER = 4

#: tolerances of the figures of :class:`ResidualExpansion` (the rest are informative): each is
#: rounding when the construction is right (measured 1e-17 … 5e-13 on the tests' fields)
TOLERANCES = {"meromorphic": 1e-9, "fourier_tail": 1e-8, "symmetry": 1e-11, "determinant": 1e-11,
              "trapezoid_vs_residue": 1e-10}
_S3 = np.diag([1.0, -1.0]).astype(complex)
_DEFAULT_SAMPLES = 64
_MODE_MARGIN = 2    # negative modes kept beyond the pole order (they must be rounding)


# ---------------------------------------------------------------- circle helpers
def circle_points(centre: float, radius: float, samples: int) -> tuple[np.ndarray, np.ndarray]:
    """``(s, t)``: points ``s = e + r t`` with ``t = e^{iθ_l}``, ``θ_l = 2π(l+½)/L``."""
    theta = 2.0 * np.pi * (np.arange(samples) + 0.5) / samples
    t = np.exp(1j * theta)
    return centre + radius * t, t


def fourier_modes(values: np.ndarray, axis: int = -1) -> np.ndarray:
    """Fourier coefficients ``c_m`` of samples at ``θ_l = 2π(l+½)/L`` along ``axis``.

    Returned in FFT order (index ``m mod L``, so index ``L - j`` holds ``c_{-j}``):
    ``c_m = (1/L) Σ_l f_l e^{-imθ_l}`` -- the trapezoidal rule for
    ``(1/2π) ∫ f e^{-imθ} dθ``.
    """
    L = values.shape[axis]
    c = np.fft.fft(values, axis=axis) / L
    m = np.fft.fftfreq(L, 1.0 / L)
    shape = [1] * values.ndim
    shape[axis] = L
    return c * np.exp(-1j * np.pi * m / L).reshape(shape)


# ------------------------------------------------------------ outer parametrix table
@dataclass(frozen=True)
class OuterTable:
    r"""``M(z; W)`` of :class:`gfunction.outer.ModelProblem` at fixed points for many phases.

    The four theta quotients of ``M`` (``outer`` module docstring) have arguments
    ``±u(z) ± d`` shifted by the real ``W``; the shift does not change their
    imaginary parts, so ``θ(v + W)/θ(v) = θ̂(v + W)/θ̂(v)`` and one
    :class:`gfunction.theta.ThetaShiftTable` of the 4P + 2 arguments serves all
    phases (one matrix product).
    """

    model: Any
    z: np.ndarray
    A: np.ndarray
    B: np.ndarray
    table: Any = None

    def evaluate(self, W: np.ndarray) -> np.ndarray:
        """``M`` at the points for phases ``W`` (Q, g) reduced as ``model.W``; shape (Q, P, 2, 2)."""
        P = self.z.size
        W = np.atleast_2d(np.asarray(W, dtype=float))
        out = np.empty((W.shape[0], P, 2, 2), dtype=complex)
        if self.model.genus == 0:
            out[..., 0, 0], out[..., 0, 1] = self.A, self.B
            out[..., 1, 0], out[..., 1, 1] = -self.B, self.A
            return out
        plus = self.table.oscillatory(W)          # θ̂(v + W), (Q, 4P + 2)
        minus = self.table.oscillatory(-W)[:, -1]  # θ̂(u∞ + d - W)
        base = self.table.unshifted()
        ratio = plus / base
        c1 = base[-2] / plus[:, -2]
        c2 = base[-1] / minus
        out[..., 0, 0] = self.A * ratio[:, 0:P] * c1[:, None]
        out[..., 0, 1] = self.B * ratio[:, P:2 * P] * c1[:, None]
        out[..., 1, 0] = -self.B * ratio[:, 2 * P:3 * P] * c2[:, None]
        out[..., 1, 1] = self.A * ratio[:, 3 * P:4 * P] * c2[:, None]
        return out


def outer_table(model, z) -> OuterTable:
    """Tabulate ``M(z; ·)`` at points ``z`` off the real axis (any genus)."""
    z = np.asarray(z, dtype=complex).ravel()
    if np.any(z.imag == 0):
        raise InputError("outer_table needs points off the real axis (the circles avoid it)")
    gam = gamma_factor(z, model.support)
    A = (gam + 1 / gam) / 2
    B = (gam - 1 / gam) / 2j
    if model.genus == 0:
        return OuterTable(model, z, A, B)
    u = model.abel(z)
    d, ui = model.d, model.u_infinity
    args = np.concatenate([u + d, -u + d, u - d, -u - d, (ui + d)[None, :], (ui + d)[None, :]])
    return OuterTable(model, z, A, B, theta_shift_table(args, model.tau))


# ------------------------------------------------------------------ jump expansion
@dataclass(frozen=True)
class JumpExpansion:
    r"""The n-independent data of ``J_R = I + Σ Δ_k/n^k`` on the circles (module docstring).

    Attributes
    ----------
    parametrices : tuple of EdgeParametrix (one per edge, ``gfunction.local``)
    samples : int                 points per circle L
    points : complex (C, L)       ``s = e + r t`` on circle c (C circles = edges)
    t : complex (L,)              ``e^{iθ_l}``
    local_variable : complex (C, L)   ``ζ`` at n = 1: ``f_e`` (Airy) or ``ζ^{1/2} = -φ_e/4`` (Bessel)
    large_variable : complex (C, L)   ``s_1 = ξ/n`` (Airy) or ``x/n`` (Bessel)
    half_log_w : complex (C, L)   ``½ log W - log D`` (0 without a factor)
    side_sign : float (C, L)      ``±1 = sign Im s``
    series : complex (C, K, 2, 2) ``Q̃_k`` (σ₃-conjugated at left edges)
    poles : int (C, K)            pole order of ``Δ_k`` at the edge
    outer : OuterTable            ``M`` at all points (C·L), any phases
    order : int                   K
    """

    predictor: Any
    parametrices: tuple
    samples: int
    points: np.ndarray
    t: np.ndarray
    local_variable: np.ndarray
    large_variable: np.ndarray
    half_log_w: np.ndarray
    side_sign: np.ndarray
    series: np.ndarray
    poles: np.ndarray
    outer: OuterTable
    order: int

    @property
    def centres(self) -> np.ndarray:
        return np.array([ep.edge for ep in self.parametrices])

    @property
    def radii(self) -> np.ndarray:
        return np.array([ep.radius for ep in self.parametrices])

    def outer_times_u(self, degrees) -> np.ndarray:
        """``NU`` on every circle for each degree (degree = scaling); shape (N, C, L, 2, 2)."""
        pr = self.predictor
        degrees = np.atleast_1d(np.asarray(degrees))
        C, L = self.points.shape
        w = pr.phases(degrees)
        W = pr.model.W(w) if pr.genus else np.zeros((degrees.size, 0))
        M = self.outer.evaluate(W).reshape(degrees.size, C, L, 2, 2)
        omega = np.array([ep.omega for ep in self.parametrices])
        low = np.array([ep.omega_low for ep in self.parametrices])
        # e^{±iπnΩ}: reduce nΩ mod 2 exactly first (gfunction.phase; π·n would lose digits at large n)
        phase = reduced_phase(degrees.astype(float)[:, None], omega[None, :], low[None, :], 2.0)
        lu = self.half_log_w[None] + 1j * np.pi * phase[:, :, None] * self.side_sign[None]
        D = pr.szego
        return outer_scaling(M, np.log(D.limit) if D is not None else 0.0, lu)

    def terms(self, degrees, NU: np.ndarray | None = None) -> np.ndarray:
        """``Δ_1 … Δ_K`` on the circles; shape (K, N, C, L, 2, 2)."""
        if NU is None:
            NU = self.outer_times_u(degrees)
        inv = _inverse(NU)
        out = np.empty((self.order,) + NU.shape, dtype=complex)
        s1 = self.large_variable
        for k in range(self.order):
            Qk = self.series[:, k][None, :, None]                     # (1, C, 1, 2, 2)
            out[k] = _mul(_mul(NU, np.broadcast_to(Qk, NU.shape)), inv) * (s1 ** -(k + 1))[None, :, :, None, None]
        return out

    def exact_minus_identity(self, degree: int) -> np.ndarray:
        """``J_R - I`` from ``local.EdgeParametrix.mismatch`` (direct evaluation), shape (C, L, 2, 2)."""
        return np.stack([ep.mismatch(self.points[c], int(degree)) for c, ep in enumerate(self.parametrices)])

    def exact_jump(self, degree: int, NU: np.ndarray | None = None) -> np.ndarray:
        """``J_R - I = NU (Q̃(ζ) - I) NU^{-1}`` with the scaled model functions, from the tables; (C, L, 2, 2).

        Same formula as :meth:`exact_minus_identity` (``local``), evaluated from the stored
        local variables and the outer table (the fast path of the residual problem).
        """
        from .local import _bessel_Q, airy_Q

        n = float(degree)
        if NU is None:
            NU = self.outer_times_u([degree])[0]
        out = np.empty(NU.shape, dtype=complex)
        eye = np.eye(2)
        for c, ep in enumerate(self.parametrices):
            if ep.kind == "soft":
                Q = airy_Q(n ** (2.0 / 3.0) * self.local_variable[c], n * self.large_variable[c])
            else:
                Q = _bessel_Q(n * self.local_variable[c], ep.alpha)
            if ep.side < 0:
                Q = _S3 @ Q @ _S3
            out[c] = _mul(_mul(NU[c], Q - eye), _inverse(NU[c]))
        return out


def _mul(X: np.ndarray, Y: np.ndarray) -> np.ndarray:
    """Batched 2×2 products written out (faster than matmul on many tiny matrices)."""
    out = np.empty(np.broadcast_shapes(X.shape, Y.shape), dtype=complex)
    out[..., 0, 0] = X[..., 0, 0] * Y[..., 0, 0] + X[..., 0, 1] * Y[..., 1, 0]
    out[..., 0, 1] = X[..., 0, 0] * Y[..., 0, 1] + X[..., 0, 1] * Y[..., 1, 1]
    out[..., 1, 0] = X[..., 1, 0] * Y[..., 0, 0] + X[..., 1, 1] * Y[..., 1, 0]
    out[..., 1, 1] = X[..., 1, 0] * Y[..., 0, 1] + X[..., 1, 1] * Y[..., 1, 1]
    return out


def _inverse(X: np.ndarray) -> np.ndarray:
    det = X[..., 0, 0] * X[..., 1, 1] - X[..., 0, 1] * X[..., 1, 0]
    out = np.empty_like(X)
    out[..., 0, 0], out[..., 1, 1] = X[..., 1, 1] / det, X[..., 0, 0] / det
    out[..., 0, 1], out[..., 1, 0] = -X[..., 0, 1] / det, -X[..., 1, 0] / det
    return out


def _det(X: np.ndarray) -> np.ndarray:
    return X[..., 0, 0] * X[..., 1, 1] - X[..., 0, 1] * X[..., 1, 0]


def _check_order(order) -> int:
    if isinstance(order, bool) or not isinstance(order, (int, np.integer)) or not 0 <= order <= MAX_ORDER:
        raise InputError(f"order must be an integer 0..{MAX_ORDER}; got {order!r}")
    return int(order)


def _refuse_interior_singularities(pr) -> None:
    D = pr.szego
    if D is None:
        return
    inside = D.interior_points
    if inside:
        raise InputError(
            f"corrections beyond leading order need a local parametrix at every singular point of the "
            f"factor on the support; the Fisher–Hartwig point(s) {', '.join(f'{c:g}' for c in inside)} inside a "
            f"band have none here (the confluent hypergeometric parametrix is not implemented): use order 0")


def jump_expansion(predictor, order: int = 2, *, samples: int = _DEFAULT_SAMPLES,
                   radii: Sequence[float] | None = None, scale: float = 1.0) -> JumpExpansion:
    """Tabulate the n-independent parts of ``J_R`` on the circles around all edges.

    ``radii`` (one per edge) default to those of :func:`gfunction.local.edge_parametrix`
    (a third of the distance to the nearest other edge, inside the region where h is
    trusted); ``scale`` multiplies them (the residue check uses ``scale = 1/2``).
    Refuses (``InputError``) a factor with a singular point inside a band.
    """
    order = _check_order(order)
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or samples < 8 or samples % 2:
        raise InputError(f"samples per circle must be an even integer >= 8; got {samples!r}")
    _refuse_interior_singularities(predictor)
    gf = predictor.g
    eps = []
    for i in range(len(gf.edge_points)):
        ep = edge_parametrix(predictor, i, radius=None if radii is None else float(radii[i]))
        if scale != 1.0:
            ep = edge_parametrix(predictor, i, radius=ep.radius * scale)
        eps.append(ep)
    C = len(eps)
    pts = np.empty((C, samples), dtype=complex)
    z1 = np.empty((C, samples), dtype=complex)
    s1 = np.empty((C, samples), dtype=complex)
    hl = np.empty((C, samples), dtype=complex)
    ser = np.zeros((C, max(order, 1), 2, 2), dtype=complex)
    poles = np.zeros((C, max(order, 1)), dtype=int)
    t = None
    for c, ep in enumerate(eps):
        s, t = circle_points(ep.edge, ep.radius, samples)
        pts[c] = s
        z1[c] = zeta1 = ep.zeta(s, 1)
        s1[c] = (2.0 / 3.0) * zeta1 ** 1.5 if ep.kind == "soft" else 2.0 * zeta1
        hl[c] = ep._half_log_W_minus_log_D(s)
        if order:
            Q = series_matrices(ep.kind, order, ep.alpha)
            ser[c] = _S3 @ Q @ _S3 if ep.side < 0 else Q
            poles[c] = [pole_order(ep.kind, k) for k in range(1, order + 1)]
    if not np.all(np.isfinite(s1)) or not np.all(np.isfinite(hl)):
        raise NumericalFailure("the local variables or the factor are not finite on the matching circles")
    side = np.where(pts.imag >= 0, 1.0, -1.0)
    table = outer_table(predictor.model, pts.ravel())
    return JumpExpansion(predictor, tuple(eps), samples, pts, t, z1, s1, hl, side, ser[:, :order],
                         poles[:, :order], table, order)


# ------------------------------------------------------------ the correction series
@dataclass(frozen=True)
class ResidualExpansion:
    r"""``R = I + Σ_{k≤K} R^{(k)}/n^k`` for a batch of degrees (module docstring).

    Attributes
    ----------
    degrees : int ndarray (N,)
    order : int                            K
    jump : JumpExpansion
    modes : complex (K, N, C, L, 2, 2)     Fourier coefficients of ``F_k`` on circle c (FFT order)
    infinity : complex (K, N, P, 2, 2)     ``R^{(k)}_p``, p = 1 … P (``R^{(k)} = Σ_p R^{(k)}_p z^{-p}``)
    verified : bool                        every figure of :data:`TOLERANCES` within its tolerance
    checks : dict of float                 see the module docstring (empty when ``verify=False``)
    message : str                          the failed figures (``equilibrium.verification``)
    """

    degrees: np.ndarray
    order: int
    jump: JumpExpansion
    modes: np.ndarray
    infinity: np.ndarray
    verified: bool = False
    checks: dict = field(default_factory=dict)
    message: str = ""

    def term(self, k: int, z) -> np.ndarray:
        """``R^{(k)}(z)``, shape (N,) + z.shape + (2, 2); inside a disc the analytic (inner) R.

        Points on a circle get the outer boundary value.
        """
        if not 1 <= k <= self.order:
            raise InputError(f"R^(k) is available for k = 1..{self.order}; got {k}")
        z = np.asarray(z, dtype=complex)
        flat = z.ravel()
        c_modes = self.modes[k - 1]                         # (N, C, L, 2, 2)
        N, C, L = c_modes.shape[:3]
        m = np.fft.fftfreq(L, 1.0 / L).astype(int)
        out = np.zeros((N, flat.size, 2, 2), dtype=complex)
        for c in range(C):
            e, r = self.jump.centres[c], self.jump.radii[c]
            tt = (flat - e) / r
            inside = np.abs(tt) < 1.0
            powers = tt[:, None] ** m[None, :]               # (P, L)
            sel = np.where(inside[:, None], (m >= 0)[None, :] * -1.0, (m < 0)[None, :] * 1.0)
            out += np.einsum("pl,nlij->npij", powers * sel, c_modes[:, c])
        return out.reshape((N,) + z.shape + (2, 2))

    def value(self, z, order: int | None = None) -> np.ndarray:
        """``I + Σ_{k ≤ order} R^{(k)}(z)/n^k`` (order defaults to K); shape (N,) + z.shape + (2, 2)."""
        order = self.order if order is None else int(order)
        z = np.asarray(z, dtype=complex)
        n = self.degrees.astype(float).reshape((-1,) + (1,) * (z.ndim + 2))
        out = np.broadcast_to(np.eye(2, dtype=complex), (self.degrees.size,) + z.shape + (2, 2)).copy()
        for k in range(1, order + 1):
            out = out + self.term(k, z) / n ** k
        return out

    def _circle_basis(self, flat: np.ndarray):
        r"""Per circle ``c``: ``(inside, t^{-m} (m = 1 … keep), t^m (m = 0 … L/2-1) at the inside points)``.

        ``t = (z - e_c)/r_c`` depends on ``z`` only, so these powers serve every degree.
        """
        L = self.modes.shape[3]
        keep = _principal_modes(self.jump)
        neg = np.arange(1, keep + 1)
        pos = np.arange(L // 2)
        out = []
        for e, r in zip(self.jump.centres, self.jump.radii):
            tt = (flat - e) / r
            inside = np.abs(tt) < 1.0
            out.append((inside, tt[:, None] ** -neg[None, :], tt[inside][:, None] ** pos[None, :]))
        return out

    def paired_value(self, z, rows, order: int | None = None) -> np.ndarray:
        r"""``I + Σ_{k ≤ order} R^{(k)}(z_p)/n^k`` with the degree ``degrees[rows[p]]`` at point ``p``.

        The same ``R`` as :meth:`value` for all points and degrees at once: outside circle ``c``
        its transform is the principal part ``Σ_{m=1}^{keep} c_{-m} t^{-m}`` (the modes below
        ``-keep`` are rounding, ``checks['meromorphic']``; the coefficients at ∞ and the inner
        values of :func:`residual_expansion` use the same principal part), inside it
        ``-Σ_{m=0}^{L/2-1} c_m t^m``; the modes are gathered per point.  Shape ``z.shape + (2, 2)``.
        """
        order = self.order if order is None else int(order)
        z = np.asarray(z, dtype=complex)
        flat = z.ravel()
        rows = np.broadcast_to(np.asarray(rows, dtype=np.int64), z.shape).ravel()
        L = self.modes.shape[3]
        keep = _principal_modes(self.jump)
        neg_idx = L - np.arange(1, keep + 1)
        basis = self._circle_basis(flat)
        n = self.degrees.astype(float)[rows][:, None, None]
        out = np.broadcast_to(np.eye(2, dtype=complex), flat.shape + (2, 2)).copy()
        for k in range(1, order + 1):
            cm = self.modes[k - 1]                                   # (N, C, L, 2, 2)
            term = np.zeros(flat.shape + (2, 2), dtype=complex)
            for c, (inside, negp, posp) in enumerate(basis):
                outside = ~inside
                if np.any(outside):
                    g = cm[rows[outside], c][:, neg_idx]             # (P_out, keep, 2, 2)
                    term[outside] += np.einsum("pm,pmij->pij", negp[outside], g)
                if np.any(inside):
                    g = cm[rows[inside], c, : L // 2]                # (P_in, L/2, 2, 2)
                    term[inside] -= np.einsum("pm,pmij->pij", posp, g)
            out = out + term / n ** k
        return out.reshape(z.shape + (2, 2))

    def grid_value(self, z, rows, order: int | None = None) -> np.ndarray:
        r"""``I + Σ_{k ≤ order} R^{(k)}(z_q)/n^k`` at every point ``z_q`` for every degree ``degrees[rows[i]]``.

        :meth:`paired_value` on the grid ``rows × z``: one matrix product per circle and order
        (the powers of ``t`` are shared by the degrees).  Shape ``(len(rows),) + z.shape + (2, 2)``.
        """
        order = self.order if order is None else int(order)
        z = np.asarray(z, dtype=complex)
        flat = z.ravel()
        rows = np.atleast_1d(np.asarray(rows, dtype=np.int64))
        N, P = rows.size, flat.size
        L = self.modes.shape[3]
        keep = _principal_modes(self.jump)
        neg_idx = L - np.arange(1, keep + 1)
        basis = self._circle_basis(flat)
        n = self.degrees.astype(float)[rows][:, None, None, None]
        out = np.broadcast_to(np.eye(2, dtype=complex), (N, P, 2, 2)).copy()
        for k in range(1, order + 1):
            cm = self.modes[k - 1][rows]                             # (N, C, L, 2, 2)
            term = np.zeros((P, N * 4), dtype=complex)
            for c, (inside, negp, posp) in enumerate(basis):
                outside = ~inside
                if np.any(outside):
                    g = cm[:, c, neg_idx].transpose(1, 0, 2, 3).reshape(keep, N * 4)
                    term[outside] += negp[outside] @ g
                if np.any(inside):
                    g = cm[:, c, : L // 2].transpose(1, 0, 2, 3).reshape(L // 2, N * 4)
                    term[inside] -= posp @ g
            out = out + term.reshape(P, N, 2, 2).transpose(1, 0, 2, 3) / n ** k
        return out.reshape((N,) + z.shape + (2, 2))

    def at_infinity(self, order: int | None = None) -> np.ndarray:
        """``Σ_{k ≤ order} R^{(k)}_p / n^k``: the coefficients of ``R - I`` at ∞; (N, P, 2, 2)."""
        order = self.order if order is None else int(order)
        n = self.degrees.astype(float)[:, None, None, None]
        return sum((self.infinity[k] / n ** (k + 1) for k in range(order)),
                   np.zeros(self.infinity.shape[1:], dtype=complex))


def _principal_modes(jump: JumpExpansion) -> int:
    """How many negative modes ``-1 … -keep`` make the principal parts: the pole order and a margin."""
    L = jump.samples
    return int(min(L // 2 - 1, int(np.max(jump.poles)) + _MODE_MARGIN))


def _negative_part(modes: np.ndarray, count: int) -> np.ndarray:
    """Keep the modes ``-count … -1`` (FFT order), zero elsewhere; along axis -3 (L)."""
    L = modes.shape[-3]
    keep = np.zeros(L, dtype=bool)
    keep[L - count:] = True
    return modes * keep[:, None, None]


def _principal_part_matrix(jump: JumpExpansion, count: int) -> np.ndarray:
    """``X`` (C·L, C·count): column (c', m) holds ``((s - e')/r')^{-m}``, m = 1 … count, at the points of
    every circle (``t^{-m}`` on circle c' itself): the principal parts of all circles at all points."""
    C, L = jump.points.shape
    X = np.empty((C, L, C, count), dtype=complex)
    m = np.arange(1, count + 1)
    for c_src in range(C):
        tt = (jump.points - jump.centres[c_src]) / jump.radii[c_src]          # (C, L)
        X[:, :, c_src, :] = tt[..., None] ** -m
    return X.reshape(C * L, C * count)


def _infinity_coefficients(modes: np.ndarray, jump: JumpExpansion, terms: int) -> np.ndarray:
    """``R_p = Σ_circles r Σ_{q<p} binom(p-1,q) e^{p-1-q} r^q c_{-(q+1)}``; modes (..., C, L, 2, 2)."""
    L = modes.shape[-3]
    out = np.zeros(modes.shape[:-4] + (terms, 2, 2), dtype=complex)
    for c, (e, r) in enumerate(zip(jump.centres, jump.radii)):
        for p in range(1, terms + 1):
            for q in range(p):
                out[..., p - 1, :, :] += (r * comb(p - 1, q) * e ** (p - 1 - q) * r ** q
                                          * modes[..., c, L - (q + 1), :, :])
    return out


def residual_expansion(predictor, degrees, order: int = 2, *, samples: int = _DEFAULT_SAMPLES,
                       jump: JumpExpansion | None = None, infinity_terms: int = 2,
                       verify: bool = True, on_failure: str = "raise") -> ResidualExpansion:
    """``R^{(1)} … R^{(K)}`` for each degree (degree = scaling n), with checks.

    Parameters
    ----------
    predictor : gfunction.Predictor (g-function, outer parametrix, Szegő function).
    degrees : the degrees n (``w_n = e^{-nV} h`` at degree n).
    order : K, 1 … MAX_ORDER.
    samples : points per circle (even); the trapezoidal rule converges geometrically.
    jump : a precomputed :func:`jump_expansion` of at least this order (speed).
    infinity_terms : how many coefficients ``R_p`` at infinity to keep (2 give a_n, b_n).
    verify : compute the checks of the module docstring (for the first degree only:
        they cost a second set of circles).  Without them the result is not verified
        (``message`` says so) and ``on_failure`` is not applied.
    on_failure : ``"raise"`` or ``"mark"`` (``equilibrium.verification``).
    """
    failure_policy(on_failure)
    order = _check_order(order)
    if order < 1:
        raise InputError("residual_expansion needs order >= 1 (order 0 is R = I)")
    degrees = np.atleast_1d(np.asarray(degrees))
    if degrees.ndim != 1 or degrees.size == 0 or np.any(degrees < 1) or np.any(degrees != np.round(degrees)):
        raise InputError(f"degrees must be positive integers; got {degrees!r}")
    degrees = degrees.astype(np.int64)
    if jump is None or jump.order < order:
        jump = jump_expansion(predictor, order, samples=samples)
    NU = jump.outer_times_u(degrees)
    delta = jump.terms(degrees, NU)[:order]                   # (K, N, C, L, 2, 2)
    C, L = jump.points.shape
    keep = _principal_modes(jump)
    X = _principal_part_matrix(jump, keep)
    idx = L - np.arange(1, keep + 1)                          # FFT positions of the modes -1 … -keep
    N = degrees.size
    modes = np.empty(delta.shape, dtype=complex)
    inner = []                                                # R^{(k)}_- on the circles
    for k in range(1, order + 1):
        F = delta[k - 1].copy()
        for j in range(1, k):
            F += _mul(inner[k - j - 1], delta[j - 1])
        cm = fourier_modes(F, axis=-3)
        modes[k - 1] = cm
        if k == order:
            break                                             # R^{(K)}_- is not needed
        # inside value: own circle -Σ_{m≥0} c_m t^m = -F + principal part; the other circles'
        # principal parts from outside; all by one product with X
        coef = cm[:, :, idx].reshape(N, C * keep, 4)
        inner.append(-F + (X @ coef).reshape(N, C, L, 2, 2))
    infinity = np.stack([_infinity_coefficients(_negative_part(modes[k], keep), jump, infinity_terms)
                         for k in range(order)])
    if not verify:
        return ResidualExpansion(degrees, order, jump, modes, infinity, False, {},
                                 "residual expansion: checks not computed (verify=False)")
    checks = float_checks(_checks(predictor, jump, degrees, delta, modes, inner, infinity, keep, samples))
    message = failure_message(checks, TOLERANCES, what="residual expansion")
    return settle(ResidualExpansion(degrees, order, jump, modes, infinity, not message, checks, message),
                  on_failure)


def _checks(predictor, jump, degrees, delta, modes, inner, infinity, keep, samples) -> dict:
    order = delta.shape[0]
    C, L = jump.points.shape
    checks: dict = {}
    scale = max(1.0, float(np.max(np.abs(infinity[:, 0]))))
    # modes below -pole order must be rounding (meromorphic F_k with a pole at the edge only)
    worst = 0.0
    tail = 0.0
    for k in range(order):
        # F_k = Σ R^{(k-j)}_- Δ_j: R_- is analytic in the disc, so the pole order is that of Δ_1 … Δ_k
        p = int(np.max(jump.poles[:, : k + 1]))
        cm = np.abs(modes[k])                                 # (N, C, L, 2, 2)
        size = np.max(cm, axis=(2, 3, 4)) + 1e-300             # (N, C)
        below = np.max(cm[:, :, L // 2: L - p], axis=(2, 3, 4))   # modes -L/2 … -p-1
        worst = max(worst, float(np.max(below / size)))
        top = np.max(cm[:, :, L // 2 - 4: L // 2], axis=(2, 3, 4))
        tail = max(tail, float(np.max(top / size)))
    checks["meromorphic"] = worst
    checks["fourier_tail"] = tail
    # symmetry of a real weight: R_p = σ₃ conj(R_p) σ₃
    sym = infinity - _S3 @ np.conj(infinity) @ _S3
    checks["symmetry"] = float(np.max(np.abs(sym))) / scale
    # determinant order by order at points outside the discs and inside each disc
    res = ResidualExpansion(degrees[:1], order, jump, modes[:, :1], infinity[:, :1])
    hull = (min(jump.centres - jump.radii), max(jump.centres + jump.radii))
    mid, half = 0.5 * (hull[0] + hull[1]), 0.5 * (hull[1] - hull[0])
    zs = np.concatenate([mid + 1.3 * half * np.exp(1j * np.array([0.4, 1.9, -2.6])),
                         jump.centres + 0.5 * jump.radii * np.exp(0.7j)])
    R1 = res.term(1, zs)[0]
    det_res = float(np.max(np.abs(R1[..., 0, 0] + R1[..., 1, 1])))
    if order >= 2:
        R2 = res.term(2, zs)[0]
        det_res = max(det_res, float(np.max(np.abs(R2[..., 0, 0] + R2[..., 1, 1] + _det(R1)))))
    checks["determinant"] = det_res
    full = res.value(zs)[0]
    checks["determinant_at_n"] = float(np.max(np.abs(_det(full) - 1)))
    # series against the exact jump for the first degree
    n0 = int(degrees[0])
    exact = jump.exact_minus_identity(n0)
    series = sum(delta[k, 0] / float(n0) ** (k + 1) for k in range(order))
    checks["series_vs_exact_jump"] = float(np.max(np.abs(exact - series)))
    # residue form: principal parts from circles of half the radius
    small = jump_expansion(predictor, order, samples=samples, scale=0.5)
    sub = residual_expansion(predictor, degrees[:1], order, jump=small, infinity_terms=infinity.shape[2],
                             verify=False)
    checks["trapezoid_vs_residue"] = float(np.max(np.abs(sub.infinity[:, 0] - infinity[:, 0]))) / scale
    return checks
