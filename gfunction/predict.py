r"""Large-degree predictions from the g-function and the outer parametrix.

For the weight ``exp(-nV)`` at degree ``n + m``, with our ℓ
(``g_+ + g_- - V + ℓ = 0``), outside the lenses

    Y(z) ≈ e^{-nℓσ₃/2} M(z; w) e^{n(g(z) + ℓ/2)σ₃} · (degree-shift factor),
    w_j = n Ω_j + m Ω̂_j   (mod 1),

``Ω̂`` the phases of the harmonic measure of the support (for ``m ≠ 0`` the
factor ``e^{m(ĝ + ℓ̂/2)σ₃}`` of the unweighted problem of the support enters
the same way; DKMVZ, Comm. Pure Appl. Math. 52 (1999) 1335–1425, §4 and
Theorem 1.1).  Hence, with an error O(1/n):

* recurrence coefficients (``outer.ModelProblem.expansion``):
  ``a² = (M_1)_12 (M_1)_21``, ``b = (M_2)_12/(M_1)_12 - (M_1)_22``;
* ``π(z) ≈ M_11(z) e^{n g(z)}`` off the support (and off the lenses);
* on a band (oscillatory form) ``π(x) ≈ M_11+ e^{n g_+} + M_11- e^{n g_-}``
  (from ``T_+ = S_+ [[1,0],[e^{-n(g_+-g_-)},1]]`` in the upper lens and
  ``M_12+ = M_11-`` on the band);
* in gap ``j`` the polynomial has a zero iff ``M_11`` has one there (the
  theta quotient ``θ(u+d+W)`` has exactly one zero on each real oval of the
  curve; it lies either on the first sheet -- a zero of π -- or on the
  second); ``M_11+(x) e^{iπ w_j}`` is real on the gap and its sign change
  locates the zero;
* the number of zeros right of a point ``x_0`` of gap ``j`` is
  ``n Ω_j + [arg M_11+(x_0) - arg M_11(x_1)]/π`` with the argument followed
  continuously along a half circle in the upper half-plane from ``x_0`` to
  ``x_1 > b_k`` (argument principle; ``M_11`` has no zeros off the real axis);
  it must come out an integer, and its distance from one is recorded;
* the first zeros at a soft edge ``e``: ``f_e(x) = ι_m n^{-2/3}``, ``ι_m`` the
  Airy zeros (``scipy.special.ai_zeros``), ``f_e`` the local variable of
  ``gfunction.py`` (leading order, DKMVZ 1999 §7);
* bulk zeros: the zeros of the oscillatory form on the bands (O(1/n²)), and
  the quantile rule ``F(x_j) = (j - 1/2)/n`` (O(1/n)) for comparison.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Sequence

import numpy as np
from scipy.special import ai_zeros

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.quadrature import graded_jacobi_rule
from equilibrium.verification import failure_message, failure_policy, settle

from .gfunction import GFunction, g_function
from .outer import ModelProblem, gamma_factor, gap_abel_map, model_problem
from .phase import reduced_phase
from .theta import ShiftPhases, shift_phases, theta_lattice, theta_shift_table

__all__ = ["Predictor", "Prediction", "RecurrencePrediction", "GapZeros", "BandCounts", "EdgeZeros",
           "TOLERANCES", "harmonic_phases", "predictor"]

#: checks of the predictions and their tolerances.  The checks are
#: exact identities of the model problem, so they sit at rounding level (1e-16 ..
#: 3e-13 on the shipped cases, n = 50..400); the model problem itself is accepted
#: with lattice rounding up to 1e-9 (``outer.model_problem``), the same bound here.
TOLERANCES = {
    "imag_a2": 1e-9,                 # |Im a²| / |a²|: a² is real for a real weight
    "imag_b": 1e-9,                  # |Im b| / max(|a|, |b|)
    "a2_positivity": 1e-12,          # min Re a² / max |a²| (lower bound: a² > 0)
    "gap_realness": 1e-9,            # |Im M_11+ e^{iπw}| / (1 + |M_11+|) on the gaps
    "gap_abel_interpolation": 1e-9,  # Chebyshev interpolant of the Abel map on the gaps
    "gap_sign_changes": 1.0,         # most sign changes of M_11+ e^{iπw} in one gap (at most one zero)
    "count_rounding": 1e-6,          # distance of the argument-principle counts from integers
    "local_variable_residual": 1e-10,  # |f_e(x) - ζ_m/scale| / |ζ_m/scale| at the scaling edge zeros
    "imag_ratio": 1e-9,              # |Im| of the coefficient of the Airy/Bessel form (real for a real weight)
    "missing_sign_change": 0.0,      # brackets of the Airy/Bessel form without a sign change
}

#: checks bounded below
LOWER = ("a2_positivity",)

#: degrees per chunk of :meth:`Predictor.predict` (its memory is that of one chunk)
PREDICT_CHUNK = 2000

#: the grid of the angle t of each gap on which Predictor.gap_zeros looks for sign changes
_GAP_GRID = np.linspace(0.0, np.pi, 161)[1:-1]
#: the angles of the half circles of Predictor.band_counts (from the gap to the right of the support)
_CONTOUR = np.linspace(np.pi, 0.0, 97)


@dataclass(frozen=True)
class _Chunk:
    """Degrees of one chunk (``rows`` of the request) with their phases ``w``, ``W`` (mod 1),
    the shared ``theta.ShiftPhases`` of ``W`` and ``c1 = θ(u∞+d)/θ(u∞+d+W)``."""

    rows: slice
    degrees: np.ndarray
    scalings: np.ndarray
    w: np.ndarray
    W: np.ndarray
    phases: ShiftPhases
    c1: np.ndarray


def _worst(checks: list[dict]) -> dict:
    """The worst value of every check over chunks (all these checks are bounded above)."""
    out: dict[str, float] = {}
    for part in checks:
        for key, value in part.items():
            out[key] = max(out[key], value) if key in out else value
    return out




@dataclass(frozen=True)
class RecurrencePrediction:
    """Predicted ``a_N^{(n)}``, ``b_N^{(n)}`` (leading order, error O(1/n)).

    ``a[i]``, ``b[i]`` are for degree ``N = degrees[i]`` and scaling
    ``n = scalings[i]``; ``phases[i]`` is ``w`` of :meth:`Predictor.phases`.
    ``a`` is NaN where the model problem gives a² ≤ 0 (then not verified).
    Checks: ``imag_a2`` (max ``|Im a²|/|a²|``), ``imag_b``
    (max ``|Im b|/max(|a|, |b|)``), ``a2_positivity`` (min ``Re a²/max|a²|``).
    """

    degrees: np.ndarray
    scalings: np.ndarray
    phases: np.ndarray
    a: np.ndarray
    b: np.ndarray
    verified: bool
    checks: dict[str, float]
    message: str = ""


@dataclass(frozen=True)
class GapZeros:
    """The zero of π in each gap, ``zeros[i, j]`` for degree ``degrees[i]`` in gap ``j`` (NaN: none).

    ``order`` is that of the residual expansion (``gfunction.polynomial_form.gap_zeros``;
    0: the zero of ``M_11``, :meth:`Predictor.gap_zeros`).
    Checks: ``gap_realness`` (``M_11+ e^{iπw}`` real on the gaps),
    ``gap_abel_interpolation`` (error of the Abel map's interpolant on the gaps),
    ``gap_sign_changes`` (most sign changes found in one gap; more than one
    would contradict "at most one zero per gap", and those rows are NaN).
    """

    degrees: np.ndarray
    scalings: np.ndarray
    zeros: np.ndarray
    verified: bool
    checks: dict[str, float]
    message: str = ""
    order: int = 0


@dataclass(frozen=True)
class BandCounts:
    """Number of zeros of π in each band, ``counts[i, j]`` for degree ``degrees[i]`` in band ``j``.

    Check: ``count_rounding``, the largest distance of the argument-principle
    counts from the integers they are rounded to.
    """

    degrees: np.ndarray
    scalings: np.ndarray
    counts: np.ndarray
    verified: bool
    checks: dict[str, float]
    message: str = ""


@dataclass(frozen=True)
class EdgeZeros:
    """Zeros of π_n next to edge number ``edge`` (``0 … 2k-1``) at degree ``degree``, from the edge inward
    (``gfunction.edge_zeros``; :meth:`Predictor.soft_edge_zeros` returns them ascending).

    ``form`` says which prediction: ``"scaling"`` (``f_e(x) = ι_m n^{-2/3}`` at a soft edge,
    ``f_e(x) = -j_{α,m}²/(4n²)`` at a hard one), ``"Airy form"`` or ``"Bessel form"`` (the zeros
    of the first column of the local parametrix, with the residual ``R`` through ``R^{(order)}``).
    ``position`` is the edge ``e``, ``kind`` ``"soft"`` or ``"hard"``, ``alpha`` the Jacobi exponent
    of a hard edge; ``offsets`` are ``x_m - e``; ``zeta`` the local variable at the zeros and
    ``model_zeros`` its values at the scaling level (``ι_m`` or ``-j_{α,m}²/4``).  Checks:
    ``local_variable_residual`` (scaling), ``imag_ratio``, ``missing_sign_change`` (forms),
    ``outside_disc`` (how many of the ``count`` zeros would lie beyond the matching circle, where the
    forms are not derived, or where the local variable could not be inverted: those entries are NaN,
    no prediction; informative, not a failure).
    """

    edge: int
    degree: int
    zeros: np.ndarray
    form: str
    verified: bool
    checks: dict[str, float]
    message: str = ""
    order: int = 0
    kind: str = "soft"
    position: float = float("nan")
    alpha: float = 0.0
    offsets: np.ndarray | None = None
    zeta: np.ndarray | None = None
    model_zeros: np.ndarray | None = None


def harmonic_phases(support) -> np.ndarray:
    r"""Phases ``Ω̂_j`` = harmonic measure (at ∞) of the bands right of gap ``j``.

    ``∫ dω(s)/(z - s) = P(z)/R^{1/2}(z)`` with ``P`` monic of degree ``g`` and
    ``∫_{gap} P/R^{1/2} = 0`` on every gap (the constant ``ĝ_+ + ĝ_-`` is the
    same on all bands); the density is ``|P|/(π |R|^{1/2})`` (common practice;
    e.g. DKMVZ 1999 §4 for the same construction with V).
    """
    support = [tuple(map(float, ab)) for ab in support]
    k = len(support)
    g = k - 1
    if g == 0:
        return np.zeros(0)
    e = np.array([x for ab in support for x in ab])

    def rule(lo, hi, idx):
        others = np.delete(e, idx)
        x, w = graded_jacobi_rule(lo, hi, -0.5, -0.5, near=others, n=40)
        f = np.prod(np.abs(x[:, None] - others[None, :]) ** -0.5, axis=1)
        return x, w * f

    # gap equations: Σ_l c_l ∫ x^l |R|^{-1/2} = -∫ x^g |R|^{-1/2} (sign of R^{1/2} is constant on a gap)
    Amat = np.zeros((g, g))
    rhs = np.zeros(g)
    for j in range(g):
        x, w = rule(support[j][1], support[j + 1][0], [2 * j + 1, 2 * j + 2])
        Amat[j] = [np.sum(w * x ** l) for l in range(g)]
        rhs[j] = -np.sum(w * x ** g)
    c = np.linalg.solve(Amat, rhs)
    P = np.concatenate([c, [1.0]])  # ascending
    masses = []
    for j, (a, b) in enumerate(support):
        x, w = rule(a, b, [2 * j, 2 * j + 1])
        masses.append(np.sum(w * np.abs(np.polynomial.polynomial.polyval(x, P))) / np.pi)
    masses = np.array(masses)
    if abs(masses.sum() - 1) > 1e-9:
        raise NumericalFailure(f"harmonic measure of the support has total mass {masses.sum():.12f}, not 1")
    return np.array([masses[j + 1:].sum() for j in range(g)])


@dataclass(frozen=True)
class Prediction:
    """Predicted recurrence coefficients, gap zeros and zero counts for a range of degrees.

    ``a[i]``, ``b[i]`` predict ``a_{N}^{(n)}``, ``b_{N}^{(n)}`` for
    ``N = degrees[i]`` and ``n = scalings[i]``; ``gap_zeros[i, j]`` is the zero
    in gap ``j`` (NaN: none); ``band_counts[i]`` the zeros per band.
    ``checks`` joins those of :class:`RecurrencePrediction`, :class:`GapZeros`
    and :class:`BandCounts`; ``verified`` is True when all three are.
    """

    degrees: np.ndarray
    scalings: np.ndarray
    phases: np.ndarray
    a: np.ndarray
    b: np.ndarray
    gap_zeros: np.ndarray
    band_counts: np.ndarray
    verified: bool
    checks: dict[str, float]
    message: str = ""


@dataclass(frozen=True)
class Predictor:
    """g-function, model problem and harmonic phases of one equilibrium measure.

    ``verified`` is True when the measure, the g-function, the model problem
    and the Szegő function (if any) are; ``message`` names what is not.  A
    prediction made from an unverified predictor is not verified either.
    """

    measure: Any
    g: GFunction
    model: ModelProblem
    omega_hat: np.ndarray
    szego: Any = None
    # degree-independent pieces of the zeros and counts (Predictor._memo); not part of the value
    _cache: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    @property
    def genus(self) -> int:
        return self.model.genus

    def _parts(self):
        return (("the equilibrium measure", self.measure), ("", self.g), ("", self.model), ("", self.szego))

    @property
    def verified(self) -> bool:
        return all(getattr(part, "verified", True) for _, part in self._parts())

    @property
    def message(self) -> str:
        return "; ".join((f"{what} not verified: {part.message}" if what else part.message)
                         for what, part in self._parts() if not getattr(part, "verified", True))

    def _verdict(self, checks: dict, what: str) -> tuple[bool, str]:
        """``(verified, message)`` of a prediction with ``checks``, built on this predictor."""
        message = failure_message(checks, TOLERANCES, LOWER, what=what)
        if not self.verified:
            message = "; ".join(m for m in (message, f"{what} rest on: {self.message}") if m)
        return not message, message

    def phases(self, degrees, scalings=None) -> np.ndarray:
        """``w = n Ω + (N - n) Ω̂ - c`` (mod 1) for degree ``N``, scaling ``n``; shape (len, g).

        ``c`` is the phase shift of the Szegő function of the factor ``h``
        (``gfunction.szego``; zero without a factor).
        """
        N = np.atleast_1d(np.asarray(degrees, dtype=float))
        n = N if scalings is None else np.broadcast_to(np.asarray(scalings, float), N.shape)
        # n Ω reduced exactly (gfunction.phase: Ω beyond double when the measure carries omega_low)
        w = reduced_phase(n[:, None], np.asarray(self.g.omega)[None, :], self.g.omega_low[None, :])
        w = w + (N - n)[:, None] * self.omega_hat[None, :]
        if self.szego is not None and self.genus:
            w = w - self.szego.phase_shift[None, :]
        return w - np.floor(w)

    def _degrees(self, degrees, scalings) -> tuple[np.ndarray, np.ndarray]:
        N = np.atleast_1d(np.asarray(degrees))
        n = N.astype(float) if scalings is None else np.broadcast_to(np.asarray(scalings, float), N.shape).copy()
        return N, n

    def recurrence(self, degrees, scalings=None, *, on_failure: str = "raise") -> RecurrencePrediction:
        """Predicted ``a_N^{(n)}, b_N^{(n)}`` (leading order, error O(1/n)).

        ``on_failure``: ``"raise"`` (NumericalFailure when a check fails) or
        ``"mark"`` (the result with ``verified = False``); see
        :mod:`equilibrium.verification`.
        """
        failure_policy(on_failure)
        N, n = self._degrees(degrees, scalings)
        w = self.phases(N, n)
        ex = self.model.expansion(w if self.genus else np.zeros((w.shape[0], 0)))
        a2 = np.broadcast_to(ex["a2"], (w.shape[0],))
        b = np.broadcast_to(ex["b"], (w.shape[0],))
        size = np.abs(a2)
        positive = a2.real > 0
        a = np.where(positive, np.sqrt(np.where(positive, a2.real, 1.0)), np.nan)
        checks = {
            "imag_a2": float(np.max(np.abs(a2.imag) / np.where(size > 0, size, 1.0))),
            "imag_b": float(np.max(np.abs(b.imag) / np.maximum(np.sqrt(size), np.abs(b)).clip(min=1e-300))),
            "a2_positivity": float(np.min(a2.real / max(float(np.max(size)), 1e-300))),
        }
        verified, message = self._verdict(checks, "predicted recurrence coefficients")
        result = RecurrencePrediction(N, n, w, a, b.real.copy(), verified, checks, message)
        return settle(result, on_failure)

    def polynomial(self, z, degree: int, scaling: float | None = None) -> np.ndarray:
        """Leading-order monic ``π_N(z)`` off the support: ``M_11(z) e^{n g(z)}``.

        Only meaningful away from the bands (outside the lenses) and edges.
        """
        n = float(degree if scaling is None else scaling)
        w = self.phases([degree], [n])[0]
        z = np.asarray(z, dtype=complex)
        M = self.model.evaluate(z, w)
        shift = degree - n
        ex = n * self.g(z)
        if shift:
            raise InputError("π off the diagonal needs the unweighted g-function of the support; "
                             "use degree == scaling")
        return M[..., 0, 0] * np.exp(ex)

    def band_form(self, x, degree: int, order: int = 0, *, corrections=None) -> np.ndarray:
        """Oscillatory form of ``π_n`` on the bands (degree = scaling = n), rescaled:

            2 Re(M_11+(x) D_+(x)^{-1} e^{n(g_+(x) - V(x)/2 + ℓ/2)})    (order 0),

        ``D`` the Szegő function of the factor (1 without one).  It equals
        ``π_n(x) e^{-nV(x)/2} e^{nℓ/2} / D_∞`` up to a relative ``O(n^{-order-1})``
        (DKMVZ 1999, Theorem 1.1 at order 0; ``gfunction.polynomial_form.band_form``,
        which holds the derivation and the residual corrections of order ≥ 1).  On a band
        ``g_± - V/2 + ℓ/2 = ±iπ μ([x, b_k])`` is imaginary, so nothing overflows at large n.
        """
        from .polynomial_form import band_form

        return band_form(self, x, degree, order, corrections=corrections)

    def bulk_zeros(self, degree: int, margin: float = 0.1, order: int = 0, *, corrections=None) -> np.ndarray:
        """Zeros of :meth:`band_form` in the bulk of every band, ascending.

        The bulk is each band without ``margin`` times its width at either end
        and around every singular point of the factor inside it (there the
        local parametrices, not the bulk form, describe the zeros); see
        ``gfunction.polynomial_form.bulk_zeros``.  The zeros of the form at ``order``
        are within ``O(n^{-order-2})`` of those of ``p_n``; the quantile rule
        (:meth:`quantile_zeros`) is only O(1/n), its error carrying the phase of ``M_11+``.
        """
        from .polynomial_form import bulk_zeros

        return bulk_zeros(self, degree, order, margin=margin, corrections=corrections)

    # -- zeros ---------------------------------------------------------------
    # M_11 = A θ(u+d+W)/θ(u+d) · θ(u∞+d)/θ(u∞+d+W) (outer.py).  W is real, so each
    # theta of the numerator has the same imaginary part, hence the same exponent
    # π yᵀY⁻¹y, as the matching denominator: the scaled parts divide exactly, and
    # for fixed points the numerator over all degrees is one matrix product
    # (theta.ThetaShiftTable).  The fixed points (the grid of each gap, the contours of
    # the counts, u∞ + d) do not depend on the degree: their tables are built once per
    # predictor (_memo), and one table of phases e^{2πi nᵀW} per chunk of degrees serves
    # all of them (_chunks, theta.shift_phases).

    def _memo(self, key, build):
        """``build()`` once per predictor (degree-independent pieces of the zeros)."""
        if key not in self._cache:
            self._cache[key] = build()
        return self._cache[key]

    def _fixed_table(self, zs, us) -> tuple:
        """(θ-table of ``us + d``, ``A/θ̂(us + d)``) for fixed points ``zs`` with Abel values ``us``."""
        mp = self.model
        gam = gamma_factor(np.where(zs.imag == 0, zs + 1e-300j, zs), mp.support)
        A = (gam + 1 / gam) / 2
        tab = theta_shift_table(us + mp.d, mp.tau)
        return tab, A / tab.unshifted()

    def _gap(self, j: int) -> tuple:
        """Gap ``j``: its Abel map (``outer.gap_abel_map``), the grid ``x`` of :meth:`gap_zeros` and its table."""
        def build():
            gap_abel = gap_abel_map(self.model, j)
            # θ-variable x = lo + (hi-lo)(1-cos θ)/2 keeps M_11 smooth up to the ends
            xs = gap_abel.x(_GAP_GRID)
            return (gap_abel, xs) + self._fixed_table(xs + 0j, gap_abel(_GAP_GRID))
        return self._memo(("gap", j), build)

    def _gap_lattice(self, j: int):
        """One lattice for every Illinois step in gap ``j``: it covers the shifts of the whole gap
        (a 1 % larger ball than the dense sample needs; coverage is re-checked per call)."""
        tt = np.linspace(0.0, np.pi, 1025)
        return self._memo(("gap lattice", j), lambda: theta_lattice(
            self.model.tau, arguments=self._gap(j)[0](tt) + self.model.d, margin=1.01))

    def _contour(self, j: int, x0: float) -> tuple:
        """The half circle of :meth:`band_counts` from ``x0`` (in gap ``j``) to ``x1 > b_k`` and its table."""
        def build():
            bk = self.g.support[-1][1]
            x1 = bk + 0.5 * (bk - self.g.support[0][0])
            c, r = 0.5 * (x0 + x1), 0.5 * (x1 - x0)
            zs = c + r * np.exp(1j * _CONTOUR)
            zs[0], zs[-1] = x0 + 0j, x1 + 0j
            us = self.model.abel(zs + np.where(zs.imag == 0, 1e-300j, 0))
            return self._fixed_table(zs, us)
        return self._memo(("contour", j, x0), build)

    def _count_starts(self, j: int) -> list[float]:
        """The two candidate starts of the contours in gap ``j`` (its thirds)."""
        lo, hi = self.g.support[j][1], self.g.support[j + 1][0]
        return [lo + (hi - lo) / 3, lo + 2 * (hi - lo) / 3]

    def _infinity_table(self):
        """θ-table of ``u∞ + d`` (for :meth:`_c1`)."""
        mp = self.model
        return self._memo("infinity", lambda: theta_shift_table((mp.u_infinity + mp.d)[None, :], mp.tau))

    def _tables(self) -> list:
        """Every fixed table of the zeros and counts."""
        tables = [self._infinity_table()]
        for j in range(self.genus):
            tables.append(self._gap(j)[2])
            tables.extend(self._contour(j, x0)[0] for x0 in self._count_starts(j))
        return tables

    def _chunks(self, N, n):
        """The degrees ``PREDICT_CHUNK`` at a time (at least one, possibly empty, chunk), each with
        its phases ``w``, ``W``, the shared table of phases and ``c1``."""
        # the point set of the phases (every fixed table's lattice): fixed, so the folded tables
        # of theta.ThetaShiftTable are reused from chunk to chunk
        layout = self._memo("phases", lambda: shift_phases(np.zeros((0, self.genus)),
                                                           [tab.lattice for tab in self._tables()]))
        for start in range(0, max(len(N), 1), PREDICT_CHUNK):
            Nc, nc = N[start:start + PREDICT_CHUNK], n[start:start + PREDICT_CHUNK]
            w = self.phases(Nc, nc)
            W = self.model.W(w)
            phases = layout.at(W)
            yield _Chunk(slice(start, start + len(Nc)), Nc, nc, w, W, phases, self._c1(phases))

    def _c1(self, W) -> np.ndarray:
        """θ(u∞+d)/θ(u∞+d+W) for phases W (N, g) (or their theta.ShiftPhases); shape (N,)."""
        tab = self._infinity_table()
        return tab.unshifted()[0] / tab.oscillatory(W)[:, 0]

    @staticmethod
    def _m11_table(fixed, W, c1):
        """M_11 at the fixed points of ``fixed`` (:meth:`_fixed_table`) with phases W (N, g)
        (or their theta.ShiftPhases): (N, P)."""
        tab, factor = fixed
        return factor[None, :] * tab.oscillatory(W) * c1[:, None]

    def _m11_pointwise(self, xs, us, W, c1, lattice):
        """M_11 at point i with phases W[i] (pointwise pairing), real xs on a gap.

        θ̂(u + d + W) and θ̂(u + d) by the line sums of ``theta.riemann_theta_scaled`` on the gap's
        lattice (``ThetaLattice.scaled``: one matrix product per call instead of a table of terms);
        same exponent, so they divide.
        """
        mp = self.model
        gam = gamma_factor(xs + 1e-300j, mp.support)
        A = (gam + 1 / gam) / 2
        v = us + mp.d
        osc, _ = lattice.scaled(np.concatenate([v + W, v]))
        return A * osc[:len(xs)] / osc[len(xs):] * c1

    def gap_zeros(self, degrees, scalings=None, *, on_failure: str = "raise") -> GapZeros:
        """Zero of π in each gap (NaN when none): ``GapZeros.zeros`` of shape (len(degrees), g).

        Sign change of the real function ``M_11+(x) e^{iπ w_j}`` on a grid of
        the angle ``t`` (``x = lo + (hi-lo)(1-cos t)/2``) for all degrees at
        once, then Illinois (regula falsi) steps on the bracketing cell, with
        the Abel map from its Chebyshev interpolant on the gap
        (``outer.gap_abel_map``).  The degrees are taken ``PREDICT_CHUNK`` at a time
        (each degree's zero is computed on its own).  ``on_failure`` as in :meth:`recurrence`.
        """
        failure_policy(on_failure)
        degrees, scalings = self._degrees(degrees, scalings)
        if self.genus == 0:
            return GapZeros(degrees, scalings, np.zeros((degrees.size, 0)), True, {}, "")
        pieces = [self._gap_zeros(chunk) for chunk in self._chunks(degrees, scalings)]
        out = np.concatenate([zeros for zeros, _ in pieces])
        checks = _worst([checks for _, checks in pieces])
        verified, message = self._verdict(checks, "predicted gap zeros")
        return settle(GapZeros(degrees, scalings, out, verified, checks, message), on_failure)

    def _gap_zeros(self, chunk: "_Chunk") -> tuple[np.ndarray, dict]:
        """The gap zeros of one chunk of degrees and their checks (:meth:`gap_zeros`)."""
        w, W, c1 = chunk.w, chunk.W, chunk.c1
        N = w.shape[0]
        out = np.full((N, self.genus), np.nan)
        worst_imag = 0.0
        abel_error = 0.0
        most_changes = 0
        th = _GAP_GRID
        for j in range(self.genus):
            gap_abel, xs, tab, factor = self._gap(j)
            abel_error = max(abel_error, gap_abel.error)
            vals = self._m11_table((tab, factor), chunk.phases, c1) * np.exp(1j * np.pi * w[:, j])[:, None]
            worst_imag = max(worst_imag, float(np.max(np.abs(vals.imag) / (1 + np.abs(vals)))))
            r = vals.real
            s = np.sign(r)
            change = s[:, :-1] * s[:, 1:] < 0
            # more than one sign change would contradict "at most one zero per gap":
            # such rows stay NaN and the result is not verified
            changes = change.sum(axis=1)
            most_changes = max(most_changes, int(changes.max(initial=0)))
            has = changes == 1
            if not np.any(has):
                continue
            idx = np.argmax(change, axis=1)
            rows = np.nonzero(has)[0]
            tl, tr = th[idx[rows]], th[idx[rows] + 1]
            fl = r[rows, idx[rows]]
            fr = r[rows, idx[rows] + 1]
            Wr, c1r, ph = W[rows], c1[rows], np.exp(1j * np.pi * w[rows, j])
            lattice = self._gap_lattice(j)
            # Illinois steps on the bracketing grid cell, each row with its own phases

            def m11_on_gap(t, sel):
                return (self._m11_pointwise(gap_abel.x(t), gap_abel(t), Wr[sel], c1r[sel], lattice) * ph[sel]).real

            tl, tr, fl, fr = _tightened(m11_on_gap, th, r[rows], idx[rows], tl, tr, fl, fr)
            def in_x(a, b, lo=gap_abel.lo, hi=gap_abel.hi):
                # x(b) - x(a) = (hi - lo)(cos a - cos b)/2 = (hi - lo) sin((a+b)/2) sin((b-a)/2); the
                # size is that of the gap's ends: x = lo + (hi - lo)(1 - cos t)/2 is rounded to ulps of
                # them (a zero near x = 0 is not resolved more finely than that)
                spread = np.abs((hi - lo) * np.sin(0.5 * (a + b)) * np.sin(0.5 * (b - a)))
                return spread, max(abs(lo), abs(hi))

            tr = _refine_sign_changes(m11_on_gap, tl, tr, fl, fr, coordinate=in_x)
            out[rows, j] = gap_abel.x(tr)
        checks = {"gap_realness": worst_imag, "gap_abel_interpolation": float(abel_error),
                  "gap_sign_changes": float(most_changes)}
        return out, checks

    def band_counts(self, degrees, scalings=None, gap_zeros: GapZeros | np.ndarray | None = None, *,
                    on_failure: str = "raise") -> BandCounts:
        """Number of zeros of π in each band (argument principle, module docstring).

        ``gap_zeros`` may pass the :meth:`gap_zeros` of the same degrees (or
        their array) when the caller has them.  ``on_failure`` as in
        :meth:`recurrence`.
        """
        failure_policy(on_failure)
        N, n = self._degrees(degrees, scalings)
        if self.genus == 0:
            checks = {"count_rounding": 0.0}
            return BandCounts(N, n, N[:, None].astype(int).copy(), True, checks, "")
        if gap_zeros is not None:
            gap_zeros = np.asarray(getattr(gap_zeros, "zeros", gap_zeros), dtype=float)
        pieces = []
        for chunk in self._chunks(N, n):
            zeros = self._gap_zeros(chunk)[0] if gap_zeros is None else gap_zeros[chunk.rows]
            pieces.append(self._band_counts(chunk, zeros))
        counts = np.concatenate([c for c, _ in pieces])
        checks = _worst([c for _, c in pieces])
        verified, message = self._verdict(checks, "predicted zero counts per band")
        return settle(BandCounts(N, n, counts, verified, checks, message), on_failure)

    def _band_counts(self, chunk: "_Chunk", gap_zeros: np.ndarray) -> tuple[np.ndarray, dict]:
        """The zeros per band of one chunk of degrees and the check (:meth:`band_counts`)."""
        N, n, W, c1 = chunk.degrees, chunk.scalings, chunk.W, chunk.c1
        k = len(self.g.support)
        right = np.zeros((len(N), self.genus), dtype=int)
        x0s = np.zeros((len(N), self.genus))
        worst = 0.0
        # unreduced phases n Ω_j + (N - n) Ω̂_j - c_j: the argument of e^{n g_+ + (N-n) ĝ_+} D_+^{-1} on gap j over π
        raw = n[:, None] * np.asarray(self.g.omega)[None, :] + (N - n)[:, None] * self.omega_hat[None, :]
        if self.szego is not None:
            raw = raw - self.szego.phase_shift[None, :]
        for j in range(self.genus):
            cands = self._count_starts(j)
            # start the contour at the third of the gap farther from the gap zero
            z = np.nan_to_num(gap_zeros[:, j], nan=1e300)
            far = np.abs(z - cands[0]) >= np.abs(z - cands[1])
            choice = np.where(far, 0, 1)
            x0s[:, j] = np.where(far, cands[0], cands[1])
            cnt = np.empty(len(N))
            for ci, x0 in enumerate(cands):
                rows = np.nonzero(choice == ci)[0]
                if rows.size == 0:
                    continue
                m = self._m11_table(self._contour(j, x0), chunk.phases.rows(rows), c1[rows])
                # the argument followed continuously: the principal arguments plus the multiples of
                # 2π that bring each step into [-π, π) (np.unwrap's correction, summed instead of
                # accumulated: only the end of the unwrapped argument is used)
                p = np.angle(m)
                dd = np.diff(p, axis=1)
                turns = np.sum(np.mod(dd + np.pi, 2 * np.pi) - np.pi - dd, axis=1)
                # the exact phase e^{iπ w_j} multiplies M_11+ into the reals: the count is integral
                cnt[rows] = raw[rows, j] + (p[:, 0] - (p[:, -1] + turns)) / np.pi
            ri = np.round(cnt)
            worst = max(worst, float(np.max(np.abs(cnt - ri))))
            right[:, j] = ri.astype(int)
        counts = np.zeros((len(N), k), dtype=int)
        for band in range(k):
            left_count = N if band == 0 else right[:, band - 1]
            right_count = np.zeros(len(N), int) if band == k - 1 else right[:, band]
            c = left_count - right_count
            if band > 0:
                z = gap_zeros[:, band - 1]
                c = c - ((~np.isnan(z)) & (z > x0s[:, band - 1])).astype(int)
            if band < k - 1:
                z = gap_zeros[:, band]
                c = c - ((~np.isnan(z)) & (z < x0s[:, band])).astype(int)
            counts[:, band] = c
        return counts, {"count_rounding": worst}

    def predict(self, degrees, scalings=None, *, on_failure: str = "raise") -> Prediction:
        """Recurrence coefficients, gap zeros and band counts for ``degrees``.

        ``on_failure`` as in :meth:`recurrence`; the message names every failed part.
        """
        failure_policy(on_failure)
        N, n = self._degrees(degrees, scalings)
        rec = self.recurrence(N, n, on_failure="mark")   # O(degrees): no tables
        if self.genus == 0:
            gaps = self.gap_zeros(N, n, on_failure="mark")
            counts = self.band_counts(N, n, gaps, on_failure="mark")
        else:
            # the zeros PREDICT_CHUNK degrees at a time: the theta tables (degrees × contour points)
            # stay of one chunk's size however many degrees are asked for; each degree's zeros are
            # computed on their own, so the chunks do not change them
            pieces = []
            for chunk in self._chunks(N, n):
                zeros, gap_checks = self._gap_zeros(chunk)
                pieces.append((zeros, gap_checks) + self._band_counts(chunk, zeros))
            zeros = np.concatenate([p[0] for p in pieces])
            checks = _worst([p[1] for p in pieces])
            verified, message = self._verdict(checks, "predicted gap zeros")
            gaps = GapZeros(N, n, zeros, verified, checks, message)
            checks = _worst([p[3] for p in pieces])
            verified, message = self._verdict(checks, "predicted zero counts per band")
            counts = BandCounts(N, n, np.concatenate([p[2] for p in pieces]), verified, checks, message)
        parts = [rec, gaps, counts]
        checks: dict[str, float] = dict(rec.checks)
        for part in parts[1:]:
            checks.update(part.checks)
        message = "; ".join(dict.fromkeys(p.message for p in parts if p.message))
        result = Prediction(N, n, rec.phases, rec.a, rec.b, gaps.zeros, counts.counts,
                            all(p.verified for p in parts), checks, message)
        return settle(result, on_failure)

    def soft_edge_zeros(self, edge: int, degree: int, count: int = 5, *, on_failure: str = "raise") -> EdgeZeros:
        """First ``count`` zeros near soft edge number ``edge``: ``f_e(x) = ι_m n^{-2/3}`` (ascending).

        The scaling prediction of ``gfunction.edge_zeros.edge_scaling_zeros`` (DKMVZ 1999 §7),
        sorted ascending; ``gfunction.edge_zeros.edge_zeros`` gives the Airy form and its
        corrections.  ``on_failure`` as in :meth:`recurrence`.
        """
        from .edge_zeros import edge_scaling_zeros

        if self.g.edge_kinds[edge] != "soft":
            raise InputError(f"edge {edge} is a hard edge; Airy zeros apply at soft edges only")
        found = edge_scaling_zeros(self, edge, degree, count, on_failure=on_failure)
        order = np.argsort(found.zeros)
        return replace(found, zeros=found.zeros[order], offsets=found.offsets[order], zeta=found.zeta[order],
                       model_zeros=found.model_zeros[order])

    def quantile_zeros(self, degree: int) -> np.ndarray:
        """Bulk prediction ``F(x_j) = (j - 1/2)/n``, j = 1..n."""
        return np.asarray(self.measure.quantile((np.arange(1, degree + 1) - 0.5) / degree))


def _tightened(function, grid, values, cells, left, right, f_left, f_right):
    """Smaller brackets of the sign changes in the cells ``cells`` of ``grid`` (each row of
    ``values`` sampled on ``grid``), found by one call of ``function`` (as in
    :func:`_refine_sign_changes`) at two points per row.

    The root is estimated by inverse cubic interpolation through the four grid values around its
    cell (Lagrange in the values; a root of a smooth function with a nonzero slope: the inverse is
    smooth too, error O(h⁴)); four times its distance from the inverse quadratic estimate (O(h³))
    bounds its error.  ``function`` is evaluated at the estimate ∓ that bound and
    each end of the cell is moved inward to a point of the same sign, so the result is always a
    bracket of a sign change inside the cell, whatever the estimate's accuracy (a row whose four
    values are not monotone keeps its cell).  Illinois steps from these brackets need 3-5 calls
    instead of 15-17 from the cells (same roots: the iteration stops at a few ulps either way).
    """
    left, right = np.array(left, dtype=float), np.array(right, dtype=float)
    f_left, f_right = np.array(f_left, dtype=float), np.array(f_right, dtype=float)
    P = grid.size
    if left.size == 0 or P < 4:
        return left, right, f_left, f_right
    first = np.clip(cells - 1, 0, P - 4)
    stencil = first[:, None] + np.arange(4)[None, :]
    t = grid[stencil]
    v = np.take_along_axis(values, stencil, axis=1)
    steps = np.diff(v, axis=1)
    monotone = np.all(steps > 0, axis=1) | np.all(steps < 0, axis=1)
    v = np.where(monotone[:, None], v, np.arange(4)[None, :] + 1.0)   # any distinct values: unused rows

    def inverse(ts, vs):
        # the Lagrange interpolant of t as a function of the values, at value 0
        out = np.zeros(ts.shape[0])
        for k in range(ts.shape[1]):
            weight = np.ones(ts.shape[0])
            for m in range(ts.shape[1]):
                if m != k:
                    weight = weight * vs[:, m] / (vs[:, m] - vs[:, k])
            out += weight * ts[:, k]
        return out

    cubic = inverse(t, v)
    # the three of the four points that hold the cell
    three = np.where((first >= cells - 1)[:, None], np.arange(3)[None, :], np.arange(1, 4)[None, :])
    quadratic = inverse(np.take_along_axis(t, three, axis=1), np.take_along_axis(v, three, axis=1))
    eps = np.finfo(float).eps
    bound = 4 * np.abs(cubic - quadratic) + 16 * eps * np.maximum(np.abs(left), np.abs(right))
    use = monotone & np.isfinite(cubic) & np.isfinite(bound) & (cubic > left) & (cubic < right)
    rows = np.nonzero(use)[0]
    if rows.size == 0:
        return left, right, f_left, f_right
    a = np.maximum(cubic[rows] - bound[rows], left[rows])
    b = np.minimum(cubic[rows] + bound[rows], right[rows])
    f = function(np.concatenate([a, b]), np.concatenate([rows, rows]))
    fa, fb = f[:rows.size], f[rows.size:]
    # a zero value is the root: a bracket of width zero there
    for x, fx in ((a, fa), (b, fb)):
        hit = fx == 0
        left[rows[hit]], right[rows[hit]] = x[hit], x[hit]
        f_left[rows[hit]], f_right[rows[hit]] = 0.0, 0.0
    open_ = (fa != 0) & (fb != 0) & (f_left[rows] != 0)
    move = open_ & (np.sign(fa) == np.sign(f_left[rows]))
    left[rows[move]], f_left[rows[move]] = a[move], fa[move]
    move = open_ & (np.sign(fb) == np.sign(f_right[rows]))
    right[rows[move]], f_right[rows[move]] = b[move], fb[move]
    return left, right, f_left, f_right


def _refine_sign_changes(function, left, right, f_left, f_right, iterations: int = 60,
                         coordinate=None) -> np.ndarray:
    """Roots in the brackets [left, right] (a sign change in each), all at once.

    ``function(x, rows)`` gives the values at the points ``x`` of the brackets
    numbered ``rows`` (the ones still active), so each bracket may carry its own
    function (its own phases, say).  Illinois method (regula falsi with halving of
    the retained end's value; Dowell and Jarratt, BIT 11 (1971) 168–174): the
    bracket always holds the root and convergence is superlinear.

    A bracket is done when it is 4 ulps wide, in the variable itself or, when
    ``coordinate`` is given, in the coordinate the root is reported in:
    ``coordinate(a, b)`` returns ``(|X(b) - X(a)|, size)`` for a monotone map
    ``X`` (e.g. the angle of a gap to its x), the difference computed without
    cancellation, ``size`` the magnitude to whose ulps ``X`` is rounded (e.g.
    ``max(|X(a)|, |X(b)|)``, or that of the ends of the gap when ``X`` is formed
    from them).  A bracket narrower than 4 such ulps cannot change the reported
    root beyond them; shrinking it further in the variable only halves a bracket
    inside the function's rounding noise.
    """
    left, right = np.array(left, dtype=float), np.array(right, dtype=float)
    f_left, f_right = np.array(f_left, dtype=float), np.array(f_right, dtype=float)
    side = np.zeros(left.shape, dtype=int)  # which end was kept last time: -1 left, +1 right
    eps = np.finfo(float).eps
    previous = np.full(left.shape, np.nan)
    active = np.ones(left.shape, dtype=bool)
    for _ in range(iterations):
        width = right - left
        active &= width > 4 * eps * np.maximum(np.abs(left), np.abs(right))
        if coordinate is not None and np.any(active):
            spread, size = coordinate(left[active], right[active])
            active[active] = spread > 4 * eps * size
        if not np.any(active):
            break
        x = right - f_right * width / (f_right - f_left)
        x = np.where(np.isfinite(x), np.clip(x, left, right), 0.5 * (left + right))
        # a new point on an end of its bracket, or within a few ulps of the last one: the
        # root is there to rounding (the values are noise, the bracket may not shrink)
        if coordinate is None:
            near = np.abs(x - previous) <= 4 * eps * np.abs(x)
        else:
            spread, size = coordinate(x, np.where(np.isfinite(previous), previous, x + 1.0))
            near = spread <= 4 * eps * size
        converged = (x == left) | (x == right) | near
        previous = np.where(active, x, previous)
        active &= ~converged
        fx = np.zeros(x.shape)
        if np.any(active):   # no call with empty points (a function need not accept them)
            fx[active] = function(x[active], np.nonzero(active)[0])
        same_as_left = np.sign(fx) == np.sign(f_left)
        move_left = active & same_as_left
        move_right = active & ~same_as_left
        # the end that stays twice in a row has its value halved (Illinois)
        f_right = np.where(move_left & (side == 1), 0.5 * f_right, f_right)
        f_left = np.where(move_right & (side == -1), 0.5 * f_left, f_left)
        left, f_left = np.where(move_left, x, left), np.where(move_left, fx, f_left)
        right, f_right = np.where(move_right, x, right), np.where(move_right, fx, f_right)
        side = np.where(move_left, 1, np.where(move_right, -1, side))
        exact = active & (fx == 0)
        left, right = np.where(exact, x, left), np.where(exact, x, right)
    return np.where(np.isfinite(previous), previous, 0.5 * (left + right))


def predictor(measure, factor: Sequence | None = None, *, on_failure: str = "raise") -> Predictor:
    """Assemble g-function, model problem and harmonic phases for ``measure``.

    ``factor`` -- the n-independent factor ``h`` of the weight ``e^{-nV} h`` as
    a sequence of factor objects (the protocol :class:`equilibrium.weight.Factor`, e.g.
    the output of :func:`equilibrium.weight.parse_factor`); its Szegő function
    shifts the phases (``Predictor.phases``).

    Raises ``InputError`` for a measure that is not positive (a signed equilibrium
    measure negative somewhere): the orthogonal polynomials of a weight on Σ follow
    the positive equilibrium measure constrained to Σ, ``equilibrium.solve(field, on)``.

    ``on_failure`` -- ``"raise"``: NumericalFailure when the measure or a part
    is not verified; ``"mark"``: the predictor is returned and every prediction
    made from it is marked not verified (:mod:`equilibrium.verification`).
    """
    failure_policy(on_failure)
    if not getattr(measure, "positive", True):
        pieces, mass = measure.negative_part()
        where = " U ".join(f"[{a:.6g}, {b:.6g}]" for a, b in pieces)
        raise InputError(f"the {measure.kind} measure is negative on {where} (negative mass {mass:.3g}); "
                         "it is no model of orthogonal polynomials: use the positive equilibrium "
                         "measure on the set (equilibrium.solve)")
    gf = g_function(measure, on_failure=on_failure)
    mp = model_problem(measure.support, on_failure=on_failure)
    oh = harmonic_phases(measure.support)
    D = None
    if factor:
        from .szego import szego_function
        D = szego_function(tuple(factor), measure.support, on_failure=on_failure)
    result = Predictor(measure, gf, mp, oh, D)
    if on_failure == "raise" and not result.verified:
        raise NumericalFailure(f"predictions not certified: {result.message}")
    return result
