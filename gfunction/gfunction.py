r"""The g-function of an equilibrium measure and the φ-functions at its edges.

Conventions
-----------
Those of :mod:`equilibrium.conventions`: ``g(z) = ∫ log(z - s) dμ_V(s)``, principal
logarithms, so ``g`` is analytic off ``(-∞, b_k]``, ``g_+ + g_- - V + ℓ = 0`` on the
support and ``g_+ - g_- = 2πi μ_V([x, b_k])`` on the line (``2πi`` left of ``a_1``).

The equilibrium measure supplies the factorisation (see ``equilibrium``)

.. math::  G(z) - V'(z)/2 = -\tfrac12 h(z)\, r(z), \qquad r = R^{1/2}/Q_{hard},

where ``G(z) = ∫ dμ(s)/(z - s) = g'(z)``.

φ-functions
-----------
For an edge ``e`` put ``φ_e(z) = ∫_e^z h(s) r(s) ds``, the path running from
``e`` to ``z`` inside the closed half-plane of ``z`` (for real ``z`` on a band
the + side is meant).  Integrating ``g' = V'/2 - h r/2`` from ``e``, where

.. math::  g_\pm(e) = \tfrac12 (V(e) - ℓ) \pm πi\, Ω(e), \qquad Ω(e) = μ_V([e, b_k])

(the two relations above evaluated at the edge), gives for ``± Im z > 0``

.. math::  g(z) = \tfrac12 (V(z) - ℓ) \pm πi\, Ω(e) - \tfrac12 φ_e(z).        (★)

In particular ``V - ℓ - 2 Re g = Re φ_e`` is the effective potential off the
support and ``g_+ - g_- = -φ_{e,+} ... `` reduces on a band to
``g_+ - g_- = 2πiΩ(e) - φ_{e,+}``, since ``φ_{e,-} = -φ_{e,+}`` there
(Deift, Kriecherbauer, McLaughlin, Venakides, Zhou, Comm. Pure Appl. Math. 52
(1999) 1335–1425, §4; Kuijlaars, McLaughlin, Van Assche, Vanlessen, Adv. Math.
188 (2004) 337–398, §§6–7 for hard edges).

Evaluation
----------
* Far from the support (outside a Bernstein ellipse of parameter 1.6 around
  every band) ``g`` is the Gauss–Jacobi sum of ``log(z - s) ψ(s)`` over the
  bands (geometric convergence, common practice).  For a non-polynomial V,
  whose h is a fitted series trusted only near the real line
  (``EquilibriumMeasure.h_ellipse``), the switch moves closer to the bands
  (``GFunction.far_rho``) and the sum takes enough nodes for ρ^{-2n} ≤ 1e-16.
* Near the support (★) is used with the edge nearest to ``z``; the integral
  for ``φ_e`` is a Gauss–Jacobi rule on the straight segment with the endpoint
  exponent of ``r`` at ``e`` (+1/2 soft, −1/2 hard), graded toward ``e``.

The two evaluations are compared on a ring where both are valid; the
difference is recorded in ``GFunction.checks['continuity']`` and it also
certifies ``ℓ`` and the phases, since (★) uses them and the far sum does not.

Local variables at the edges
----------------------------
* Soft edge: ``f_e(z) = (3 φ_e(z)/4)^{2/3}``, written as
  ``f_e(z) = (3/4)^{2/3} (z - e) q(z)^{1/3}`` with ``q = φ_e²/(z-e)³`` and the
  real cube root at ``z = e``; ``f_e`` is conformal near ``e``, positive
  outside the support and negative on the band side.  The Airy variable is
  ``ζ = n^{2/3} f_e(z)``, so that ``(2/3) ζ^{3/2} = n φ_e / 2``.  Its derivative
  is ``f_e'(e) = (c²/4)^{1/3}``, ``c² = h(e)² ∏_{e'≠e}(e - e') / Q_hard(e)²``
  (DKMVZ 1999, §7).
* Hard edge: ``f_e(z) = φ_e(z)²/16``, negative on the band side; the Bessel
  variable is ``ζ = n² f_e(z)`` so that ``2 ζ^{1/2} = n φ_e / 2``
  (KMVV 2004, §6, with their φ equal to our φ/2 for the Jacobi case).
  ``f_e'(e) = h(e)² ∏_{e'≠e}(e - e') / (4 Q_hard'(e)²)``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np

from equilibrium.errors import InputError
from equilibrium.quadrature import graded_jacobi_rule
from equilibrium.verification import failure_message, failure_policy, float_checks, settle

__all__ = ["GFunction", "g_function", "EdgeVariable", "trusted_radius"]

# Bernstein-ellipse parameter beyond which the direct sum is used.
_FAR_RHO = 1.6
_BAND_NODES = 96
_SEGMENT_NODES = 24
_SEGMENT_PANELS = 6


def _bernstein_rho(z: np.ndarray, a: float, b: float) -> np.ndarray:
    w = (2.0 * z - (a + b)) / (b - a)
    s = np.sqrt(w - 1.0) * np.sqrt(w + 1.0)  # branch with |w + s| >= 1
    return np.abs(w + s)


@dataclass(frozen=True)
class EdgeVariable:
    """Local variable at an edge: ``kind``, position, side and ``f'(e)``.

    ``side`` is ``+1`` for a right edge (band to the left) and ``-1`` for a
    left edge.  ``derivative`` is ``f_e'(e)``: the Airy variable is
    ``ζ ≈ n^{2/3} f_e'(e)(z - e)``, the Bessel variable ``ζ ≈ n² f_e'(e)(z - e)``.
    """

    edge: float
    kind: str
    side: int
    omega: float
    derivative: float


@dataclass(frozen=True)
class GFunction:
    """The g-function of an equilibrium measure (see module docstring).

    Attributes
    ----------
    support, edge_kinds, omega, lagrange :
        Copied from the measure; ``edge_kinds[i]`` belongs to ``edge_points[i]``.
    edge_points :
        ``(a_1, b_1, …, a_k, b_k)``.
    moments :
        ``m_j = ∫ s^j dμ`` for ``j = 0 … 8`` (``m_0`` is the total mass).
    checks :
        ``'mass'``: |Σ weights − 1|; ``'continuity'``: max difference of the
        two evaluations of g on rings around each band; ``'jump'``:
        max |g_+ + g_- − V + ℓ| on sample points of the bands; ``'gap_phase'``:
        max |g_+ − g_- − 2πiΩ_j| in the gaps.
    verified, message :
        Whether every check is within tolerance, and the failed ones
        (:mod:`equilibrium.verification`).
    """

    measure: Any
    support: tuple
    edge_points: tuple
    edge_kinds: tuple
    omega: np.ndarray
    lagrange: float
    moments: np.ndarray
    edges: tuple
    checks: dict = field(default_factory=dict)
    verified: bool = True
    message: str = ""
    far_rho: float = _FAR_RHO  # Bernstein parameter (per band) beyond which the direct sum is used
    _nodes: np.ndarray = field(default=None, repr=False)
    _weights: np.ndarray = field(default=None, repr=False)
    #: trailing part of Ω (zeros unless the measure carries ``omega_low``: gfunction.phase)
    omega_low: np.ndarray = field(default=None, repr=False)

    # -- pieces ----------------------------------------------------------
    def V(self, z):
        return self.measure.field.V(z)

    def edge_omega(self, i: int, low: bool = False) -> float:
        """``Ω(e) = μ([e, b_k])`` for edge number ``i`` of ``edge_points`` (its trailing part
        ``Ω_lo`` with ``low=True``; 0 at the outer edges, where Ω(e) is 1 or 0 exactly)."""
        k = len(self.support)
        band, right = divmod(i, 2)
        omega = self.omega_low if low else self.omega
        if right:
            return float(omega[band]) if band < k - 1 else 0.0
        return float(omega[band - 1]) if band > 0 else (0.0 if low else 1.0)

    def phi(self, i: int, z) -> np.ndarray:
        r"""``φ_e(z) = ∫_e^z h(s) r(s) ds`` for edge number ``i`` (see module doc).

        For real ``z`` the + boundary value is returned where there is a cut.
        """
        z = np.asarray(z, dtype=complex)
        e = self.edge_points[i]
        beta = 0.5 if self.edge_kinds[i] == "soft" else -0.5
        return _segment_integral(self.measure, e, beta, z)

    def _near(self, z: np.ndarray) -> np.ndarray:
        pts = np.asarray(self.edge_points)
        nearest = np.argmin(np.abs(z[..., None] - pts), axis=-1)
        out = np.empty(z.shape, dtype=complex)
        upper = np.where(z.imag >= 0, 1.0, -1.0)
        for i in range(len(pts)):
            sel = nearest == i
            if not np.any(sel):
                continue
            zi = z[sel]
            out[sel] = (0.5 * (self.V(zi) - self.lagrange)
                        + 1j * np.pi * upper[sel] * self.edge_omega(i)
                        - 0.5 * self.phi(i, zi))
        return out

    def _far(self, z: np.ndarray) -> np.ndarray:
        return np.log(z[..., None] - self._nodes) @ self._weights

    def _is_far(self, z: np.ndarray) -> np.ndarray:
        far = np.ones(z.shape, dtype=bool)
        for a, b in self.support:
            far &= _bernstein_rho(z, a, b) >= self.far_rho
        return far

    # -- public ----------------------------------------------------------
    def __call__(self, z) -> np.ndarray:
        """``g(z)``; on the cut ``(-∞, b_k]`` the + boundary value (principal log)."""
        z = np.asarray(z, dtype=complex)
        shape = z.shape
        z = z.ravel()
        out = np.empty(z.shape, dtype=complex)
        far = self._is_far(z)
        if np.any(far):
            out[far] = self._far(z[far])
        if np.any(~far):
            out[~far] = self._near(z[~far])
        return out.reshape(shape)

    def boundary_values(self, x) -> tuple[np.ndarray, np.ndarray]:
        """``(g_+(x), g_-(x))`` on the real line (they agree right of ``b_k``)."""
        x = np.asarray(x, dtype=float)
        gp = self(x.astype(complex))
        return gp, np.conj(gp)  # g(z̄) = conj g(z) for a real measure

    def derivative(self, z) -> np.ndarray:
        """``g'(z) = G(z)``, the Stieltjes transform (from the measure)."""
        return self.measure.stieltjes(np.asarray(z, dtype=complex))

    def local_variable(self, i: int, z) -> np.ndarray:
        """The conformal map ``f_e`` at edge number ``i`` (module docstring)."""
        z = np.asarray(z, dtype=complex)
        e = self.edge_points[i]
        ph = self.phi(i, z)
        fd = self.edges[i].derivative
        if self.edge_kinds[i] == "hard":
            return ph ** 2 / 16.0
        # soft: (3/4)^{2/3} (z-e) q^{1/3}, q = φ²/(z-e)³, q(e) = (4/9) c²,
        # and (3/4)^{2/3} cbrt(q(e)) = f'(e).
        q = ph ** 2 / (z - e) ** 3
        # q(e) = (4/9) c² and f'(e)³ = c²/4  =>  q(e) = (16/9) f'(e)³
        q0 = (16.0 / 9.0) * fd ** 3
        return (0.75 ** (2.0 / 3.0)) * (z - e) * np.cbrt(q0) * (q / q0) ** (1.0 / 3.0)


