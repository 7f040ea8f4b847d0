r"""Riemann theta functions with a guaranteed truncation bound.

Definition (NIST DLMF §21.2; with characteristics also §21.2 -- equation numbers quoted below are
from memory)::

    θ(u | τ)       = Σ_{m ∈ Z^g} exp(πi mᵀτm + 2πi mᵀu),
    θ[α; β](u | τ) = Σ_{m ∈ Z^g} exp(πi (m+α)ᵀτ(m+α) + 2πi (m+α)ᵀ(u+β))
                   = exp(πi αᵀτα + 2πi αᵀ(u+β)) θ(u + τα + β | τ),

for a symmetric ``τ`` whose imaginary part ``Y`` is positive definite.

Reduction (Deconinck, Heil, Bobenko, van Hoeij and Schmies, "Computing
Riemann theta functions", Math. Comp. 73 (2004) 1417-1442, §2).  Write
``u = x + i y``, ``c = Y⁻¹ y``, ``k = round(c)`` (componentwise), ``r = c - k``
and ``m = n - k``.  Then ``Re(πi mᵀτm + 2πi mᵀu) = -π (n+r)ᵀY(n+r) + π yᵀY⁻¹y``,
so that

    θ(u | τ) = exp(π yᵀY⁻¹y) · θ̂(u | τ),
    θ̂(u | τ) = Σ_n exp(πi mᵀτm + 2πi mᵀu - π yᵀY⁻¹y),   |term_n| = exp(-‖v_n‖²),

with ``v_n = √π T (n + r)`` and ``Y = TᵀT`` (Cholesky).  The exponential growth
``π yᵀY⁻¹y`` is returned separately (:func:`riemann_theta_scaled`) so that
ratios of thetas at arguments with large imaginary part never overflow.

Truncation.  The sum is restricted to the lattice points with ``‖v_n‖ < R``.
With ``ρ`` the length of the shortest non-zero vector of the lattice
``√π T Z^g`` the neglected tail obeys (DHBvHS 2004, Theorem 2)

    ε(R) ≤ (g/2) (2/ρ)^g Γ(g/2, (R - ρ/2)²),

Γ(a, x) the upper incomplete gamma function.  We re-derived it rather than
taking it on trust: the balls ``B(v_n, ρ/2)`` are disjoint, and
``exp(-‖w‖²)`` is subharmonic where ``‖w‖² ≥ g/2`` (its Laplacian is
``(4‖w‖² - 2g) exp(-‖w‖²)``), so each term is at most the mean of
``exp(-‖w‖²)`` over its ball; summing and integrating over
``‖w‖ ≥ R - ρ/2`` gives the formula.  Our derivation needs
``R ≥ ρ/2 + (g/2)^{1/2}``, which we impose.  For the gradient,
``|m_j| ≤ |(n+r)_j| + |c_j|`` and ``|(n+r)_j| ≤ ‖row_j T⁻¹‖ ‖v_n‖/√π``; the
same argument applied to ``‖w‖ exp(-‖w‖²)`` (subharmonic where
``‖w‖² ≥ (g+2)/2``) gives

    Σ_tail ‖v_n‖ exp(-‖v_n‖²) ≤ (g/2) (2/ρ)^g Γ((g+1)/2, (R - ρ/2)²).

Rounding is not in that bound.  The bound is for the sum in exact arithmetic; in
floating point each term ``exp(z_n)``, ``z_n = πi mᵀτm + 2πi mᵀu - π yᵀY⁻¹y``, carries
a relative error of about ``ε |z_n|`` (the rounding of its argument), and the
scaling exponent ``π yᵀY⁻¹y`` sits in every ``z_n``.  So the computed oscillatory part
is off by about ``|θ̂ - θ̂_computed| ≲ truncation_bound + ε (1 + π yᵀY⁻¹y) Σ|terms|``
(a model, not a proof: ε = 2.2e-16, Σ|terms| is O(1)).  Measured against mpmath
(60 digits) for genus 1 and 2 at tol = 1e-14 (``tests/gfunction/test_theta.py``,
``test_rounding_grows_with_the_exponent``): the error is below the bound for
``π yᵀY⁻¹y ≲ 10``, up to 6× the bound at 150 and 12× at 300, and always within
``tol + 4 ε (1 + π yᵀY⁻¹y)``.  Ratios θ(u)/θ(u + s) at the same ``Im u`` share the
exponent, so their relative rounding is the same ``ε π yᵀY⁻¹y``.

Basis reduction (the unimodular part of a Siegel reduction, DHBvHS §4; Lenstra, Lenstra
and Lovász, Math. Ann. 261 (1982) 515-534).  For any unimodular ``U ∈ GL(g, Z)`` the
substitution ``n = U n'`` only reorders the sum, so exactly

    θ(u | τ) = θ(Uᵀu | UᵀτU),   ∇_u θ(u | τ) = U ∇θ(Uᵀu | UᵀτU).

``U`` is chosen by LLL (δ = 0.99) on the columns of ``T``, which makes ``Uᵀ Y U`` nearly
diagonal.  The ellipsoid count depends on the radius ``R + max ‖√πT r‖`` and on
``det Y`` (invariant); the shift ``r = c - round(c)`` is rounded in the reduced basis,
where the cube ``[-1/2, 1/2]^g`` is short, so fewer points are summed (equally
spaced bands: genus 4, 5505 → 3055 points; genus 6, 690 151 → 152 533), the terms
are the same numbers reordered, and the bound is unchanged (ρ and det are
invariants).  The other Siegel steps (Re τ mod 1 and the quasi-inversion of the
first coordinate when ``|τ₁₁| < 1``) are **not** done: a small ``Im τ`` in every
direction still costs lattice points (the budget ``max_points`` then raises
:class:`~equilibrium.errors.NumericalFailure`), never accuracy.  Everything below
(``ThetaLattice``, ``ThetaShiftTable``) works in the reduced basis and maps
arguments, shifts and gradients through ``U``.

Enumeration.  One fixed point set serves every argument: all ``n`` with
``‖√π T n‖ < R + max_{r ∈ [-1/2,1/2]^g} ‖√π T r‖`` (triangle inequality), built
coordinate by coordinate from the triangular factor (stacked interval
construction, as in DHBvHS §3).  The sum is then a dense matrix product
over (arguments × lattice points), done in chunks.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Optional, Sequence

import numpy as np
from numpy.typing import ArrayLike
from scipy.special import gamma as _gamma
from scipy.special import gammaincc, gammainccinv

from equilibrium.errors import InputError, NumericalFailure

__all__ = [
    "ThetaValues",
    "riemann_theta",
    "riemann_theta_scaled",
    "theta_gradient",
    "theta_lattice",
    "ThetaLattice",
    "ThetaShiftTable",
    "theta_shift_table",
    "ShiftPhases",
    "shift_phases",
]

_CHUNK_ENTRIES = 1_500_000  # arguments × lattice points per block (memory ~ 24 MB complex)


@dataclass(frozen=True)
class ThetaValues:
    r"""Values of a Riemann theta function on a batch of arguments.

    Attributes
    ----------
    value : complex ndarray, batch shape
        θ(u|τ) (or θ[α;β](u|τ)).  Equals ``oscillatory * exp(exponent)``; may
        overflow to ``inf`` when ``Im u`` is large -- use ``oscillatory`` and
        ``exponent`` then.
    gradient : complex ndarray (..., g) or None
        ∂θ/∂u_j when requested.
    truncation_bound : float
        Guaranteed bound on the neglected tail of the *oscillatory* part, in exact
        arithmetic: the truncated sum differs from θ by at most
        ``truncation_bound · exp(exponent)`` pointwise (for real ``u`` the exponent is
        0 and the bound is absolute).  Rounding is not included: it adds about
        ``ε (1 + exponent)`` relative to ``exp(exponent)`` (module docstring, "Rounding").
    lattice_points : int
        Number of lattice points summed.
    oscillatory : complex ndarray, batch shape
        θ̂ = θ · exp(-exponent), of modulus at most Σ_n exp(-‖v_n‖²).
    exponent : float ndarray, batch shape
        π yᵀY⁻¹y (plus the real part of the characteristic prefactor).
    oscillatory_gradient : complex ndarray (..., g) or None
        ∇θ · exp(-exponent); ``oscillatory_gradient / oscillatory`` is the
        logarithmic gradient ∇θ/θ without overflow.
    gradient_truncation_bound : float or None
        Bound on the neglected tail of each component of
        ``oscillatory_gradient`` (maximum over the batch).
    radius : float
        Ellipsoid radius R (in the variables v = √π T(n + r)).
    shortest_vector : float
        ρ, length of the shortest vector of √π T Z^g.
    """

    value: np.ndarray
    gradient: Optional[np.ndarray]
    truncation_bound: float
    lattice_points: int
    oscillatory: np.ndarray
    exponent: np.ndarray
    oscillatory_gradient: Optional[np.ndarray] = None
    gradient_truncation_bound: Optional[float] = None
    radius: float = float("nan")
    shortest_vector: float = float("nan")


# ---------------------------------------------------------------------------
# input checks
# ---------------------------------------------------------------------------

def _period_matrix(tau: ArrayLike) -> np.ndarray:
    t = np.asarray(tau, dtype=complex)
    if t.ndim == 0:
        t = t.reshape(1, 1)
    if t.ndim != 2 or t.shape[0] != t.shape[1] or t.shape[0] == 0:
        raise InputError(f"tau must be a square (g, g) matrix (or a scalar for g = 1); got shape {t.shape}")
    if not np.all(np.isfinite(t)):
        raise InputError("tau has non-finite entries; give a finite symmetric matrix with positive definite imaginary part")
    scale = max(1.0, float(np.max(np.abs(t))))
    asym = float(np.max(np.abs(t - t.T)))
    if asym > 1e-10 * scale:
        raise InputError(f"tau is not symmetric (max |tau - tau^T| = {asym:.3e}); a period matrix must be symmetric")
    t = 0.5 * (t + t.T)
    return t


def _cholesky_upper(Y: np.ndarray) -> np.ndarray:
    try:
        L = np.linalg.cholesky(Y)
    except np.linalg.LinAlgError:
        ev = np.linalg.eigvalsh(Y)
        raise InputError(
            f"Im tau is not positive definite (smallest eigenvalue {ev.min():.3e}); "
            "a Riemann matrix needs Im tau > 0") from None
    if np.min(np.diag(L)) <= 0:
        raise InputError("Im tau is not positive definite; a Riemann matrix needs Im tau > 0")
    return L.T.copy()


def _arguments(u: ArrayLike, g: int) -> tuple[np.ndarray, tuple[int, ...]]:
    """Return (P, g) complex arguments and the batch shape.

    u of shape (..., g) is always accepted; for g = 1 an array whose last axis
    is not of length 1 (or a scalar) is read as a batch of scalar arguments.
    """
    z = np.asarray(u, dtype=complex)
    if g == 1 and (z.ndim == 0 or z.shape[-1] != 1):
        z = z[..., None]
    if z.ndim == 0 or z.shape[-1] != g:
        raise InputError(f"u must have shape (..., {g}) to match tau of genus {g}; got shape {np.shape(u)}")
    if not np.all(np.isfinite(z)):
        raise InputError("u has non-finite entries")
    batch = z.shape[:-1]
    return z.reshape(-1, g), batch


# ---------------------------------------------------------------------------
# lattice enumeration and truncation radius
# ---------------------------------------------------------------------------

def _ellipsoid_points(T: np.ndarray, radius: float, max_points: int) -> np.ndarray:
    """All n ∈ Z^g with ‖T n‖ ≤ radius, T upper triangular (stacked construction).

    Coordinates are fixed from the last to the first: with n_{i+1..g} fixed,
    ‖Tn‖² = Σ_{l≤i} (...)² + Σ_{l>i} (T_l· n)², and row i bounds n_i to an interval.
    """
    g = T.shape[0]
    pts = np.zeros((1, 0), dtype=np.int64)      # fixed trailing coordinates n_{i+1..g-1}
    rem = np.array([radius * radius])            # radius² minus the fixed rows' contribution
    for i in range(g - 1, -1, -1):
        # row i: (T_ii n_i + s)^2 ≤ rem,   s = Σ_{j>i} T_ij n_j
        s = pts @ T[i, i + 1:] if pts.shape[1] else np.zeros(pts.shape[0])
        half = np.sqrt(np.maximum(rem, 0.0)) / T[i, i]
        centre = -s / T[i, i]
        lo = np.ceil(centre - half - 1e-12).astype(np.int64)
        hi = np.floor(centre + half + 1e-12).astype(np.int64)
        count = np.maximum(hi - lo + 1, 0)
        total = int(count.sum())
        if total > max_points:
            raise NumericalFailure(
                f"theta sum over its budget: the ellipsoid holds more than {max_points} lattice points "
                f"(already {total} at coordinate {i + 1} of {g}); raise max_points or loosen tol")
        idx = np.repeat(np.arange(pts.shape[0]), count)
        offs = np.arange(total) - np.repeat(np.cumsum(count) - count, count)
        ni = lo[idx] + offs
        rows = T[i, i] * ni + s[idx]
        rem = rem[idx] - rows * rows
        pts = np.column_stack([ni, pts[idx]])
    return pts


def _shortest_vector(S: np.ndarray) -> float:
    """Length of the shortest non-zero vector of the lattice S Z^g (S upper triangular)."""
    bound = float(np.min(np.linalg.norm(S, axis=0)))  # a column is a lattice vector
    pts = _ellipsoid_points(S, bound * (1 + 1e-12), 10_000_000)
    norms = np.linalg.norm(pts @ S.T, axis=1)
    norms = norms[np.any(pts != 0, axis=1)]
    return float(min(bound, norms.min())) if norms.size else bound


def _tail_sum(g: int, rho: float, R: float, power: int) -> float:
    """Bound of Σ_{‖v‖≥R} ‖v‖^power exp(-‖v‖²), power ∈ {0, 1} (see module docstring)."""
    a = 0.5 * (g + power)
    x = (R - 0.5 * rho) ** 2
    return float(0.5 * g * (2.0 / rho) ** g * _gamma(a) * gammaincc(a, x))


def _radius_for(g: int, rho: float, tol: float, power: int) -> float:
    """Smallest R (up to the root finder) with tail bound ≤ tol and the subharmonic condition."""
    a = 0.5 * (g + power)
    x_min = 0.5 * (g + 2 * power)                     # subharmonicity: ‖w‖² ≥ (g + 2 power)/2
    target = tol / (0.5 * g * (2.0 / rho) ** g * _gamma(a))
    x = x_min if target >= 1.0 else max(x_min, float(gammainccinv(a, target)))
    R = 0.5 * rho + np.sqrt(x)
    # gammainccinv is accurate to a few ulps; step out until the bound is certainly met
    while _tail_sum(g, rho, R, power) > tol:
        R *= 1.0 + 1e-6
    return float(R)


def _lll(T: np.ndarray, delta: float = 0.99) -> np.ndarray:
    """Unimodular ``U`` (int64, g × g) with the columns of ``T U`` LLL-reduced (LLL 1982, δ = 0.99).

    Plain textbook form (Gram-Schmidt recomputed after each change; g ≤ 10 here).
    """
    B = np.array(T, dtype=float)
    g = B.shape[1]
    U = np.eye(g, dtype=np.int64)

    def gram_schmidt():
        Q = np.zeros_like(B)
        mu = np.zeros((g, g))
        norm2 = np.zeros(g)
        for i in range(g):
            v = B[:, i].copy()
            for j in range(i):
                mu[i, j] = (B[:, i] @ Q[:, j]) / norm2[j]
                v -= mu[i, j] * Q[:, j]
            Q[:, i] = v
            norm2[i] = v @ v
        return mu, norm2

    k, steps = 1, 0
    while k < g and steps < 100 * g * g:
        steps += 1
        mu, norm2 = gram_schmidt()
        for j in range(k - 1, -1, -1):
            q = int(np.rint(mu[k, j]))
            if q:
                B[:, k] -= q * B[:, j]
                U[:, k] -= q * U[:, j]
                mu, norm2 = gram_schmidt()
        if norm2[k] >= (delta - mu[k, k - 1] ** 2) * norm2[k - 1]:
            k += 1
        else:
            B[:, [k - 1, k]] = B[:, [k, k - 1]]
            U[:, [k - 1, k]] = U[:, [k, k - 1]]
            k = max(k - 1, 1)
    return U


_REDUCTIONS: dict[bytes, np.ndarray] = {}


def _reduction(t: np.ndarray) -> np.ndarray:
    """The unimodular basis ``U`` of τ (module docstring, "Basis reduction"); cached per τ."""
    key = t.tobytes()
    U = _REDUCTIONS.get(key)
    if U is None:
        U = _lll(_cholesky_upper(t.imag))
        if len(_REDUCTIONS) > 256:
            _REDUCTIONS.clear()
        _REDUCTIONS[key] = U
    return U


@dataclass(frozen=True)
class ThetaLattice:
    """The lattice data of one period matrix and tolerance (reusable across calls).

    ``tau`` is the period matrix as given; ``basis`` the unimodular ``U`` of the basis
    reduction and ``reduced_tau = UᵀτU``.  ``T``, ``Yinv``, ``points`` and the shifts of
    :meth:`covers` are in the reduced basis (arguments ``u`` map to ``Uᵀu``).
    """

    tau: np.ndarray
    T: np.ndarray            # upper triangular, Im reduced_tau = TᵀT
    Yinv: np.ndarray
    Tinv_row_norm: float     # max_j ‖row_j T⁻¹‖
    rho: float
    radius: float
    points: np.ndarray       # (N, g) integer lattice points (reduced basis)
    value_bound: float
    gradient_tail: float     # bound of Σ_tail ‖v‖ e^{-‖v‖²}
    shift_radius: float = float("inf")   # the point set covers every shift r with ‖√πT r‖ ≤ this
    gradient: bool = False   # radius also chosen for the gradient tail
    basis: Optional[np.ndarray] = None          # U (int64); None: the identity
    reduced_tau: Optional[np.ndarray] = None    # UᵀτU
    # the line structure of the points and e^{πi nᵀτn} on it (_line_data), built at first use
    _lines: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def covers(self, shifts: np.ndarray) -> bool:
        """True if every shift r (rows of ``shifts``, reduced basis) satisfies ‖√πT r‖ ≤ ``shift_radius``."""
        r = np.asarray(shifts, dtype=float).reshape(-1, self.T.shape[0])
        if r.size == 0:
            return True
        return bool(np.max(np.linalg.norm(r @ (np.sqrt(np.pi) * self.T).T, axis=1)) <= self.shift_radius)

    def scaled(self, u: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """``riemann_theta_scaled(u, tau, lattice=self)`` for arguments u (P, g) without checking τ
        again (it was checked when this lattice was built): ``(oscillatory, exponent)``, shape (P,).

        For many small calls on one lattice (root finding).  Arguments whose shifts this
        lattice does not cover, or non-finite ones, go through :func:`riemann_theta_scaled`.
        """
        g = self.T.shape[0]
        z = np.asarray(u, dtype=complex).reshape(-1, g)
        zr = self.to_reduced(z)
        c = zr.imag @ self.Yinv
        if not (np.all(np.isfinite(z)) and self.covers(c - np.rint(c))):
            return riemann_theta_scaled(z, self.tau, lattice=self)
        osc, exponent, _, _ = _scaled_sum(zr, self, False)
        return osc, exponent

    def to_reduced(self, u: np.ndarray) -> np.ndarray:
        """Arguments (P, g) in the reduced basis: rows ``Uᵀu``."""
        return u if self.basis is None else u @ self.basis

    def shifts_of(self, u: np.ndarray) -> np.ndarray:
        """The shifts ``r = c - round(c)``, ``c = Y_red⁻¹ Im(Uᵀu)``, of arguments u (P, g)."""
        c = self.to_reduced(np.asarray(u, dtype=complex)).imag @ self.Yinv
        return c - np.rint(c)


def _reduced(t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(U, UᵀτU) for a checked τ; the product exactly symmetric."""
    U = _reduction(t)
    Uf = U.astype(float)
    tr = Uf.T @ t @ Uf
    return U, 0.5 * (tr + tr.T)


