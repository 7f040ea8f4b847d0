"""Discretisation of ``w_n`` for degrees ``k ≤ K``: nodes from the equilibrium measure.

A discrete measure ``Σ_i λ_i δ_{x_i}`` replaces ``w_n(x) dx``; the discretised
Stieltjes procedure (Gautschi, *Orthogonal Polynomials: Computation and
Approximation*, OUP 2004, §2.2.3) then gives the recurrence coefficients.  The
discrete measure must integrate ``p_j p_k w_n`` (``j, k ≤ K``) to rounding
accuracy and should carry no nodes where those integrands are below rounding.

Where the polynomials live
--------------------------
Write ``t = n/K`` and ``μ_t`` for the equilibrium measure of ``t V`` on Σ,
``eff_t = 2 U^{μ_t} + t V - ℓ_t`` its effective potential.

* Buyarov and Rakhmanov (Mat. Sb. 190 (1999) 791–802) show that
  ``τ ↦ τ μ_{V/τ}`` increases with ``τ``, its derivative being the equilibrium
  measure (no field) of ``supp μ_{V/τ}``.  With ``τ = k/n``, the support of
  ``μ_{(n/k)V}`` grows with ``k``, so the support of ``μ_{(n/K)V}`` covers the
  zeros of every ``p_k``, ``k ≤ K``.  Differentiating the same identity shows
  that ``k · eff_{(n/k)V}(x)`` *decreases* in ``k`` at every ``x`` (the
  derivative is ``2 U^{ν}(x) - const ≤ 0`` for the equilibrium measure ``ν`` of
  the support), so ``K eff_t`` is the smallest of these exponents.
* The weighted Bernstein–Walsh inequality (Saff & Totik, *Logarithmic
  Potentials with External Fields*, Springer 1997, Thm III.2.1) gives
  ``p_k(x)² w_n(x) ≤ M_k h(x) exp(-k eff_{(n/k)V}(x)) ≤ M_k h(x) exp(-K eff_t(x))``
  with ``M_k = max_S p_k² e^{-nV}``, which is ``O(K)`` (Christoffel-function
  bound: common practice).

Cutting tails and gap interiors
-------------------------------
Nodes are placed only where ``K eff_t(x) ≤ L``.  The mass neglected in any
``∫ p_j p_k w`` beyond a cut point ``x_c`` is at most
``M_K ∫_{x_c}^∞ h e^{-K eff_t} ≲ M_K e^{-L} / (K eff_t'(x_c)) ≲ e^{-L}`` up to
the factor ``M_K/(K eff_t') = O(1)``; we ask for ``e^{-L} · K ≤ 2^{-56}``, i.e.

    L = 56 log 2 + log K + 1  ≈ 39.8 + log K,

which keeps the neglected mass below the rounding level of the coefficients.

Panels
------
* **Bands.**  Breaks at the quantiles of ``μ_t`` on each band (``measure.quantile``: the
  measure's own distribution function), ``ζ`` zeros of
  ``p_K`` per panel (so the panels follow the local zero spacing
  ``1/(K ψ_t)``), ``m`` Gauss–Legendre points per panel.  For an integrand
  that grows like ``exp(2π K ψ_t |Im z|)`` off the axis, the error of an
  ``m``-point rule on a panel holding ``ζ`` zeros is about
  ``min_ρ exp(π ζ (ρ - 1/ρ)/2 - 2 m log ρ)`` (Bernstein-ellipse bound: common
  practice); ``(ζ, m) = (40, 94)`` gives ``e^{-40}``, ``(48, 110)`` gives
  ``e^{-43}`` (for a given bound, long panels need fewer points per zero:
  2.35 and 2.29 here, 3.33 for (12, 40)).
* **Soft edges.**  The quantile panel at a soft edge is ``~ζ^{2/3}`` Airy units
  long; it is split geometrically toward the edge until its pieces are two
  Airy units ``(K C)^{-2/3}`` long (``ψ_t ≈ C (distance)^{1/2}``).
* **Outside the bands.**  On ``{K eff_t ≤ L} \\ S`` the breaks are uniform in the
  variation of ``σ = (K eff_t)^{2/3}``, which is the Airy variable near a soft
  edge and keeps the change of ``log(p_k² w)`` per panel below a few units
  further out.
* **Growth off the axis** (:func:`growth_bound`, :func:`refine_by_growth`).
  The zero count is a proxy for the size of ``p_K² w_n`` on the Bernstein
  ellipses of a panel that holds only while ψ_t is nearly constant on the
  panel.  Near a transition (a band about to split, ψ_t ≈ c (x² + ε) with ε
  small; or a short gap about to close) a panel of ζ zeros is
  ``~ (ζ / (K c))^{1/3}``-long or longer and the integrand grows like
  ``exp(2π K c H³ ρ³/24)`` on its ellipses, not like ``exp(π ζ ρ/2)``: the
  panels must be of the critical (Painlevé II) length ``(K c)^{-1/3}``.
  Rather than special-casing minima, every panel (bands, gaps, tails) is
  tested with the growth ``K max_{E_ρ} Re Φ`` of a local model of
  ``Φ = 2g_t - V_t - ℓ_t`` and halved until its bound is within ``e^3`` of
  the bulk bound of the layout.  This is the node-density floor near density
  minima; in the bulk and at Airy-refined edges it changes nothing.
  (Before it, V = x⁴/4 - 1.96 x²/2 at n = K = 320 gave two discretisations
  differing by 1.9e-5; after it, 1.4e-14.)
* **Singular points** of ``h`` inside Σ are panel breaks; adjacent panels use
  Gauss–Jacobi rules with that exponent (``equilibrium.quadrature.gauss_jacobi``,
  Golub–Welsch), so ``(x - c)^p`` is integrated exactly.

The second, independent discretisation uses other values of ``(ζ, m)``, a
shifted set of quantile breaks and another exterior step; the difference of
the two coefficient lists is the error estimate.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from equilibrium.errors import NumericalFailure
from equilibrium.quadrature import gauss_jacobi, gauss_legendre
from equilibrium.weight import Weight

#: log of the rounding level asked of the neglected mass (2^-56)
_LOG_EPS = 56.0 * math.log(2.0)


@dataclass(frozen=True)
class PanelLayout:
    """Parameters of one discretisation.

    zeros_per_panel : ζ, zeros of p_K per band panel.
    points : m, Gauss points per panel.
    exterior_step : step in the variation of σ = (K eff)^{2/3} outside the bands.
    offset : fraction in [0, 1) by which the quantile breaks are shifted.
    airy_units : length of the smallest soft-edge pieces, in Airy units.
    exterior_points : Gauss points per panel outside the bands (no oscillation there).
    """

    zeros_per_panel: float
    points: int
    exterior_step: float
    offset: float
    airy_units: float = 2.0
    name: str = "layout"
    exterior_points: int = 24


#: (ζ, m) = (40, 94) and (48, 110): bulk bounds e^-40 and e^-43 (:func:`nominal_exponent`).  Longer
#: panels need fewer points per zero for the same bound (2.35 and 2.29 here; (12, 40) and
#: (10, 34), the layouts before, needed 3.33 and 3.4): at n = K = 16000 the two discretisations
#: hold 40 702 and 40 190 nodes instead of 55 824 and 57 054, and differ by 1.1e-13 (before:
#: 1.6e-13 with compensated log weights; both the rounding floor, README)
PRIMARY = PanelLayout(40.0, 94, 0.6, 0.0, 2.0, "primary", 24)
SECONDARY = PanelLayout(48.0, 110, 0.5, 0.43, 1.5, "secondary", 20)


def cut_level(degree: int) -> float:
    """L = 56 log 2 + log K + 1 (see the module docstring)."""
    return _LOG_EPS + math.log(max(degree, 1)) + 1.0


@dataclass(frozen=True)
class Discretisation:
    """A discrete measure ``Σ λ_i δ_{x_i}`` replacing ``w_n(x) dx`` for degrees ≤ ``degree``.

    Attributes
    ----------
    nodes : x_i, ascending.
    log_weights : log λ_i rounded to double (the weight is never exponentiated).
    log_weights_low : the remainders, ``log λ_i = log_weights + log_weights_low`` to about
        ``eps²`` relative (double-double; :meth:`equilibrium.weight.Weight.log_weight_pair`:
        compensated for polynomial fields, zero otherwise), or ``None`` (zero).  At
        ``n = 10⁵`` the rounding of ``log λ_i ~ -n V`` alone is ``~10⁻¹¹``, a relative
        error of each weight; the Stieltjes procedure starts from the pair.
    breaks : panel breaks, ascending (each panel ``[breaks[j], breaks[j+1]]``
        unless it straddles an excluded region; see ``panels``).
    panels : array (P, 2) of panel ends.
    degree : K, the largest degree the layout is made for.
    level : the cut level L.
    layout : the :class:`PanelLayout`.
    """

    nodes: np.ndarray
    log_weights: np.ndarray
    panels: np.ndarray
    degree: int
    level: float
    layout: PanelLayout
    log_weights_low: np.ndarray | None = None

    @property
    def size(self) -> int:
        return int(self.nodes.size)

    @property
    def log_mass(self) -> float:
        """log Σ λ_i = log ∫ w (log-sum-exp)."""
        top = float(np.max(self.log_weights))
        return top + math.log(float(np.sum(np.exp(self.log_weights - top))))


# --------------------------------------------------------------------------- the measure
def measure_for(weight: Weight, degree: int, solver: Callable[..., Any] | None = None):
    """The equilibrium measure of ``(n/degree) V`` on Σ (``V`` itself when V = 0)."""
    if solver is None:
        from equilibrium import solve  # imported late: the package may be optional

        def solver(field, on):
            # marked, not raised: the message below says what the measure was for
            return solve(field, on=on, on_failure="mark")
    field = weight.field
    if not getattr(field, "is_zero", False):
        field = field.scaled(weight.n / max(degree, 1))
    measure = solver(field, on=weight.on)
    if hasattr(measure, "verified") and not measure.verified:
        raise NumericalFailure(
            f"the equilibrium measure used to place the nodes is not verified: {getattr(measure, 'message', '')}"
        )
    return measure


def _band_breaks(measure, j: int, a: float, b: float, edges: tuple[str, str], mass: float, degree: int,
                 layout: PanelLayout) -> np.ndarray:
    count = max(int(math.ceil(mass * (degree + 1) / layout.zeros_per_panel)), 2)
    levels = (np.arange(count) + layout.offset) / count
    levels = levels[levels > 0]
    # the quantiles of μ_t on band j, from the measure's own distribution function
    before = float(np.concatenate([[0.0], np.cumsum(measure.masses)])[j])
    x = np.concatenate([[a], measure.quantile(before + levels * mass), [b]])
    # no panel longer than a quarter of the band (small K)
    x = _refine_long(x, 0.25 * (b - a))
    # soft edges: split the edge panel geometrically down to the Airy scale
    extra = []
    for side, kind in zip((0, 1), edges):
        if kind != "soft":
            continue
        edge = a if side == 0 else b
        width = (x[1] - x[0]) if side == 0 else (x[-1] - x[-2])
        airy = _airy_unit(measure, edge, a, b, side, degree)
        d = 0.5 * width
        while d > layout.airy_units * airy:
            extra.append(edge + d if side == 0 else edge - d)
            d *= 0.5
    x = np.unique(np.concatenate([x, extra]))
    return x


def _airy_unit(measure, edge: float, a: float, b: float, side: int, degree: int) -> float:
    """(K C)^{-2/3} with ψ ≈ C sqrt(distance) near the soft edge."""
    delta = 1e-3 * (b - a)
    x = edge + delta if side == 0 else edge - delta
    psi = float(np.asarray(measure.density(np.array([x])), dtype=float)[0])
    c = max(psi / math.sqrt(delta), 1e-300)
    return ((degree + 1) * c) ** (-2.0 / 3.0)


def _refine_long(x: np.ndarray, longest: float) -> np.ndarray:
    """Split each interval of the breaks ``x`` into equal pieces no longer than ``longest``."""
    lo, hi = x[:-1], x[1:]
    pieces = np.maximum(np.ceil((hi - lo) / longest).astype(int), 1)
    start = np.repeat(lo, pieces)
    step = np.repeat((hi - lo) / pieces, pieces)
    index = np.arange(pieces.sum()) - np.repeat(np.cumsum(pieces) - pieces, pieces) + 1
    inner = start + step * index
    inner[np.cumsum(pieces) - 1] = hi  # each interval ends exactly on its break
    return np.concatenate([x[:1], inner])


def _exterior_breaks(measure, piece: tuple[float, float], support, degree: int, level: float,
                     layout: PanelLayout, longest: float) -> list[np.ndarray]:
    """Breaks on the parts of ``piece`` where K eff ≤ L."""
    lo, hi = piece
    edges = [e for ab in support for e in ab]
    touches_lo = any(abs(lo - e) <= 1e-12 * max(1.0, abs(e)) for e in edges)
    touches_hi = any(abs(hi - e) <= 1e-12 * max(1.0, abs(e)) for e in edges)
    width = max(b for _, b in support) - min(a for a, _ in support)

    def k_eff(x):
        with np.errstate(all="ignore"):
            values = np.asarray(measure.effective_potential(np.asarray(x, dtype=float)), dtype=float)
        values = np.where(np.isfinite(values), values, np.inf)
        return (degree + 1) * np.maximum(values, 0.0)

    # make unbounded sides finite: march away until K eff > L
    if not math.isfinite(lo) or not math.isfinite(hi):
        anchor = hi if not math.isfinite(lo) else lo
        direction = -1.0 if not math.isfinite(lo) else 1.0
        step = 1e-4 * width
        while True:
            x = anchor + direction * step
            if k_eff(np.array([x]))[0] > 2.0 * level:
                break
            step *= 2.0
            if step > 1e12 * max(1.0, width):
                raise NumericalFailure("the weight does not decay: cannot find where to cut the tail")
        lo, hi = (x, hi) if direction < 0 else (lo, x)
    samples = 801
    s = np.linspace(0.0, math.pi, samples)
    x = 0.5 * (lo + hi) - 0.5 * (hi - lo) * np.cos(s)  # clustered at both ends
    values = k_eff(x)
    if touches_lo:
        values[0] = 0.0
    if touches_hi:
        values[-1] = 0.0
    inside = values <= level
    out = []
    k = 0
    while k < samples:
        if not inside[k]:
            k += 1
            continue
        j = k
        while j + 1 < samples and inside[j + 1]:
            j += 1
        # extend each run to the crossing by linear interpolation
        left = x[k]
        if k > 0:
            f0, f1 = values[k - 1], values[k]
            left = x[k] - (x[k] - x[k - 1]) * (level - f1) / (f0 - f1) if math.isfinite(f0) else x[k]
        right = x[j]
        if j < samples - 1:
            f0, f1 = values[j], values[j + 1]
            right = x[j] + (x[j + 1] - x[j]) * (level - f0) / (f1 - f0) if math.isfinite(f1) else x[j]
        if right > left:
            grid = np.concatenate([[left], x[k:j + 1], [right]])
            grid = np.unique(grid)
            sigma = k_eff(grid) ** (2.0 / 3.0)
            sigma = np.where(np.isfinite(sigma), sigma, level ** (2.0 / 3.0))
            tau = np.concatenate([[0.0], np.cumsum(np.abs(np.diff(sigma)))])
            tau = tau + (grid - grid[0]) / longest * layout.exterior_step
            count = max(int(math.ceil(tau[-1] / layout.exterior_step)), 1)
            targets = np.linspace(0.0, tau[-1], count + 1)
            targets = targets + layout.offset * (targets[1] - targets[0]) * (0 < targets) * (targets < tau[-1])
            targets = np.clip(targets, 0.0, tau[-1])
            breaks = np.interp(targets, tau, grid)
            breaks[0], breaks[-1] = left, right
            out.append(np.unique(breaks))
        k = j + 1
    return out


# --------------------------------------------------------------------------- growth off the axis
#: ρ of the Bernstein ellipses tried (ρ ≤ 4 keeps the ellipse of an Airy-refined edge piece
#: [e + d, e + 2d] away from the edge e, where the local model of Φ' below would not hold)
_RHO = np.array([1.1, 1.25, 1.5, 1.75, 2.0, 2.5, 3.0, 3.5, 4.0])
#: angles on the upper half of each ellipse (the lower half is the mirror image)
_THETA = math.pi * (np.arange(13) + 0.5) / 13  # odd count: contains π/2, where the bulk growth peaks
#: Gauss–Legendre points on the segment from the panel centre to an ellipse point
_PATH_POINTS = 8
#: a panel is split when its growth bound exceeds the nominal bulk bound by this (natural log)
_GROWTH_SLACK = 3.0
#: at most this many halvings of one panel
_MAX_HALVINGS = 8
#: panels per call of growth_bound (bounds the temporary memory to a few MB)
_CHUNK = 128


def nominal_exponent(zeros_per_panel: float, points: int) -> float:
    """``min_ρ [π ζ (ρ - 1/ρ)/2 - 2 m log ρ]`` over the ρ of :data:`_RHO`: the log error
    bound of a bulk panel (module docstring), on the same ellipses as :func:`growth_bound`."""
    rho = _RHO
    return float(np.min(0.5 * math.pi * zeros_per_panel * (rho - 1 / rho) - 2 * points * np.log(rho)))


def _edge_kinds(support, edges) -> dict[float, tuple[float, float]]:
    """Edge e -> (orientation σ, power p): Φ'(z) ∝ (σ (z - e))^p near e.

    σ = +1 at a right end (band to the left), -1 at a left end; p = 1/2 at a
    soft edge, -1/2 at a hard edge (ψ ~ |x - e|^{∓1/2}).
    """
    out: dict[float, tuple[float, float]] = {}
    for (a, b), (left, right) in zip(support, edges):
        out[float(a)] = (-1.0, 0.5 if left == "soft" else -0.5)
        out[float(b)] = (1.0, 0.5 if right == "soft" else -0.5)
    return out


def _phi_prime_on_axis(measure, x: np.ndarray) -> np.ndarray:
    """Boundary value from above of ``Φ'(z) = 2G(z) - V_t'(z)`` at real x.

    ``Φ = 2g - V_t - ℓ_t`` (g of μ_t); on a band ``Φ'_+ = -2πi ψ_t``, off the
    support ``Φ' = -eff_t'`` (real).
    """
    x = np.asarray(x, dtype=float)
    psi = np.asarray(measure.density(x), dtype=float)
    on_band = np.zeros(x.shape, dtype=bool)
    for a, b in measure.support:
        on_band |= (x > a) & (x < b)
    out = (-2j * math.pi) * psi
    off = ~on_band
    if np.any(off):
        z = x[off].astype(complex)
        with np.errstate(all="ignore"):
            value = 2.0 * np.asarray(measure.stieltjes(z)) - np.asarray(measure.field.dV(z))
        out[off] = np.real(value)
    return out


def growth_bound(panels: np.ndarray, points: np.ndarray, measure, support, edges, degree: int) -> np.ndarray:
    """Log of the Bernstein-ellipse error bound of each panel's Gauss rule for ``p_K² w_n``.

    Why.  Off the real axis, outside the lenses, ``|π_K(z)|² |e^{-nV(z)}| ≈
    e^{K Re(2g_t - V_t)(z)}`` (the leading order of the Deift–Kriecherbauer–
    McLaughlin–Venakides–Zhou steepest descent, Comm. Pure Appl. Math. 52
    (1999) 1335–1425); with ``Φ = 2g_t - V_t - ℓ_t`` the integrand ``p_K² w_n``
    is of size ``exp(K Re Φ(z))`` (``Re Φ = 0`` on S, ``-eff_t`` on the real axis
    off S).  By the Buyarov–Rakhmanov identity (module docstring)
    ``k Re Φ_{(n/k)V}(z)`` increases with k for every z (its k-derivative is
    ``2 log|φ(z)| ≥ 0``, φ the exterior conformal map of the support), so the
    degree K bounds all ``p_j p_k w``, j, k ≤ K.  The m-point Gauss error on a
    panel is then at most ``exp(K max_{E_ρ} Re Φ - 2 m log ρ)`` for every ρ
    (Bernstein-ellipse bound, Trefethen, *Approximation Theory and
    Approximation Practice*, SIAM 2013, Thm 19.3, constants dropped).

    In the bulk ``K max_{E_ρ} Re Φ ≈ π ζ (ρ - 1/ρ)/2`` (ζ zeros in the panel).
    Where ψ_t has a deep minimum (a band about to split, ψ_t ≈ c (x² + ε)) the
    zero count says nothing: ``Φ' ≈ -2πi c ((z - x_0)² + ε)`` makes
    ``K Re Φ ≈ 2π K c H³ ρ³/24`` on an ellipse of half-length H, so the panels
    must shrink to the critical (Painlevé) scale ``(K c)^{-1/3}``, not to the
    zero spacing ``1/(K ε c)``.  The same holds in a short gap that is about to
    close.  Hence the bound is computed from a local model of Φ'.

    Model.  On each panel ``Φ'(z) ≈ s(z) q(z)``: ``q`` the quadratic through the
    values of ``Φ'_+/s`` at three interior points (ψ_t on bands, ``2G - V_t'``
    off S), ``s = ∏ (σ (z - e))^p`` over the edges e at the panel ends
    (:func:`_edge_kinds`), principal powers, analytic in the upper half-plane.
    ``Φ(z) - Φ(x_c) = ∫_{x_c}^{z} Φ'`` on the straight segment from the panel
    centre (Gauss–Legendre), ``Re Φ(x_c) = -eff_t(x_c)``.  Only the upper half
    of the ellipse is needed: the lower half carries the mirror image (the
    other exponential ``e^{-KΦ}`` of the band).

    Returns
    -------
    ndarray : ``min_ρ [ (K+1) max_{E_ρ} Re Φ - 2 m log ρ ]`` per panel.
    """
    lo = panels[:, 0]
    hi = panels[:, 1]
    half = 0.5 * (hi - lo)
    centre = 0.5 * (lo + hi)
    kinds = _edge_kinds(support, edges)
    scale = max(1.0, max(abs(e) for e in kinds))
    # the edge factor s at each panel: at most one edge per panel end
    sigma = np.zeros((panels.shape[0], 2))
    power = np.zeros((panels.shape[0], 2))
    where = np.zeros((panels.shape[0], 2))
    for e, (sg, p) in kinds.items():
        for side, end in ((0, lo), (1, hi)):
            hit = np.abs(end - e) <= 1e-12 * scale
            sigma[hit, side], power[hit, side], where[hit, side] = sg, p, e

    def s_of(z, rows=slice(None)):  # z: (P', ...) complex for the panels `rows`, broadcasting over trailing axes
        out = np.ones(z.shape, dtype=complex)
        for side in (0, 1):
            sg = sigma[rows, side].reshape((-1,) + (1,) * (z.ndim - 1))
            p = power[rows, side].reshape(sg.shape)
            e = where[rows, side].reshape(sg.shape)
            active = sg != 0
            with np.errstate(all="ignore"):
                factor = np.where(active, (np.where(active, sg, 1.0) * (z - e)) ** p, 1.0)
            out = out * factor
        return out

    # three interior sample points, values from above (Im z = +tiny keeps the branches of s right)
    u = np.array([-2.0 / 3.0, 0.0, 2.0 / 3.0])
    xs = centre[:, None] + half[:, None] * u[None, :]
    above = xs + 1j * 1e-300
    q_values = _phi_prime_on_axis(measure, xs.ravel()).reshape(xs.shape) / s_of(above)
    # ellipse points in the local variable, shape (R, T)
    ring = 0.5 * (_RHO[:, None] * np.exp(1j * _THETA)[None, :] + np.exp(-1j * _THETA)[None, :] / _RHO[:, None])
    t, wt = gauss_legendre(_PATH_POINTS)
    t = 0.5 * (t + 1.0)
    wt = 0.5 * wt
    v = ring[:, :, None] * t[None, None, :]                        # (R, T, G) path points, the same on every panel
    # Lagrange basis of the quadratic q in the local variable v = (z - centre)/half, shape (3, R, T, G)
    basis = np.stack([
        v * (v - u[2]) / (u[0] * (u[0] - u[2])),
        (v - u[0]) * (v - u[2]) / ((u[1] - u[0]) * (u[1] - u[2])),
        v * (v - u[0]) / (u[2] * (u[2] - u[0])),
    ])
    # ∫ along the segment: Σ_g q(v_g) s(z_g) wt_g.  Away from the edges s = 1, and the sum is
    # q_values @ (Σ_g basis_g wt_g), the same for all such panels (one small matrix product)
    summed = np.empty((panels.shape[0],) + ring.shape, dtype=complex)
    plain = ~np.any(sigma != 0, axis=1)
    summed[plain] = (q_values[plain] @ (basis @ wt).reshape(3, -1)).reshape((-1,) + ring.shape)
    edged = ~plain
    if np.any(edged):
        z = centre[edged, None, None, None] + half[edged, None, None, None] * v[None]
        q = np.einsum("pj,jrtg->prtg", q_values[edged], basis)
        summed[edged] = np.einsum("prtg,g->prt", s_of(z, edged) * q, wt)
    increment = half[:, None, None] * ring[None, :, :] * summed

    with np.errstate(all="ignore"):
        eff_centre = np.asarray(measure.effective_potential(centre), dtype=float)
    re_phi_centre = -np.where(np.isfinite(eff_centre), np.maximum(eff_centre, 0.0), 0.0)
    re_phi = re_phi_centre[:, None, None] + increment.real
    growth = (degree + 1) * np.max(re_phi, axis=2)                 # (P, R)
    bound = growth - 2.0 * points[:, None] * np.log(_RHO)[None, :]
    bound = np.where(np.isfinite(bound), bound, np.inf)
    return np.min(bound, axis=1)


def refine_by_growth(table: np.ndarray, measure, support, edges, degree: int, layout: PanelLayout) -> np.ndarray:
    """Halve every panel whose :func:`growth_bound` exceeds the bulk bound of the layout.

    ``table`` has rows ``(lo, hi, m)``.  The target is the bound of a bulk panel
    with ζ zeros and m points (:func:`nominal_exponent`; not below the rounding
    level 2^-56) plus a slack of ``e^3``, so ordinary bulk panels are left alone and only panels where the
    density is far from locally constant (deep minima of ψ_t, short gaps) are
    split.  Without the analytic structure of the measure (a foreign solver)
    the table is returned unchanged.
    """
    if not all(hasattr(measure, name) for name in ("stieltjes", "effective_potential", "field")):
        return table
    # a layout finer than rounding needs is refined only down to rounding (2^-56)
    target = max(nominal_exponent(layout.zeros_per_panel, layout.points), -_LOG_EPS) + _GROWTH_SLACK
    done = []
    todo = table
    for _ in range(_MAX_HALVINGS):
        if todo.shape[0] == 0:
            break
        # in chunks: the ellipse-path arrays hold ~900 complex numbers per panel
        bound = np.concatenate([
            growth_bound(chunk[:, :2], chunk[:, 2], measure, support, edges, degree)
            for chunk in np.array_split(todo, max(1, -(-todo.shape[0] // _CHUNK)))
        ])
        ok = bound <= target
        done.append(todo[ok])
        bad = todo[~ok]
        mid = 0.5 * (bad[:, 0] + bad[:, 1])
        todo = np.concatenate([np.column_stack([bad[:, 0], mid, bad[:, 2]]),
                               np.column_stack([mid, bad[:, 1], bad[:, 2]])])
    done.append(todo)
    return np.concatenate(done)


def _panel_rule(weight: Weight, lo: float, hi: float, m: int, singular: dict[float, float]):
    """Nodes and log weights (a pair: :func:`_add_pair`) on [lo, hi], Gauss–Jacobi for singular ends."""
    p_lo = _lookup(singular, lo)
    p_hi = _lookup(singular, hi)
    half = 0.5 * (hi - lo)
    if p_lo == 0.0 and p_hi == 0.0:
        u, w = gauss_legendre(m)
        omit: tuple[float, ...] = ()
    else:
        u, w = gauss_jacobi(m, p_hi, p_lo)
        omit = tuple(c for c, p in ((lo, p_lo), (hi, p_hi)) if p != 0.0)
    x = 0.5 * (lo + hi) + half * u
    return x, _add_pair(np.log(w) + (1.0 + p_lo + p_hi) * math.log(half), weight.log_weight_pair(x, omit))


def _lookup(singular: dict[float, float], point: float) -> float:
    for c, p in singular.items():
        if abs(c - point) <= 1e-14 * max(1.0, abs(c)):
            return p
    return 0.0


def discretise(weight: Weight, degree: int, layout: PanelLayout = PRIMARY, measure=None,
               solver: Callable[..., Any] | None = None) -> Discretisation:
    """Discrete measure for ``∫ f w_n`` with f of degree ≤ 2·degree + 1.

    Parameters
    ----------
    weight : the weight.
    degree : K (the largest degree of the polynomials).
    layout : :data:`PRIMARY`, :data:`SECONDARY` or another :class:`PanelLayout`.
    measure : the equilibrium measure of ``(n/K) V`` (computed when omitted).
    solver : the equilibrium solver (default :func:`equilibrium.solve`).
    """
    degree = int(degree)
    if measure is None:
        measure = measure_for(weight, degree, solver)
    support = [tuple(map(float, ab)) for ab in measure.support]
    edges = list(measure.edges)
    level = cut_level(degree + 1)
    # the bands
    band_breaks = [
        _band_breaks(measure, j, a, b, tuple(e), float(mass), degree, layout)
        for j, ((a, b), e, mass) in enumerate(zip(support, edges, measure.masses))
    ]
    longest = max(float(np.max(np.diff(bb))) for bb in band_breaks)
    # outside the bands: tails, gaps, pieces of Σ beyond the support (the measure's Σ \ S;
    # slivers left where a band ends within rounding of an end of Σ carry no nodes)
    scale = max(1.0, max(abs(e) for ab in support for e in ab))
    exterior: list[np.ndarray] = []
    for lo, hi in measure.complement():
        if hi - lo > 1e-13 * scale:
            exterior.extend(_exterior_breaks(measure, (lo, hi), support, degree, level, layout, longest))
    # singular points of h become breaks
    singular = {c: p for c, p in weight.singular_points}
    segments = [(seg, layout.points) for seg in band_breaks] + [(seg, layout.exterior_points) for seg in exterior]
    for c in singular:
        for k, (seg, m) in enumerate(segments):
            if seg[0] < c < seg[-1] and not np.any(np.abs(seg - c) <= 1e-14 * max(1.0, abs(c))):
                segments[k] = (np.sort(np.concatenate([seg, [c]])), m)
    rows = [(lo, hi, m) for seg, m in segments for lo, hi in zip(seg[:-1], seg[1:]) if hi > lo]
    table = refine_by_growth(np.array(rows), measure, support, edges, degree, layout)
    table = table[np.argsort(table[:, 0])]
    panels = table[:, :2]
    # the nodes: regular panels at once (grouped by point count), singular panels one by one
    regular = np.array([_lookup(singular, lo) == 0.0 and _lookup(singular, hi) == 0.0 for lo, hi in panels])
    xs, logs = [], []
    for m in sorted({int(v) for v in table[:, 2]}):
        chosen = regular & (table[:, 2] == m)
        if not np.any(chosen):
            continue
        u, w = gauss_legendre(m)
        lo, hi = panels[chosen, 0][:, None], panels[chosen, 1][:, None]
        x_reg = (0.5 * (lo + hi) + 0.5 * (hi - lo) * u[None, :]).ravel()
        xs.append(x_reg)
        logs.append(_add_pair((np.log(w)[None, :] + np.log(0.5 * (hi - lo))).ravel(),
                              weight.log_weight_pair(x_reg)))
    for lo_s, hi_s, m in table[~regular]:
        x, lg = _panel_rule(weight, float(lo_s), float(hi_s), int(m), singular)
        xs.append(x)
        logs.append(lg)
    nodes = np.concatenate(xs)
    log_weights = np.concatenate([hi for hi, _ in logs])
    low = np.concatenate([lo for _, lo in logs])
    order = np.argsort(nodes, kind="stable")
    nodes, log_weights, low = nodes[order], log_weights[order], low[order]
    keep = log_weights > -np.inf
    if np.any(np.isnan(log_weights)) or np.any(log_weights == np.inf):
        raise NumericalFailure("the weight is not finite at some quadrature nodes")
    return Discretisation(nodes[keep], log_weights[keep], panels, degree, level, layout, low[keep])


def _add_pair(rule: np.ndarray, pair: tuple[np.ndarray, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """``rule + (hi + lo)`` as a renormalised pair (TwoSum: :mod:`equilibrium.compensated`).

    ``rule`` (log of the Gauss weight and the panel's half length) is of order one; the
    pair is ``log w_n`` from :meth:`~equilibrium.weight.Weight.log_weight_pair`.
    """
    from equilibrium.compensated import two_sum

    hi, lo = pair
    with np.errstate(invalid="ignore"):
        total, error = two_sum(hi, rule)
        low = np.where(np.isfinite(total), lo + error, 0.0)
        total, error = two_sum(total, low)
    return total, np.where(np.isfinite(total), error, 0.0)


def estimate_size(weight: Weight, degree: int, layout: PanelLayout = PRIMARY, bands: int = 1) -> int:
    """Number of nodes ``discretise`` will place, estimated before any allocation."""
    panels = (degree + 1) / layout.zeros_per_panel + bands * (8 + 3 * math.log2(degree + 2)) + 60 * (bands + 1)
    return int(panels * layout.points)