@lru_cache(maxsize=32)
def _graded_rule(beta: float, nodes: int = _SEGMENT_NODES):
    """Composite rule on [0,1] for t^beta f(t), panels graded toward t = 0.

    Panels ``[0, 4^{-P+1}], …, [1/4, 1]``: Gauss–Jacobi on the first, with the
    factor ``t^beta`` kept in the weight; Gauss–Legendre with the factor in
    the integrand on the others (every panel from
    :func:`equilibrium.quadrature.graded_jacobi_rule`).  Returns read-only
    ``(t, w)`` such that ``∫_0^1 t^beta f(t) dt ≈ Σ w_i f(t_i)``.
    """
    edges = [0.0] + [4.0 ** (-p) for p in range(_SEGMENT_PANELS - 1, -1, -1)]
    ts, ws = [], []
    for i, (lo, hi) in enumerate(zip(edges[:-1], edges[1:])):
        t, w = graded_jacobi_rule(lo, hi, 0.0, beta if i == 0 else 0.0, n=nodes)
        ts.append(t)
        ws.append(w if i == 0 else w * t ** beta)
    t, w = np.concatenate(ts), np.concatenate(ws)
    t.setflags(write=False)
    w.setflags(write=False)
    return t, w


def _segment_integral(measure, e: float, beta: float, z: np.ndarray) -> np.ndarray:
    r"""``∫_e^z h(s) r(s) ds`` on the straight segment, ``r ~ (s-e)^beta``.

    With ``s = e + t (z - e)``: ``(s-e)^beta = t^beta (z-e)^beta`` branch-free
    in ``t``, so the smooth factor ``h r (z-e) / t^beta`` is sampled.  For real
    ``z`` the nodes are lifted by a tiny positive imaginary part to select the
    + boundary value on a band.
    """
    # the last panel, [1/4, 1] of the segment, must resolve h: a polynomial of degree
    # len(h) - 1 on the window (long for a non-polynomial V)
    t, w = _graded_rule(beta, max(_SEGMENT_NODES, measure.h_degree // 2 + 8))
    dz = z - e
    lift = np.where(z.imag == 0.0, 1e-300j, 0.0)
    offset = t[:, None] * dz[None, :] + lift[None, :]
    s = e + offset
    f = measure.h(s) * _sqrt_ratio_near(measure, s, e, offset)
    return (w[:, None] * f / t[:, None] ** beta).sum(axis=0) * dz


def _sqrt_ratio_near(measure, s: np.ndarray, e: float, offset: np.ndarray) -> np.ndarray:
    """``R^{1/2}(s)/Q_h(s)`` (``measure.sqrt_ratio``) with the factor of the end ``e`` taken from
    ``offset = s - e`` as given, not from the rounded difference of ``s`` and ``e``.

    At ``s = e + t(z - e)`` with small ``t`` the difference ``s - e`` keeps only
    ``ε|e|/|s - e|`` of its relative accuracy; next to a hard end ``e ≠ 0`` that cost the local
    variable 5e-10 (relative) at ``|z - e| = 1e-4`` and 4e-6 at ``1e-8`` (V = 0 on [-1, 1] against
    ``-arccos(x)²/4``); with the offset it keeps rounding accuracy.
    """
    from equilibrium.radical import sqrt_R

    ends = np.asarray(measure.structure.ends, dtype=float)
    hard = np.asarray(measure.structure.hard, dtype=bool)
    own = int(np.argmin(np.abs(ends - e)))
    value = sqrt_R(s, np.delete(ends, own)) * np.sqrt(offset)
    for j in np.nonzero(hard)[0]:
        value = value / (offset if j == own else s - ends[j])
    return value


def _band_rule(measure, n: int):
    """Nodes and weights with ``Σ w_i f(x_i) ≈ ∫ f dμ`` (Gauss–Jacobi per band).

    The weight ``(x - a)^α (b - x)^β`` carries the edge behaviour of the
    density (α, β = 1/2 soft, -1/2 hard); the smooth rest ``ψ / weight`` is
    evaluated from the rule's accurate end distances.
    """
    xs, ws = [], []
    for (a, b), (ka, kb) in zip(measure.support, measure.edges):
        alpha = 0.5 if ka == "soft" else -0.5
        beta = 0.5 if kb == "soft" else -0.5
        x, wt, da, db = graded_jacobi_rule(a, b, beta, alpha, n=n, return_distances=True)
        xs.append(x)
        ws.append(wt * measure.density(x) / (da ** alpha * db ** beta))
    return np.concatenate(xs), np.concatenate(ws)


def _edge_derivative(measure, pts, kinds, i) -> float:
    e = pts[i]
    others = np.prod([e - p for j, p in enumerate(pts) if j != i])
    hard = [p for p, kd in zip(pts, kinds) if kd == "hard"]
    he = complex(np.asarray(measure.h(np.array([e + 0j])))[0]).real
    if kinds[i] == "soft":
        qh = np.prod([e - p for p in hard]) if hard else 1.0
        c2 = he ** 2 * others / qh ** 2
        return float(np.cbrt(c2 / 4.0))
    dq = np.prod([e - p for p in hard if p != e]) if len(hard) > 1 else 1.0
    return float(he ** 2 * others / (4.0 * dq ** 2))


def g_function(measure, *, nodes: int = _BAND_NODES, tolerance: float = 1e-10,
               on_failure: str = "raise") -> GFunction:
    """Build the g-function of ``measure`` and its checks.

    Parameters
    ----------
    measure :
        An ``equilibrium.EquilibriumMeasure`` (positive, any number of bands).
    nodes :
        Gauss–Jacobi nodes per band for the far-field sum (at least; more when the
        switch to it is closer than ρ = 1.6, see :func:`_switch_rho`).
    tolerance :
        Largest accepted value of a check.
    on_failure :
        ``"raise"`` (NumericalFailure beyond tolerance) or ``"mark"`` (the result
        with ``verified = False``); see :mod:`equilibrium.verification`.
    """
    failure_policy(on_failure)
    support = tuple(tuple(map(float, ab)) for ab in measure.support)
    if len(support) == 0:
        raise InputError("the equilibrium measure has no bands; a g-function needs a support")
    kinds = tuple(kd for pair in measure.edges for kd in pair)
    pts = tuple(x for ab in support for x in ab)
    far_rho = _switch_rho(support, measure.window, measure.h_ellipse)
    # the direct sum must be accurate from the switch on: Gauss–Jacobi error ~ ρ^{-2n}
    nodes = max(nodes, int(np.ceil(18.5 / np.log(far_rho))) + 8)
    x, w = _band_rule(measure, nodes)
    moments = np.array([np.sum(w * x ** j) for j in range(9)])
    k = len(support)
    omega = np.asarray(measure.omega, dtype=float).reshape(k - 1)
    low = getattr(measure, "omega_low", None)
    omega_low = np.zeros(k - 1) if low is None else np.asarray(low, dtype=float).reshape(k - 1)
    edges = []
    for i, e in enumerate(pts):
        side = 1 if i % 2 else -1
        band, right = divmod(i, 2)
        om = (omega[band] if band < k - 1 else 0.0) if right else (omega[band - 1] if band > 0 else 1.0)
        edges.append(EdgeVariable(e, kinds[i], side, float(om), _edge_derivative(measure, pts, kinds, i)))
    gf = GFunction(measure=measure, support=support, edge_points=pts, edge_kinds=kinds,
                   omega=omega, lagrange=float(measure.lagrange), moments=moments,
                   edges=tuple(edges), far_rho=far_rho, _nodes=x, _weights=w, omega_low=omega_low)
    checks = float_checks(_verify(gf))
    message = failure_message(checks, {key: tolerance for key in checks}, what="the g-function")
    object.__setattr__(gf, "checks", checks)
    object.__setattr__(gf, "verified", not message)
    object.__setattr__(gf, "message", message)
    return settle(gf, on_failure)


def _switch_rho(support, window, h_rho: float) -> float:
    """The largest Bernstein parameter ρ (per band; at most 1.6) such that the ellipses of
    parameter 1.05 ρ around the bands lie inside the ellipse of parameter ``h_rho`` around
    the window, where (★) may use h (1.05 ρ: the ring of the continuity check).

    A polynomial V (``h_rho`` infinite) keeps 1.6.  For other fields h is a fitted series,
    trusted only near the real line, so the direct sum takes over closer to the bands.
    """
    if not np.isfinite(h_rho):
        return _FAR_RHO
    th = np.linspace(0.0, 2.0 * np.pi, 65)[:-1]
    for rho in (_FAR_RHO, 1.4, 1.3, 1.2, 1.15, 1.1, 1.07, 1.05, 1.03, 1.02, 1.01):
        wv = 0.5 * (1.05 * rho * np.exp(1j * th) + np.exp(-1j * th) / (1.05 * rho))
        if all(_inside_h_ellipse((a + b) / 2 + (b - a) / 2 * wv, window, h_rho) for a, b in support):
            return rho
    return 1.01


def _inside_h_ellipse(z: np.ndarray, window, h_rho: float) -> bool:
    """All points z inside the Bernstein ellipse of parameter ``h_rho`` around the window."""
    return bool(np.all(_bernstein_rho(z, *window) <= h_rho))


def trusted_radius(measure, x: float) -> float:
    """Largest r such that the disc |z - x| ≤ r lies where the measure's h may be used off the
    real line (inside ``measure.h_ellipse`` around its window); ``inf`` for a polynomial V.

    Discs used with (★) -- matching circles of the local parametrices -- must stay inside.
    """
    h_rho = measure.h_ellipse
    if not np.isfinite(h_rho):
        return np.inf
    lower, upper = measure.window
    circle = np.exp(1j * np.linspace(0.0, 2.0 * np.pi, 65)[:-1])
    lo, hi = 0.0, upper - lower
    for _ in range(40):  # bisection on the radius
        r = 0.5 * (lo + hi)
        if _inside_h_ellipse(x + r * circle, measure.window, h_rho):
            lo = r
        else:
            hi = r
    return lo


def _verify(gf: GFunction) -> dict:
    checks = {"mass": abs(gf.moments[0] - 1.0)}
    # continuity: both evaluations on a ring (rho slightly beyond the switch)
    ring = []
    for a, b in gf.support:
        th = np.linspace(0.1, np.pi - 0.1, 7)
        rho = gf.far_rho * 1.05
        wv = 0.5 * (rho * np.exp(1j * th) + np.exp(-1j * th) / rho)
        ring.append((a + b) / 2 + (b - a) / 2 * wv)
    ring = np.concatenate(ring)
    ring = ring[gf._is_far(ring)]
    ring = np.concatenate([ring, np.conj(ring)])
    checks["continuity"] = float(np.max(np.abs(gf._far(ring) - gf._near(ring)))) if ring.size else 0.0
    xs = np.concatenate([a + (b - a) * np.array([0.013, 0.27, 0.5, 0.81, 0.993]) for a, b in gf.support])
    gp, gm = gf.boundary_values(xs)
    checks["jump"] = float(np.max(np.abs(gp + gm - gf.V(xs) + gf.lagrange)))
    gap = 0.0
    for j in range(len(gf.support) - 1):
        lo, hi = gf.support[j][1], gf.support[j + 1][0]
        xg = lo + (hi - lo) * np.array([0.05, 0.5, 0.95])
        # the direct sum (principal logs) knows the phase only through the
        # band masses, so this compares Ω_j with the quadrature of ψ
        gp = gf._far(xg.astype(complex))
        gap = max(gap, float(np.max(np.abs(2j * gp.imag - 2j * np.pi * gf.omega[j]))))
    checks["gap_phase"] = gap
    return checks