def theta_lattice(tau: ArrayLike, *, tol: float = 1e-14, gradient: bool = False,
                  max_points: int = 2_000_000, shifts: ArrayLike | None = None,
                  arguments: ArrayLike | None = None, margin: float = 1.0) -> ThetaLattice:
    """Check τ, reduce its basis, choose the radius from the tail bound and enumerate the points.

    ``shifts`` (P, g): the vectors r = c - round(c) *in the reduced basis*
    (:meth:`ThetaLattice.shifts_of`) of the arguments to be summed; or
    ``arguments`` (P, g): the arguments u themselves.  The point set covers
    ‖√πT(n + r)‖ < R for each of them, with the shifts scaled by ``margin`` (≥ 1, room
    for arguments between the ones given).  Without either, every r in the cube
    [-1/2, 1/2]^g is covered.
    """
    t = _period_matrix(tau)
    if not (np.isfinite(tol) and tol > 0):
        raise InputError(f"tol must be a positive number; got {tol!r}")
    g = t.shape[0]
    _cholesky_upper(t.imag)                               # refuse a non-Riemann matrix first
    U, tr = _reduced(t)
    Y = tr.imag
    T = _cholesky_upper(Y)
    Yinv = np.linalg.inv(Y)
    if arguments is not None:
        z, _ = _arguments(arguments, g)
        c = (z @ U).imag @ Yinv
        shifts = c - np.rint(c)
    S = np.sqrt(np.pi) * T
    rho = _shortest_vector(S)
    R = _radius_for(g, rho, tol, 0)
    Tinv = np.linalg.inv(T)
    row = float(np.max(np.linalg.norm(Tinv, axis=1)))
    if gradient:
        R = max(R, _radius_for(g, rho, tol / max(row / np.sqrt(np.pi), 1e-300), 1))
    if shifts is None:
        # r ranges over the cube [-1/2, 1/2]^g; ‖S r‖ is convex, so its max is at a vertex
        verts = (np.array(np.meshgrid(*([[-0.5, 0.5]] * g), indexing="ij")).reshape(g, -1)).T
        shift = float(np.max(np.linalg.norm(verts @ S.T, axis=1)))
    else:
        r = margin * np.asarray(shifts, dtype=float).reshape(-1, g)
        shift = float(np.max(np.linalg.norm(r @ S.T, axis=1))) * (1 + 1e-12) if r.size else 0.0
    big = R + shift
    # estimated count (volume of the ball / covolume) before enumerating
    est = np.pi ** (g / 2) / _gamma(g / 2 + 1) * big ** g / np.prod(np.diag(S))
    if est > 4 * max_points:
        raise NumericalFailure(
            f"theta sum over its budget: about {est:.3g} lattice points needed (radius {big:.3g}, "
            f"shortest lattice vector {rho:.3g}) but max_points = {max_points}")
    pts = _ellipsoid_points(S, big, max_points)
    return ThetaLattice(
        tau=t, T=T, Yinv=Yinv, Tinv_row_norm=row, rho=rho, radius=R, points=pts,
        value_bound=_tail_sum(g, rho, R, 0), gradient_tail=_tail_sum(g, rho, R, 1),
        shift_radius=shift, gradient=gradient, basis=U, reduced_tau=tr)


