r"""The residual Riemann–Hilbert problem solved numerically: a_n, b_n "to all orders".

Problem (orientation and frames of :mod:`gfunction.residual`)
-------------------------------------------------------------
Find ``R`` analytic off the clockwise circles ``Γ = ∪ ∂U_e`` around the edges with

    R_+ = R_- J_R on Γ,   J_R = P N^{-1} (exact: scaled Airy / Bessel functions),   R → I at ∞.

The lens lips, the gaps and the real line outside the support beyond the
discs carry jumps ``I + O(e^{-nc})`` that are neglected here; ``c`` is
estimated by :func:`neglected_jump_exponent` and reported with every result.

Method: spectral collocation on the circles
-------------------------------------------
``R = I + C[μ (J_R - I)]`` with ``μ = R_-``, so ``μ`` solves

    μ - C_-[μ (J_R - I)] = I     on Γ.

On circle ``e`` (``s = e + r t``, ``t = e^{iθ_l}``, ``θ_l = 2π(l+½)/L``) a function is
``Σ_m c_m t^m`` (FFT, the trapezoidal rule) and the clockwise Cauchy operator of
that circle is diagonal in the modes: ``C_- f = -Σ_{m≥0} c_m t^m`` (minus the
non-negative modes) on the circle itself, ``C f(z) = Σ_{m<0} c_m ((z-e)/r)^m``
at points of the other circles (the cross terms; the same trapezoidal rule).
``J_R - I = O(1/n)``, so the operator ``μ ↦ C_-[μ(J_R - I)]`` is a contraction
for large ``n``; the system is solved by fixed-point iteration to rounding,
and by a dense LU of the ``2CL × 2CL`` collocation matrix when the iteration
contracts slowly (small ``n``).

Then ``R_p = (1/2πi)∮_{ccw} μ(J_R - I) s^{p-1} ds`` (``gfunction.residual``),
``a_n, b_n`` from ``R_1, R_2`` and the outer parametrix at infinity
(:func:`gfunction.series.recurrence_from_expansions`).

Error estimate
--------------
Two resolutions, ``L`` and ``3L/2`` points per circle: the estimate is their
difference (the coarse one converges geometrically, so the difference bounds
the coarse error and the fine result is returned), combined with the
neglected jumps ``e^{-nc}`` and, with several bands, the error of the phases:

    error_estimate = max(|Δ_L|, e^{-nc}, Σ_j |∂(a, b)/∂w_j| δw_j),
    δw_j = n δΩ + 2ε,   δΩ = omega_error, else max(mass_error of the measure, ε),   ε = 2^-53.

The phases ``w = nΩ`` (mod 1) carry ``n`` times the error of ``Ω``; the product and its
reduction are exact (:mod:`gfunction.phase`), so only the rounding of ``w`` itself is added.
The double Ω of :func:`equilibrium.solve` is off by a few 1e-16 (measured 5e-16 for
``x⁴/4 − 3.1x²/2 + 0.23x`` and 5.6e-16 for the three-band sextic of the tests), which limits
the accuracy at large ``n`` (~1e-12 at ``n = 4000``, ~1e-9 at ``n = 10⁶``); the workbench
therefore re-solves Ω beyond double precision for every prediction beyond leading order
(:mod:`equilibrium.refinement`: ``Ω = omega + omega_low`` with ``checks["omega_error"]`` ~1e-30,
so that ``n δΩ`` stays below rounding up to ``n ~ 10¹⁴``).  The derivatives ``∂(a, b)/∂w_j``
are those of the leading order (central differences of ``ModelProblem.expansion``); the
corrections change them by O(1/n).  The phase part is reported in ``error_estimate`` and in
``checks["phase_error"]``; it does not decide ``verified`` (which states that the residual
problem was solved and its neglected contours are below the tolerance): the phase error is
the accuracy of the input Ω, the same for every method (series or residual) built on it.

The neglected contours
----------------------
``c = min(c_line, c_lens)``:

* ``c_line`` -- the minimum of the effective potential ``2U^μ + V - ℓ`` on Σ
  outside the support and outside the discs (the jump there is
  ``[[1, h e^{-n(2U+V-ℓ)}], [0, 1]]`` conjugated by N);
* ``c_lens`` -- the lenses: the jump on a lip is ``[[1, 0], [h^{-1} e^{nφ}, 1]]``
  with ``Re φ = V - ℓ - 2 Re g`` (the continuation of the effective potential,
  the same for every edge by (★) of ``gfunction.gfunction``).  For each band the
  lips are taken from the family ``x ± iκ·((x-a)(b-x))^{1/2}`` and the best
  ``κ`` of a grid is used: ``c_lens = min_bands max_κ min_{lip \ discs} (-Re φ)``.

The neglected jumps are ``≈ e^{-nc}`` (times ``h`` and ``|N|²``, both O(1) away
from the edges), so they matter below ``n* = log(1/ε)/c`` for an accuracy ε.
Below ``n*`` the result carries ``neglected_jumps = e^{-nc} > ε`` in its
error estimate and is marked not verified (the CLI warns); nothing is refused.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, float_checks, settle

from .residual import (JumpExpansion, _infinity_coefficients, _inverse, _mul, _refuse_interior_singularities,
                       fourier_modes, jump_expansion)
from .series import outer_at_infinity, recurrence_from_expansions

__all__ = ["ResidualSolution", "ResidualSolver", "residual_solver", "solve_residual_problem",
           "neglected_jump_exponent", "phase_error", "CollocationOperator", "collocation_operator"]

_DEFAULT_SAMPLES = 64

#: tolerances of the figures of :class:`ResidualSolution` (``error_estimate``: the solver's ``tolerance``)
TOLERANCES = {"imag_a2": 1e-11, "imag_b": 1e-11, "collocation_residual": 1e-12, "symmetry": 1e-11}


@dataclass(frozen=True)
class CollocationOperator:
    """The clockwise Cauchy operator ``C_-`` on the samples of all circles (module docstring).

    ``cross`` (C·L, C·L/2) evaluates the negative modes ``-1 … -L/2`` of every circle at
    the points of every *other* circle (zero diagonal blocks): the cross terms.
    """

    jump: JumpExpansion
    cross: np.ndarray

    def minus(self, F: np.ndarray) -> np.ndarray:
        """``C_- F`` (inner boundary values) for samples ``F`` (C, L, 2, 2) or (P, C, L, 2, 2)."""
        C, L = self.jump.points.shape
        half = L // 2
        modes = fourier_modes(F, axis=-3)
        m = np.fft.fftfreq(L, 1.0 / L)
        neg = modes * (m < 0)[:, None, None]
        phase = np.exp(1j * np.pi * m / L)[:, None, None]
        # own circle: minus the non-negative modes = -(F - negative part)
        out = -(F - np.fft.ifft(neg * phase, axis=-3) * L)
        # cross terms from the modes -1 … -M, M the last one above 1e-18 of the largest (they decay
        # geometrically; the columns of `cross` are ordered mode-major, so the first M·C are used)
        coef = modes[..., L - np.arange(1, half + 1), :, :]          # (..., C, L/2, 2, 2): c_{-1} … c_{-L/2}
        size = np.max(np.abs(coef), axis=tuple(i for i in range(coef.ndim) if i != coef.ndim - 3))
        big = np.nonzero(size > 1e-18 * max(float(np.max(size)), 1e-300))[0]
        M = int(big[-1]) + 1 if big.size else 0
        if M:
            lead = F.shape[:-4]
            flat = np.moveaxis(coef[..., :M, :, :], -3, -4).reshape(lead + (M * C, 4))
            out += (self.cross[:, :M * C] @ flat).reshape(lead + (C, L, 2, 2))
        return out

    def infinity(self, F: np.ndarray, terms: int = 2) -> np.ndarray:
        """``R_p = (1/2πi)∮_{ccw} F s^{p-1} ds`` over all circles, p = 1 … terms."""
        return _infinity_coefficients(fourier_modes(F, axis=-3), self.jump, terms)


def collocation_operator(jump: JumpExpansion) -> CollocationOperator:
    C, L = jump.points.shape
    half = L // 2
    cross = np.zeros((C * L, half, C), dtype=complex)              # column (mode j, source circle)
    for c in range(C):
        for c_src in range(C):
            if c != c_src:
                tt = (jump.points[c] - jump.centres[c_src]) / jump.radii[c_src]
                cross[c * L:(c + 1) * L, :, c_src] = tt[:, None] ** -np.arange(1, half + 1)[None, :]
    return CollocationOperator(jump, cross.reshape(C * L, half * C))


def _solve_one(op: CollocationOperator, W: np.ndarray, *, max_iter: int = 80):
    """``μ - C_-[μ W] = I`` for one degree; returns ``(μ, iterations)`` (-1: dense solve).

    Fixed-point iteration ``μ ← I + C_-[μ W]``, a contraction by ``~|W| = O(1/n)``; it stops
    at rounding (a step below 1e-15, or a step below 1e-13 that no longer halves).  When
    it contracts slowly (small n) the dense collocation system is solved instead.
    """
    eye = np.broadcast_to(np.eye(2, dtype=complex), W.shape)
    mu = eye.copy()
    prev = np.inf
    for it in range(1, max_iter + 1):
        new = eye + op.minus(_mul(mu, W))
        step = float(np.max(np.abs(new - mu)))
        mu = new
        if step <= 1e-15 or (step < 1e-13 and step > 0.5 * prev):
            return mu, it
        if it > 3 and step > 0.3 * prev:
            break
        prev = step
    return _solve_dense(op, W), -1


def _solve_dense(op: CollocationOperator, W: np.ndarray) -> np.ndarray:
    """Dense collocation: the matrix of ``μ ↦ μ - C_-[μ W]`` on the 2CL unknowns of one row of μ."""
    C, L = W.shape[:2]
    P = C * L
    # C_- as a (P, P) matrix acting on scalar samples, column by column
    basis = np.zeros((P, C, L, 2, 2), dtype=complex)
    idx = np.arange(P)
    basis[idx, idx // L, idx % L, 0, 0] = 1.0
    K = op.minus(basis)[..., 0, 0].reshape(P, P).T               # K[i, j]: value at i of C_- of δ_j
    Wf = W.reshape(P, 2, 2)
    # (μ W)_q at j = Σ_p μ_p(j) W_pq(j): unknown index (j, p), equation index (i, q)
    A = np.eye(2 * P, dtype=complex).reshape(P, 2, P, 2)
    A -= np.einsum("ij,jpq->iqjp", K, Wf)
    A = A.reshape(2 * P, 2 * P)
    mu = np.empty((P, 2, 2), dtype=complex)
    for row in range(2):
        rhs = np.zeros((P, 2), dtype=complex)
        rhs[:, row] = 1.0
        mu[:, row, :] = np.linalg.solve(A, rhs.reshape(-1)).reshape(P, 2)
    return mu.reshape(C, L, 2, 2)


@dataclass(frozen=True)
class ResidualSolution:
    """``a_n, b_n`` from the numerically solved residual problem (degree = scaling n).

    Attributes
    ----------
    degrees : int (N,)
    a, b : float (N,)
    error_estimate : float (N,)   ``max(|two resolutions|, e^{-nc}, phase error)`` (module docstring)
    resolution_difference : float (N,)
    neglected_jumps : float (N,)  ``e^{-nc}``
    exponent : float              ``c`` of :func:`neglected_jump_exponent`
    critical_degree : float       ``n* = log(1/tolerance)/c``
    iterations : int (N,)         fixed-point iterations (-1: dense solve)
    verified_degrees : bool (N,)  ``max(|two resolutions|, e^{-nc}) ≤ tolerance`` (the phase error is
                                  reported, not gated)
    phase_error : float (N,)      the error inherited from the phases ``nΩ`` (module docstring)
    verified : bool               every degree verified and every figure of :data:`TOLERANCES` within it
    checks : dict of float        imaginary parts of a², b; the collocation residual; symmetry of R_p;
                                  ``error_estimate`` (the worst degree of the solve and the neglected
                                  jumps); ``phase_error`` (the worst degree); the two neglected exponents
    message : str                 the failed figures; below ``critical_degree`` it names the neglected jumps
    """

    degrees: np.ndarray
    a: np.ndarray
    b: np.ndarray
    error_estimate: np.ndarray
    resolution_difference: np.ndarray
    neglected_jumps: np.ndarray
    exponent: float
    iterations: np.ndarray
    verified_degrees: np.ndarray
    verified: bool
    R1: np.ndarray = field(repr=False, default=None)
    R2: np.ndarray = field(repr=False, default=None)
    checks: dict = field(default_factory=dict)
    message: str = ""

    critical_degree: float = np.inf    # n* = log(1/tolerance)/c: below it the neglected jumps exceed the tolerance
    phase_error: np.ndarray = field(repr=False, default=None)  # Σ_j |∂(a,b)/∂w_j| δw_j (several bands; else 0)


def neglected_jump_exponent(predictor, radii, *, kappas=(0.15, 0.3, 0.5, 0.8, 1.2), points: int = 200) -> dict:
    """``c`` with neglected jumps ``≈ e^{-nc}`` (module docstring); returns ``{'c', 'line', 'lens'}``."""
    mu = predictor.measure
    gf = predictor.g
    edges = np.asarray(gf.edge_points)
    radii = np.asarray(radii, dtype=float)

    def outside_discs(z):
        return np.all(np.abs(z[:, None] - edges[None, :]) > radii[None, :] * (1 - 1e-12), axis=1)

    # (a) Σ minus the support minus the discs: the effective potential on a grid (NaN off Σ)
    line = np.inf
    support = gf.support
    lo_hull, hi_hull = support[0][0], support[-1][1]
    width = hi_hull - lo_hull
    pieces = [(support[j][1], support[j + 1][0]) for j in range(len(support) - 1)]
    pieces += [(hi_hull, hi_hull + 4 * width), (lo_hull - 4 * width, lo_hull)]
    # the disc boundaries on the axis belong to the grid: the minimum is usually there
    rims = np.concatenate([edges - radii, edges + radii])
    for lo, hi in pieces:
        x = np.linspace(lo, hi, points)
        x = np.concatenate([x, rims[(rims > lo) & (rims < hi)]])
        x = x[outside_discs(x + 0j)]
        if x.size:
            v = mu.effective_potential(x)
            if np.any(np.isfinite(v)):
                line = min(line, float(np.nanmin(v)))
    # (b) the lenses: -Re φ = 2 Re g + ℓ - V on the lips outside the discs, best κ per band
    lens = np.inf
    for a, b in support:
        x = np.linspace(a, b, points + 2)[1:-1]
        best = 0.0
        for kappa in kappas:
            z = x + 1j * kappa * np.sqrt((x - a) * (b - x))
            z = z[outside_discs(z)]
            if z.size == 0:
                continue
            re_phi = np.real(gf.V(z)) - gf.lagrange - 2.0 * np.real(gf(z))
            best = max(best, float(np.min(-re_phi)))
        lens = min(lens, best)
    c = min(line, lens)
    return {"c": float(c), "line": float(line), "lens": float(lens)}


def phase_error(predictor, degrees, *, step: float = 1e-6) -> np.ndarray:
    """``Σ_j |∂(a, b)/∂w_j| δw_j`` per degree, ``δw_j = n δΩ + 2ε`` (module docstring); zeros for one band.

    ``δΩ = max(mass_error, ε)`` from the checks of the equilibrium measure (its total mass
    differs from 1 by that much; the band masses, whose sums are the ``Ω_j``, come from the same
    rule), ``ε = 2^-53``; when Ω was re-solved beyond double precision
    (:func:`equilibrium.refinement.with_refined_frequencies`) its check ``omega_error`` (the
    error of ``omega + omega_low``) takes the place of ``mass_error``.  The derivatives are central differences of the leading-order
    ``a = (a²)^{1/2}``, ``b`` of ``ModelProblem.expansion`` with step ``step`` in the phases
    (their error O(step²) is far below the derivatives themselves).
    """
    return _expansion_and_phase_error(predictor, degrees, step)[1]


def _expansion_and_phase_error(predictor, degrees, step: float = 1e-6):
    """``(expansion at the phases of degrees, phase error)`` from one call of ``ModelProblem.expansion``
    (its theta functions cost mostly per call, not per point); the expansion is None for one band."""
    degrees = np.atleast_1d(np.asarray(degrees))
    g = int(predictor.genus)
    N = degrees.size
    if g == 0:
        return None, np.zeros(N)
    eps = 2.0 ** -53
    checks = getattr(predictor.measure, "checks", {}) or {}
    # δΩ: the double solve's Ω is off by ~mass_error; Ω re-solved beyond double precision
    # (equilibrium.refinement, omega + omega_low) by omega_error.  The product nΩ and its reduction
    # are exact (gfunction.phase), leaving the rounding 2ε of the reduced phase.
    d_omega = float(checks["omega_error"]) if "omega_error" in checks else max(float(checks.get("mass_error", 0.0)), eps)
    dw = np.broadcast_to(degrees.astype(float)[:, None] * d_omega + 2 * eps, (N, g))  # (N, g)
    w = predictor.phases(degrees)
    shifts = np.concatenate([np.eye(g), -np.eye(g)]) * step                           # (2g, g)
    ex = predictor.model.expansion(np.concatenate([w, (w[:, None, :] + shifts[None]).reshape(-1, g)]))
    at_degrees = {key: (np.asarray(v)[:N] if np.ndim(v) else v) for key, v in ex.items()}
    a = np.sqrt(np.abs(np.asarray(ex["a2"])[N:].real)).reshape(N, 2 * g)
    b = np.asarray(ex["b"])[N:].real.reshape(N, 2 * g)
    da = np.abs(a[:, :g] - a[:, g:]) / (2 * step)
    db = np.abs(b[:, :g] - b[:, g:]) / (2 * step)
    return at_degrees, np.maximum(np.sum(da * dw, axis=1), np.sum(db * dw, axis=1))


@dataclass(frozen=True)
class ResidualSolver:
    """Everything of the residual problem that does not depend on n: the circles at two
    resolutions, their collocation operators and the neglected-jump exponent."""

    predictor: Any
    jumps: tuple
    operators: tuple
    neglected: dict
    tolerance: float

    def solve(self, degrees, *, on_failure: str = "raise") -> ResidualSolution:
        """``a_n, b_n`` for each degree (module docstring); ``on_failure`` as in ``equilibrium.verification``."""
        failure_policy(on_failure)
        degrees = np.atleast_1d(np.asarray(degrees))
        if degrees.ndim != 1 or degrees.size == 0 or np.any(degrees < 1) or np.any(degrees != np.round(degrees)):
            raise InputError(f"degrees must be positive integers; got {degrees!r}")
        degrees = degrees.astype(np.int64)
        expansion, phase_err = _expansion_and_phase_error(self.predictor, degrees)
        out = outer_at_infinity(self.predictor, degrees, expansion=expansion)
        N = degrees.size
        R1 = np.zeros((2, N, 2, 2), dtype=complex)
        R2 = np.zeros((2, N, 2, 2), dtype=complex)
        iterations = np.zeros(N, dtype=int)
        worst_residual = 0.0
        for i, n in enumerate(degrees):
            for level, (jump, op) in enumerate(zip(self.jumps, self.operators)):
                W = jump.exact_jump(int(n))
                if not np.all(np.isfinite(W)):
                    raise NumericalFailure(f"the exact jump J_R is not finite on the circles at n = {n}")
                mu, its = _solve_one(op, W)
                F = _mul(mu, W)
                # the collocation residual of the solution (rounding if the solve is right)
                worst_residual = max(worst_residual, float(np.max(np.abs(mu - np.eye(2) - op.minus(F)))))
                Rp = op.infinity(F, 2)
                R1[level, i], R2[level, i] = Rp[0], Rp[1]
                if level == 1:
                    iterations[i] = its
        a2 = np.empty((2, N), dtype=complex)
        b = np.empty((2, N), dtype=complex)
        for level in range(2):
            a2[level], b[level] = recurrence_from_expansions(out["N1_12"], out["N1_21"], out["N1_22"],
                                                             out["N2_12"], R1[level], R2[level])
        if np.any(a2.real <= 0):
            raise NumericalFailure("the residual problem gives a non-positive a²")
        a = np.sqrt(a2.real)
        diff = np.maximum(np.abs(a[0] - a[1]), np.abs(b[0] - b[1]).real)
        c = self.neglected["c"]
        neglected = np.exp(-degrees.astype(float) * c) if np.isfinite(c) else np.zeros(N)
        solved = np.maximum(diff, neglected)
        err = np.maximum(solved, phase_err)
        sym = np.concatenate([R1[1], R2[1]])
        S3 = np.diag([1.0, -1.0])
        checks = {"imag_a2": float(np.max(np.abs(a2[1].imag))), "imag_b": float(np.max(np.abs(b[1].imag))),
                  "collocation_residual": worst_residual,
                  "symmetry": float(np.max(np.abs(sym - S3 @ np.conj(sym) @ S3))),
                  "error_estimate": float(np.max(solved)),
                  "phase_error": float(np.max(phase_err)),
                  "neglected_exponent_line": self.neglected["line"],
                  "neglected_exponent_lens": self.neglected["lens"]}
        checks = float_checks(checks)
        message = failure_message(checks, {**TOLERANCES, "error_estimate": self.tolerance},
                                  what="residual problem")
        critical = float(np.log(1 / self.tolerance) / c) if c > 0 else np.inf
        low = degrees[neglected > self.tolerance]
        if low.size:
            message += ("; " if message else "") + (
                f"the neglected lens and gap jumps e^(-nc), c = {c:.3g}, exceed {self.tolerance:.0e} for n < "
                f"{critical:.0f} (here n = {', '.join(str(int(v)) for v in low[:5])}"
                f"{', …' if low.size > 5 else ''}): those values are marked, not refused")
        result = ResidualSolution(degrees, a[1].copy(), b[1].real.copy(), err, diff, neglected, c, iterations,
                                  solved <= self.tolerance, not message, R1[1], R2[1], checks, message, critical,
                                  phase_err)
        return settle(result, on_failure)


def residual_solver(predictor, *, samples: int = _DEFAULT_SAMPLES, tolerance: float = 1e-13) -> ResidualSolver:
    """Prepare the residual problem of ``predictor`` at resolutions ``samples`` and ``3 samples/2``."""
    _refuse_interior_singularities(predictor)
    fine = 3 * samples // 2
    fine += fine % 2
    jumps = (jump_expansion(predictor, 0, samples=samples), jump_expansion(predictor, 0, samples=fine))
    ops = tuple(collocation_operator(j) for j in jumps)
    return ResidualSolver(predictor, jumps, ops, neglected_jump_exponent(predictor, jumps[0].radii), tolerance)


def solve_residual_problem(predictor, degrees, *, samples: int = _DEFAULT_SAMPLES, tolerance: float = 1e-13,
                           on_failure: str = "raise") -> ResidualSolution:
    """``a_n, b_n`` from ``R`` computed by spectral collocation, with an error estimate (module docstring).

    ``tolerance`` -- the error estimate above which a degree is marked not verified.
    """
    return residual_solver(predictor, samples=samples, tolerance=tolerance).solve(degrees, on_failure=on_failure)