# ---------------------------------------------------------------------------
# the sum
# ---------------------------------------------------------------------------

def _line_structure(points: np.ndarray):
    """Group lattice points into lines along the first coordinate.

    Returns the distinct trailing coordinates (L, g-1), the first-coordinate
    offset ``n1_min``, and for every point its (row in n1 - n1_min, line index).
    """
    trail, line = np.unique(points[:, 1:], axis=0, return_inverse=True)
    n1 = points[:, 0]
    n1_min = int(n1.min())
    return trail, n1_min, n1 - n1_min, line.reshape(-1)


def _line_data(lat: ThetaLattice):
    """The n-dependent part of :func:`_scaled_sum` (depends on the lattice only; kept on it).

    Returns ``(n1, M, trail_f, ranges, cols)``: the first coordinates of the lines, the
    (width × lines) matrix of ``e^{πi nᵀτn}``, the trailing coordinates of the lines and the
    per-coordinate ranges and columns of the trailing tables; None when the factored form
    could overflow (then the terms are exponentiated one by one).
    """
    if "data" in lat._lines:
        return lat._lines["data"]
    t = lat.tau if lat.reduced_tau is None else lat.reduced_tau
    pts_i = lat.points
    pts = pts_i.astype(float)                            # (N, g)
    g = t.shape[0]
    # |Re b_p| = 2π|Y r| with |r_j| ≤ 1/2: largest real exponent of a single factor
    growth = np.pi * float(np.max(np.abs(pts) @ np.abs(t.imag).sum(axis=1))) if pts.shape[0] else 0.0
    data = None
    if growth < 600.0:          # every factor stays below e^600 < 1e308
        a_n = 1j * np.pi * np.einsum("ni,ij,nj->n", pts, t, pts)
        trail, n1_min, row, line = _line_structure(pts_i)
        width = int(row.max()) + 1
        L = trail.shape[0]
        M = np.zeros((width, L), dtype=complex)
        M[row, line] = np.exp(a_n)
        n1 = (np.arange(width) + n1_min).astype(float)
        trail_f = trail.astype(float)
        # exp(n'ᵀb'_p) = ∏_{j≥2} exp(n_j b_pj): one small table of exponentials per coordinate,
        # gathered onto the lines (multiplications instead of P·L complex exponentials)
        lows = trail.min(axis=0) if g > 1 else np.zeros(0, dtype=np.int64)
        ranges = [np.arange(lows[j], trail[:, j].max() + 1, dtype=float) for j in range(g - 1)]
        cols = [trail[:, j] - lows[j] for j in range(g - 1)]
        data = (n1, M, trail_f, ranges, cols)
    lat._lines["data"] = data
    return data


def _scaled_sum(z: np.ndarray, lat: ThetaLattice, gradient: bool):
    """Oscillatory part, exponent and (optionally) oscillatory gradient at z (P, g).

    Term n of θ̂ is exp(a_n + nᵀb_p + c_p) with
    a_n = πi nᵀτn,  b_p = 2πi(u_p - τk_p),  c_p = πi kᵀτk - 2πi kᵀu_p - π yᵀY⁻¹y
    (m = n - k).  Complex exponentials are the cost, so the sum is factored
    along lines of the first coordinate n_1 (trailing coordinates n' fixed):
    Σ_n = Σ_lines exp(n'ᵀb'_p + c_p) Σ_{n_1} exp(n_1 b_p1) exp(a_n),
    the inner sums being one matrix product (arguments × n_1) · (n_1 × lines),
    and exp(n'ᵀb'_p) a product of per-coordinate tables.
    The factored form can overflow for huge Im τ; then the terms are
    exponentiated one by one.
    """
    t = lat.tau if lat.reduced_tau is None else lat.reduced_tau
    g = t.shape[0]
    y = z.imag
    c = y @ lat.Yinv                                     # Y symmetric: c = Y⁻¹ y
    k = np.rint(c)
    exponent = np.pi * np.einsum("pi,pi->p", y, c)
    b_p = 2j * np.pi * (z - k @ t)
    c_p = (1j * np.pi * np.einsum("pi,ij,pj->p", k, t, k)
           - 2j * np.pi * np.einsum("pi,pi->p", k, z) - exponent)
    P, N = z.shape[0], lat.points.shape[0]
    osc = np.empty(P, dtype=complex)
    grad = np.empty((P, g), dtype=complex) if gradient else None
    lines = _line_data(lat)
    if lines is not None:
        n1, M, trail_f, ranges, cols = lines
        width, L = M.shape
        if gradient:
            M1 = M * n1[:, None]
        step = max(1, _CHUNK_ENTRIES // max(L + width, 1))
        for s in range(0, P, step):
            sl = slice(s, s + step)
            W = np.exp(b_p[sl, 0:1] * n1[None, :])                      # (p, width)
            inner = W @ M                                                 # (p, L)
            # the line factors exp(n'ᵀb'_p) (p, L); exp(c_p) multiplies the sums at the end
            F = None
            for j in range(g - 1):
                f = np.exp(b_p[sl, j + 1:j + 2] * ranges[j][None, :])[:, cols[j]]
                F = f if F is None else F * f
            FI = inner if F is None else F * inner
            scale = np.exp(c_p[sl])
            osc[sl] = FI.sum(axis=1) * scale
            if gradient:
                gsum = np.empty((FI.shape[0], g), dtype=complex)
                first = W @ M1
                gsum[:, 0] = (first if F is None else F * first).sum(axis=1)
                if g > 1:
                    gsum[:, 1:] = FI @ trail_f
                grad[sl] = 2j * np.pi * (gsum * scale[:, None] - k[sl] * osc[sl, None])
    else:
        pts = lat.points.astype(float)
        a_n = 1j * np.pi * np.einsum("ni,ij,nj->n", pts, t, pts)
        step = max(1, _CHUNK_ENTRIES // max(N, 1))
        for s in range(0, P, step):
            sl = slice(s, s + step)
            e = np.exp(b_p[sl] @ pts.T + a_n[None, :] + c_p[sl, None])
            osc[sl] = e.sum(axis=1)
            if gradient:
                grad[sl] = 2j * np.pi * (e @ pts - k[sl] * osc[sl, None])
    return osc, exponent, grad, c


def _characteristic(characteristic, g: int):
    if characteristic is None:
        return None
    try:
        alpha, beta = characteristic
    except (TypeError, ValueError):
        raise InputError("characteristic must be a pair (alpha, beta) of real g-vectors") from None
    al = np.atleast_1d(np.asarray(alpha, dtype=float))
    be = np.atleast_1d(np.asarray(beta, dtype=float))
    if al.shape != (g,) or be.shape != (g,) or not (np.all(np.isfinite(al)) and np.all(np.isfinite(be))):
        raise InputError(f"characteristic (alpha, beta) must be two finite real vectors of length {g}")
    return al, be


def _evaluate(u, tau, tol, gradient, characteristic, max_points, lattice=None):
    t = _period_matrix(tau)
    g = t.shape[0]
    Y = t.imag
    _cholesky_upper(Y)                                   # refuse a non-Riemann matrix first
    z, batch = _arguments(u, g)
    char = _characteristic(characteristic, g)
    if char is not None:
        # DLMF 21.2.7: θ[α;β](u) = exp(πi αᵀτα + 2πi αᵀ(u+β)) θ(u + τα + β)
        al, be = char
        pre = 1j * np.pi * (al @ t @ al) + 2j * np.pi * ((z + be) @ al)
        z = z + t @ al + be
    # θ(u|τ) = θ(Uᵀu | UᵀτU) (module docstring, "Basis reduction"); the lattice only has to
    # cover the shifts r = c - round(c) that actually occur (c computed exactly as in
    # _scaled_sum, so the covered shifts are the ones summed)
    U, tr = _reduced(t)
    zr = z @ U
    c = zr.imag @ np.linalg.inv(tr.imag)
    r = c - np.rint(c)
    if (lattice is not None and (lattice.gradient or not gradient) and lattice.tau.shape == t.shape
            and np.array_equal(lattice.tau, t) and lattice.covers(r)):
        lat = lattice
    else:
        lat = theta_lattice(t, tol=tol, gradient=gradient, max_points=max_points, shifts=r)
    osc, expo, grad, c = _scaled_sum(zr, lat, gradient)
    spread = 1.0
    if gradient:
        grad = grad @ U.T.astype(float)                  # ∇_u θ = U ∇_{u'} θ (rows)
        spread = float(np.max(np.abs(U).sum(axis=1)))
    if char is not None:
        phase = np.exp(1j * pre.imag)
        if gradient:
            grad = phase[:, None] * (grad + 2j * np.pi * al[None, :] * osc[:, None])
        osc = phase * osc
        expo = expo + pre.real
    gbound = None
    if gradient:
        cmax = float(np.max(np.abs(c))) if c.size else 0.0
        gbound = spread * 2 * np.pi * (lat.Tinv_row_norm / np.sqrt(np.pi) * lat.gradient_tail
                                       + cmax * lat.value_bound)
        if char is not None:
            gbound += 2 * np.pi * float(np.max(np.abs(char[0]))) * lat.value_bound
    return lat, batch, osc, expo, grad, gbound


def riemann_theta(u: ArrayLike, tau: ArrayLike, *, tol: float = 1e-14, gradient: bool = False,
                  characteristic: tuple[ArrayLike, ArrayLike] | None = None,
                  max_points: int = 2_000_000) -> ThetaValues:
    r"""Riemann theta function θ(u|τ) or θ[α;β](u|τ), vectorised over u.

    Parameters
    ----------
    u : array_like, complex, shape (..., g)
        Arguments (for g = 1 also any shape whose last axis is not of length 1).
    tau : array_like, (g, g)
        Symmetric, ``Im tau`` positive definite (scalar allowed for g = 1).
    tol : float
        Bound imposed on the neglected tail of the oscillatory part (see module
        docstring; DHBvHS 2004, Theorem 2).
    gradient : bool
        Also return ∂θ/∂u_j.
    characteristic : (alpha, beta), optional
        Real characteristic vectors (DLMF §21.2.5).
    max_points : int
        Budget of lattice points; beyond it :class:`NumericalFailure` is raised.

    Raises
    ------
    InputError
        τ not square/symmetric/finite, ``Im τ`` not positive definite, bad u.
    NumericalFailure
        The ellipsoid needs more than ``max_points`` lattice points.
    """
    lat, batch, osc, expo, grad, gbound = _evaluate(u, tau, tol, gradient, characteristic, max_points)
    g = lat.tau.shape[0]
    with np.errstate(over="ignore", invalid="ignore"):
        scale = np.exp(expo)
        value = osc * scale
        full_grad = grad * scale[:, None] if gradient else None
    return ThetaValues(
        value=value.reshape(batch),
        gradient=None if full_grad is None else full_grad.reshape(batch + (g,)),
        truncation_bound=lat.value_bound,
        lattice_points=int(lat.points.shape[0]),
        oscillatory=osc.reshape(batch),
        exponent=expo.reshape(batch),
        oscillatory_gradient=None if grad is None else grad.reshape(batch + (g,)),
        gradient_truncation_bound=gbound,
        radius=lat.radius,
        shortest_vector=lat.rho,
    )


def riemann_theta_scaled(u: ArrayLike, tau: ArrayLike, *, tol: float = 1e-14,
                         characteristic: tuple[ArrayLike, ArrayLike] | None = None,
                         max_points: int = 2_000_000,
                         lattice: ThetaLattice | None = None) -> tuple[np.ndarray, np.ndarray]:
    r"""Return ``(oscillatory, exponent)`` with θ(u|τ) = oscillatory · exp(exponent).

    ``exponent = π yᵀ(Im τ)⁻¹y`` (y = Im u; plus the real part of the
    characteristic prefactor), so ``|oscillatory|`` stays O(1) however large
    ``Im u`` is.  Same parameters and errors as :func:`riemann_theta`; the
    truncation bound of ``oscillatory`` is ``tol``.

    ``lattice`` -- a :func:`theta_lattice` of the same τ to reuse (saves the
    enumeration in repeated calls).  It is used only when it covers the
    shifts of these arguments (:meth:`ThetaLattice.covers`); its own ``tol``
    then applies.  Otherwise a new lattice is built as without it.
    """
    _, batch, osc, expo, _, _ = _evaluate(u, tau, tol, False, characteristic, max_points, lattice)
    return osc.reshape(batch), expo.reshape(batch)


def theta_gradient(u: ArrayLike, tau: ArrayLike, *, tol: float = 1e-14,
                   characteristic: tuple[ArrayLike, ArrayLike] | None = None,
                   max_points: int = 2_000_000) -> np.ndarray:
    """Gradient ∂θ/∂u_j, shape (..., g); shorthand for ``riemann_theta(..., gradient=True).gradient``."""
    return riemann_theta(u, tau, tol=tol, gradient=True, characteristic=characteristic,
                         max_points=max_points).gradient


# ---------------------------------------------------------------------------
# exponentials of linear phases as products of per-coordinate tables
# ---------------------------------------------------------------------------

#: a table factor exp(2πi n_j f_j) may reach at most e^this before the direct form is used
_TABLE_GROWTH = 600.0


def _linear_exponentials(points: np.ndarray, factors: np.ndarray) -> np.ndarray | None:
    """``exp(2πi nᵀ f_p)`` for lattice points ``n`` (N, g) and rows ``f_p`` (P, g): (P, N).

    A complex exponential costs about 300 ns in numpy, a complex product 2 ns, so the
    table is built as ``∏_j E_j[p, n_j]`` from the per-coordinate tables
    ``E_j[p, v] = exp(2πi v f_pj)`` over the few integers v that occur (the same
    factorisation as the line sums of :func:`_scaled_sum`).  Equal to the direct
    exponentials up to rounding (g products of numbers of modulus ``e^{-2π v Im f}``).
    Returns None when a table factor could exceed ``e^600`` (complex ``f`` with a large
    imaginary part): the caller then exponentiates directly.
    """
    P, g = factors.shape
    lo = points.min(axis=0) if points.size else np.zeros(g, dtype=np.int64)
    hi = points.max(axis=0) if points.size else np.zeros(g, dtype=np.int64)
    reach = np.maximum(np.abs(lo), np.abs(hi)).astype(float)
    # every partial product of the factors is at most e^{2π Σ_j reach_j |Im f_pj|}
    if P and g and float(np.max(np.abs(factors.imag) @ reach)) * 2 * np.pi >= _TABLE_GROWTH:
        return None
    out = None
    for j in range(g):
        v = np.arange(lo[j], hi[j] + 1, dtype=float)
        table = np.exp(2j * np.pi * factors[:, j:j + 1] * v[None, :])      # (P, width_j)
        column = table[:, points[:, j] - lo[j]]
        if out is None:
            out = column
        else:
            out *= column
    return out if out is not None else np.ones((P, points.shape[0]), dtype=complex)


# ---------------------------------------------------------------------------
# fixed arguments, many real shifts
# ---------------------------------------------------------------------------

def _point_keys(points: np.ndarray, reach: int) -> np.ndarray:
    """One int64 per lattice point (N, g) with ``|n_j| ≤ reach``: the digits ``n_j + reach`` in base ``2 reach + 1``."""
    base = 2 * reach + 1
    keys = np.zeros(points.shape[0], dtype=np.int64)
    for j in range(points.shape[1]):
        keys = keys * base + (points[:, j] + reach)
    return keys


@dataclass(frozen=True)
class ShiftPhases:
    r"""``cos 2πhᵀs_q`` and ``sin 2πhᵀs_q`` for real shifts ``s_q`` over half of a symmetric point set.

    For a real shift ``e^{2πi(-n)ᵀs}`` is the conjugate of ``e^{2πi nᵀs}``, so a lattice sum
    over a point set closed under ``n → -n`` folds onto one representative ``h`` of each pair
    ``{n, -n}`` (the one whose first non-zero coordinate is positive, and ``h = 0``):

        Σ_n C_n e^{2πi nᵀs} = Σ_h [(C_h + C_{-h}) cos 2πhᵀs + i (C_h - C_{-h}) sin 2πhᵀs]

    (a term missing from the set counts as ``C = 0``, so any point set can be folded after
    adding the mirror images).  For the (shifts × arguments) table of
    :class:`ThetaShiftTable` that makes the complex product ``E · Cᵀ`` a real one,
    ``[cos | sin] · [A; iB]`` with ``A = C_h + C_{-h}``, ``B = C_h - C_{-h}`` viewed as real
    pairs: half the multiplications, and the table of phases is built once for every table
    of the same τ and shifts (:func:`shift_phases`).  Everything is in the reduced basis
    (shifts enter as ``Uᵀs``).

    Attributes
    ----------
    basis : int64 ndarray (g, g)      the unimodular ``U`` of the lattice (module docstring)
    shifts : float ndarray (Q, g)     the shifts in the reduced basis, ``Uᵀs_q`` (rows ``s_q U``)
    points : int64 ndarray (H, g)     the representatives ``h``
    table : float ndarray (Q, 2H)     ``[cos 2πhᵀs_q | sin 2πhᵀs_q]``
    reach : int                       ``max |h_j|`` (for the lookup keys)
    keys : int64 ndarray (H,)         keys of the representatives (:func:`_point_keys`), ascending
                                      (the points are in this order)
    """

    basis: np.ndarray
    shifts: np.ndarray
    points: np.ndarray
    table: np.ndarray
    reach: int
    keys: np.ndarray

    def locate(self, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """For lattice points ``n`` (N, g): the index of ``h = ±n`` among :attr:`points` and the sign.

        The index is -1 where neither ``n`` nor ``-n`` is a representative.
        """
        index = np.full(points.shape[0], -1, dtype=np.int64)
        sign = np.ones(points.shape[0])
        inside = np.all(np.abs(points) <= self.reach, axis=1)
        for s in (1, -1):
            keys = _point_keys(s * points[inside], self.reach)
            at = np.minimum(np.searchsorted(self.keys, keys), self.keys.size - 1)
            found = self.keys[at] == keys
            rows = np.nonzero(inside)[0][found]
            fresh = index[rows] < 0
            index[rows[fresh]] = at[found][fresh]
            sign[rows[fresh]] = s
        return index, sign

    def at(self, shifts: ArrayLike) -> "ShiftPhases":
        """The same point set at other real shifts (Q', g) (given in the original basis, as to
        :func:`shift_phases`); the tables folded for this point set stay valid."""
        g = self.points.shape[1]
        s = np.asarray(shifts, dtype=float)
        if g == 1 and s.ndim <= 1:
            s = s.reshape(-1, 1)
        if s.ndim != 2 or s.shape[1] != g or not np.all(np.isfinite(s)):
            raise InputError(f"shifts must be a finite real array of shape (Q, {g}); got shape {np.shape(shifts)}")
        s = s @ self.basis
        return replace(self, shifts=s, table=_phase_table(self.points, s))

    def negated(self) -> "ShiftPhases":
        """The phases of the shifts ``-s_q``: ``cos`` kept, ``sin`` negated (no exponentials)."""
        H = self.points.shape[0]
        table = self.table.copy()
        table[:, H:] *= -1.0
        return replace(self, shifts=-self.shifts, table=table)

    def rows(self, selection) -> "ShiftPhases":
        """The phases of the shifts ``selection`` (an index or mask of the shifts)."""
        return replace(self, shifts=self.shifts[selection], table=self.table[selection])


def shift_phases(shifts: ArrayLike, lattices: "Sequence[ThetaLattice]") -> ShiftPhases:
    """The :class:`ShiftPhases` of real ``shifts`` (Q, g) over the points of ``lattices`` (same τ).

    The point set is the union of the lattices' points and their mirror images, so every
    :class:`ThetaShiftTable` on one of these lattices can use the result.
    """
    lattices = list(lattices)
    if not lattices:
        raise InputError("shift_phases needs at least one lattice")
    g = lattices[0].points.shape[1]
    basis = lattices[0].basis if lattices[0].basis is not None else np.eye(g, dtype=np.int64)
    for lat in lattices[1:]:
        other = lat.basis if lat.basis is not None else np.eye(g, dtype=np.int64)
        if lat.points.shape[1] != g or not np.array_equal(other, basis):
            raise InputError("shift_phases: the lattices must belong to one period matrix (same reduced basis)")
    s = np.asarray(shifts, dtype=float)
    if g == 1 and (s.ndim <= 1):
        s = s.reshape(-1, 1)
    if s.ndim != 2 or s.shape[1] != g or not np.all(np.isfinite(s)):
        raise InputError(f"shifts must be a finite real array of shape (Q, {g}); got shape {np.shape(shifts)}")
    return _phases_of(s @ basis, np.concatenate([lat.points for lat in lattices]), basis)


def _phases_of(s: np.ndarray, pts: np.ndarray, basis: np.ndarray) -> ShiftPhases:
    """:class:`ShiftPhases` of reduced shifts ``s`` (Q, g) over the points ``pts`` and their mirror images."""
    # each point's representative: itself if its first non-zero coordinate is positive (or it is 0)
    lead = pts[np.arange(pts.shape[0]), np.argmax(pts != 0, axis=1)] if pts.size else np.zeros(0, np.int64)
    reps = np.where((lead < 0)[:, None], -pts, pts)
    reach = int(np.max(np.abs(reps))) if reps.size else 0
    keys, first = np.unique(_point_keys(reps, reach), return_index=True)   # sorted keys
    reps = reps[first]
    return ShiftPhases(basis=basis, shifts=s, points=reps, table=_phase_table(reps, s), reach=reach,
                       keys=keys)


def _phase_table(reps: np.ndarray, s: np.ndarray) -> np.ndarray:
    """``[cos 2πhᵀs_q | sin 2πhᵀs_q]`` (Q, 2H) for representatives ``reps`` and reduced shifts ``s``."""
    H = reps.shape[0]
    E = _linear_exponentials(reps, s)              # real shifts: |factors| = 1, never None
    table = np.empty((s.shape[0], 2 * H))
    table[:, :H] = E.real
    table[:, H:] = E.imag
    return table


@dataclass(frozen=True)
class ThetaShiftTable:
    r"""The terms of θ(u_p + s | τ) for fixed arguments ``u_p`` and any real shift ``s``.

    For real ``s`` the imaginary part of the argument, hence ``c = Y⁻¹ Im u_p``,
    ``k_p = round(c)``, the exponent ``π yᵀY⁻¹y`` and the lattice of the
    module docstring do not depend on ``s``.  With ``m = n - k_p``

        θ̂(u_p + s) = Σ_n C_pn e^{2πi mᵀs},   C_pn = exp(πi mᵀτm + 2πi mᵀu_p - π yᵀY⁻¹y),

    so that for shifts ``s_q`` the whole (q, p) table is one matrix product
    ``e^{2πi n s_q} · C_pᵀ`` times ``e^{-2πi k_pᵀ s_q}``; the product is taken in real
    arithmetic over half the points (:class:`ShiftPhases`: ``n`` and ``-n`` paired).  All of
    this is in the reduced basis of the lattice (``u_p``, ``s`` enter as ``Uᵀu_p``, ``Uᵀs``;
    ``τ`` as ``UᵀτU``), which changes no value (module docstring, "Basis reduction").  The
    terms and the truncation bound are those of :func:`riemann_theta_scaled` (same lattice,
    same radius), so the two agree to rounding.

    Attributes
    ----------
    lattice : ThetaLattice
    offsets : float ndarray (P, g)     ``k_p`` (reduced basis)
    terms : complex ndarray (P, N)     ``C_pn``, ``|C_pn| = exp(-‖v_n‖²) ≤ 1``
    exponent : float ndarray (P,)      ``π yᵀY⁻¹y``
    truncation_bound : float           bound of the neglected tail of every entry
    """

    lattice: ThetaLattice
    offsets: np.ndarray
    terms: np.ndarray
    exponent: np.ndarray
    truncation_bound: float
    # the table of the gradient terms 2πi(n - k_p) C_pn, rows (p, j) (theta_shift_table(gradient=True))
    slopes: Optional["ThetaShiftTable"] = field(default=None, repr=False, compare=False)
    # the folded terms [A; iB] as real pairs, per ShiftPhases point set (see _folded); the distinct offsets
    _folded_cache: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def _folded(self, phases: ShiftPhases) -> np.ndarray | None:
        """``[A; iB]`` of :class:`ShiftPhases` for these terms, a real (2H, 2P) array; None if a point is missing."""
        hit = self._folded_cache.get(id(phases.points))
        if hit is not None and hit[0] is phases.points:
            return hit[1]
        index, sign = phases.locate(self.lattice.points)
        if np.any(index < 0):
            return None
        H, P = phases.points.shape[0], self.terms.shape[0]
        folded = np.zeros((2 * H, P), dtype=complex)
        terms = np.ascontiguousarray(self.terms.T)              # (N, P)
        plus, minus = sign > 0, sign < 0                        # distinct points of one sign: distinct h
        folded[index[plus]] = terms[plus]                       # A = C_h + C_{-h}
        folded[index[minus]] += terms[minus]
        folded[H + index[plus]] = 1j * terms[plus]              # iB = i(C_h - C_{-h})
        folded[H + index[minus]] -= 1j * terms[minus]
        folded = folded.view(float)                             # (2H, 2P): real and imaginary parts
        if len(self._folded_cache) > 8:
            offsets = self._folded_cache.get("offsets")
            self._folded_cache.clear()
            if offsets is not None:
                self._folded_cache["offsets"] = offsets
        self._folded_cache[id(phases.points)] = (phases.points, folded)
        return folded

    def oscillatory(self, shifts: "ArrayLike | ShiftPhases") -> np.ndarray:
        """θ̂(u_p + s_q) for real shifts ``s`` (Q, g); shape (Q, P).  θ = θ̂ · exp(exponent[p]).

        ``shifts`` may be a :class:`ShiftPhases` (of the same τ, e.g. built once for several
        tables by :func:`shift_phases`); its shifts are then used.
        """
        g = self.offsets.shape[1]
        if isinstance(shifts, ShiftPhases):
            phases = shifts
            basis = self.lattice.basis if self.lattice.basis is not None else np.eye(g, dtype=np.int64)
            if phases.shifts.shape[1] != g or not np.array_equal(phases.basis, basis):
                raise InputError("these ShiftPhases belong to another period matrix")
            folded = self._folded(phases)
            if folded is None:                                  # a point of this lattice is not covered
                phases = _phases_of(phases.shifts, self.lattice.points, basis)
                folded = self._folded(phases)
            return self._product(phases, folded, 0, phases.shifts.shape[0])
        s = np.asarray(shifts, dtype=float)
        if g == 1 and (s.ndim == 0 or s.shape[-1] != 1):
            s = s[..., None]
        if s.ndim != 2 or s.shape[1] != g or not np.all(np.isfinite(s)):
            raise InputError(f"shifts must be a finite real array of shape (Q, {g}); got shape {np.shape(shifts)}")
        P, N = self.terms.shape
        out = np.empty((s.shape[0], P), dtype=complex)
        step = max(1, _CHUNK_ENTRIES // max(N + P, 1))
        basis = self.lattice.basis if self.lattice.basis is not None else np.eye(g, dtype=np.int64)
        for a in range(0, s.shape[0], step):
            phases = _phases_of(s[a:a + step] @ basis, self.lattice.points, basis)
            out[a:a + step] = self._product(phases, self._folded(phases), 0, phases.shifts.shape[0])
        return out

    def _product(self, phases: ShiftPhases, folded: np.ndarray, start: int, stop: int) -> np.ndarray:
        """(Σ_n C_pn e^{2πi nᵀs_q}) e^{-2πi k_pᵀs_q} for the shifts ``start:stop`` of ``phases``."""
        sums = np.ascontiguousarray(phases.table[start:stop] @ folded).view(complex)   # (q, P)
        # e^{-2πi k_pᵀs}: the offsets are few distinct integer vectors (found once per table)
        if "offsets" not in self._folded_cache:
            offsets, which = np.unique(self.offsets.astype(np.int64), axis=0, return_inverse=True)
            self._folded_cache["offsets"] = (offsets, which.reshape(-1))
        offsets, which = self._folded_cache["offsets"]
        sums *= _linear_exponentials(-offsets, phases.shifts[start:stop])[:, which]
        return sums

    def oscillatory_gradient(self, shifts: "ArrayLike | ShiftPhases") -> np.ndarray:
        """∇θ̂(u_p + s_q) (original basis, ``∇θ = ∇θ̂ · exp(exponent[p])``) for real shifts; shape (Q, P, g).

        Only for a table built with ``theta_shift_table(..., gradient=True)``; its lattice has the
        radius of :func:`riemann_theta` with ``gradient=True``, so the two agree to rounding.
        """
        if self.slopes is None:
            raise InputError("this table has no gradient terms; build it with theta_shift_table(..., gradient=True)")
        P, g = self.offsets.shape
        grad = self.slopes.oscillatory(shifts).reshape(-1, P, g)
        if self.lattice.basis is not None:
            grad = grad @ self.lattice.basis.T.astype(float)     # ∇_u θ = U ∇_{u'} θ (rows)
        return grad

    def unshifted_gradient(self) -> np.ndarray:
        """∇θ̂(u_p) (shift 0, original basis); shape (P, g)."""
        if self.slopes is None:
            raise InputError("this table has no gradient terms; build it with theta_shift_table(..., gradient=True)")
        P, g = self.offsets.shape
        grad = self.slopes.unshifted().reshape(P, g)
        return grad if self.lattice.basis is None else grad @ self.lattice.basis.T.astype(float)

    def paired(self, shifts: ArrayLike) -> np.ndarray:
        """θ̂(u_p + s_p) for one real shift per argument (``shifts`` (P, g)); shape (P,)."""
        s = np.asarray(shifts, dtype=float).reshape(self.offsets.shape)
        if not np.all(np.isfinite(s)):
            raise InputError("shifts must be finite real numbers")
        s = self.lattice.to_reduced(s)
        # e^{2πi (n - k_p)ᵀ s_p}: per-coordinate tables for the n part, one exponential per p for k_p
        E = _linear_exponentials(self.lattice.points, s)
        E *= self.terms
        return E.sum(axis=1) * np.exp(-2j * np.pi * np.einsum("pi,pi->p", self.offsets, s))

    def unshifted(self) -> np.ndarray:
        """θ̂(u_p) (shift 0); shape (P,)."""
        return self.terms.sum(axis=1)


def theta_shift_table(u: ArrayLike, tau: ArrayLike, *, tol: float = 1e-14,
                      max_points: int = 2_000_000, lattice: ThetaLattice | None = None,
                      gradient: bool = False) -> ThetaShiftTable:
    """Tabulate the theta terms of the arguments ``u`` (P, g) for later real shifts.

    See :class:`ThetaShiftTable`; errors as :func:`riemann_theta`.  ``lattice``
    is reused when it belongs to τ and covers the shifts of ``u`` (as in
    :func:`riemann_theta_scaled`).  ``gradient``: the lattice is the one of
    :func:`riemann_theta` with ``gradient=True`` (radius also for the gradient tail) and
    :meth:`ThetaShiftTable.oscillatory_gradient` is available.
    """
    given = _period_matrix(tau)
    g = given.shape[0]
    _cholesky_upper(given.imag)
    z, _ = _arguments(u, g)
    U, t = _reduced(given)                                 # the reduced basis: u -> Uᵀu, τ -> UᵀτU
    z = z @ U
    c = z.imag @ np.linalg.inv(t.imag)
    k = np.rint(c)
    if (lattice is not None and (lattice.gradient or not gradient) and lattice.tau.shape == given.shape
            and np.array_equal(lattice.tau, given) and lattice.covers(c - k)):
        lat = lattice
    else:
        lat = theta_lattice(given, tol=tol, gradient=gradient, max_points=max_points, shifts=c - k)
    c = z.imag @ lat.Yinv                                  # exactly as in _scaled_sum
    k = np.rint(c)
    exponent = np.pi * np.einsum("pi,pi->p", z.imag, c)
    pts = lat.points.astype(float)
    P, N = z.shape[0], pts.shape[0]
    terms = np.empty((P, N), dtype=complex)
    step = max(1, _CHUNK_ENTRIES // max(N, 1))
    # with m = n - k_p: mᵀτm = nᵀτn - 2 nᵀτk_p + k_pᵀτk_p and mᵀu_p = nᵀu_p - k_pᵀu_p (matrix products)
    a_n = np.einsum("ni,ij,nj->n", pts, t, pts)
    tk = k @ t                                            # (P, g), τ symmetric
    kk = np.einsum("pi,pi->p", tk, k)
    ku = np.einsum("pi,pi->p", k, z)
    # C_pn = e^{πi nᵀτn} · e^{2πi nᵀ(u_p - τk_p)} · e^{πi k_pᵀτk_p - 2πi k_pᵀu_p - π yᵀY⁻¹y}: N + P
    # exponentials and per-coordinate tables for the middle factor (_linear_exponentials)
    # instead of P·N exponentials; Im(u_p - τk_p) = Y(c_p - k_p) is small, so the tables stay
    # bounded (otherwise the direct form below)
    quadratic = np.exp(1j * np.pi * a_n)
    constant = np.exp(1j * np.pi * kk - 2j * np.pi * ku - exponent)
    for a in range(0, P, step):
        sl = slice(a, a + step)
        linear = _linear_exponentials(lat.points, z[sl] - tk[sl])
        if linear is not None:
            linear *= quadratic[None, :]
            linear *= constant[sl, None]
            terms[sl] = linear
            continue
        quad = a_n[None, :] - 2.0 * (tk[sl] @ pts.T) + kk[sl, None]
        lin = z[sl] @ pts.T - ku[sl, None]
        terms[sl] = np.exp(1j * np.pi * quad + 2j * np.pi * lin - exponent[sl, None])
    slopes = None
    if gradient:
        # ∇θ̂ = 2πi Σ_n (n - k_p) C_pn e^{2πi mᵀs}: g more "arguments" per argument (reduced basis)
        m = pts[None, :, :] - k[:, None, :]                                  # (P, N, g)
        slopes = ThetaShiftTable(lattice=lat, offsets=np.repeat(k, g, axis=0),
                                 terms=(2j * np.pi * m.transpose(0, 2, 1) * terms[:, None, :]).reshape(P * g, N),
                                 exponent=np.repeat(exponent, g), truncation_bound=lat.value_bound)
    return ThetaShiftTable(lattice=lat, offsets=k, terms=terms, exponent=exponent,
                           truncation_bound=lat.value_bound, slopes=slopes)
