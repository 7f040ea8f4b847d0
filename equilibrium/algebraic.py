"""The finite algebraic problem of a given band structure.

Let the support be S = ∪_{j=1}^k [a_j, b_j] with ends e_1 < … < e_{2k}, each
end *soft* (density ~ distance^{1/2}) or *hard* (density ~ distance^{-1/2}).
Write R(z) = ∏ (z - e_i), Q_h = ∏_{hard} (z - e), Q_s = ∏_{soft} (z - e) and
G(z) = ∫ dμ(s)/(z - s).  Differentiating the Euler–Lagrange equality gives
G_+ + G_- = V' on S, hence

    G(z) = V'(z)/2 - (1/2) h(z) R(z)^{1/2} / Q_h(z)                        (1)

with h analytic wherever V' is.  Splitting f = V' Q_h / R^{1/2} on an ellipse
around the window (see :mod:`equilibrium.ellipse`) into its inner part K and
outer part r, and using G ~ 1/z, one finds

    h = K - 2 P,   P monic of degree #h - k - 1 (P = 0 when #h ≤ k),       (2)

and the conditions

    moments:  r = 2 (z - c)^{-(k - #h + 1)} + …   (when #h ≤ k),           (3)
    gaps:     ∫_{b_j}^{a_{j+1}} h(x) R(x)^{1/2}/Q_h(x) dx = 0,  j = 1..k-1 (4)

(4) says the effective potential 2U + V - ℓ takes the same value at both
ends of every gap, i.e. one constant ℓ on all bands.  The free coefficients
of P and the positions of the soft ends are the unknowns; (3)–(4) are as many
equations.  With every end hard this is the signed problem on E = S and the
system is linear in P; otherwise it is solved by Newton's method.

Formulas (1)–(4) are the classical ones for soft edges (Deift, Kriecherbauer
and McLaughlin, J. Approx. Theory 95 (1998) 388–475, §2; Saff and Totik,
Logarithmic Potentials with External Fields, 1997, ch. IV), written here for
any mixture of soft and hard ends.  Because V' enters only through its
Chebyshev approximation on the window and all gap integrals use the angular
rule of :mod:`equilibrium.quadrature`, the cost depends on the smoothness of
V on the window and only logarithmically on the width of the gaps.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as dataclass_field

import numpy as np
from numpy.polynomial import chebyshev as C

from .chebyshev import ChebyshevApproximation, chebyshev_fit
from .ellipse import JoukowskiEllipse, ellipse_for
from .errors import InputError
from .field import Field
from .radical import sqrt_R
from .quadrature import PANEL_POINTS, AngularRule, angular_rule, panel_points

#: the largest number of bands the window's ellipse is sized for
MAX_BANDS = 12


@dataclass(frozen=True)
class Window:
    """The field seen on a window J = [lower, upper] ⊇ hull of the support."""

    field: Field
    dV: ChebyshevApproximation
    ellipse: JoukowskiEllipse
    dV_upper: np.ndarray  # V' at the sample points ellipse.upper_half

    @property
    def lower(self) -> float:
        return self.dV.lower

    @property
    def upper(self) -> float:
        return self.dV.upper

    def t(self, x):
        return self.dV.to_t(x)

    def ratio_on_ellipse(self, structure: "BandStructure") -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """ζ = z - c at the sample points ``ellipse.upper_half``, R^{1/2}/Q_h there, and the ends e - c.

        Everything is formed from ζ and e - c (exact for ends near the centre,
        by Sterbenz's lemma), so no digits are lost when the window is far
        from the origin compared with its width: z - e = ζ - (e - c).
        """
        zeta = self.ellipse.zeta[self.ellipse.upper_half]
        local = structure.ends - self.dV.centre
        return zeta, sqrt_R(zeta, local) / _product_of_differences(zeta, local[structure.hard]), local


def field_window(field: Field, lower: float, upper: float, variant: bool = False) -> Window:
    """Approximate V' on [lower, upper] and lay the ellipse around it.

    ``variant=True`` lays a second, different ellipse (other radius and
    number of points) for an independent discretisation of the same problem.
    """
    if not (math.isfinite(lower) and math.isfinite(upper) and lower < upper):
        raise InputError(f"window [{lower}, {upper}] must be a finite interval")
    degree = None if field.polynomial is None else max(len(field.polynomial) - 2, 0)
    dV = chebyshev_fit(field.dV, lower, upper, degree=degree)
    ellipse = ellipse_for(lower, upper, dV.degree + (9 if variant else 0), 4 + (3 if variant else 0))
    return Window(field, dV, ellipse, ellipse.on_ellipse(dV.coefficients)[ellipse.upper_half])


@dataclass(frozen=True)
class BandStructure:
    """Ends e_1 < … < e_{2k} of the bands and which of them are hard."""

    ends: np.ndarray
    hard: np.ndarray

    def __post_init__(self):
        ends = np.asarray(self.ends, dtype=float)
        hard = np.asarray(self.hard, dtype=bool)
        if ends.ndim != 1 or ends.size % 2 or ends.size == 0 or hard.shape != ends.shape:
            raise ValueError("a band structure needs 2k ends and 2k edge kinds")
        if np.any(np.diff(ends) <= 0):
            raise ValueError("band ends must increase strictly")
        object.__setattr__(self, "ends", ends)
        object.__setattr__(self, "hard", hard)

    @property
    def bands(self) -> int:
        return self.ends.size // 2

    @property
    def hard_count(self) -> int:
        return int(self.hard.sum())

    @property
    def free_polynomial_terms(self) -> int:
        return max(self.hard_count - self.bands - 1, 0)

    @property
    def moment_conditions(self) -> int:
        return max(self.bands - self.hard_count + 1, 0)

    def with_ends(self, ends: np.ndarray) -> "BandStructure":
        return BandStructure(ends, self.hard)


def monic_leading(half_width: float, degree: int) -> float:
    """Chebyshev coefficient of T_degree(t) in the monic polynomial x^degree, x = c + d t."""
    if degree == 0:
        return 1.0
    # (d/2)^m * 2, not d^m / 2^(m-1): the quotient of two overflowing powers is finite
    return 2.0 * math.exp(degree * math.log(half_width / 2.0)) if half_width > 0 else 0.0


def q_hard(z: np.ndarray, structure: BandStructure) -> np.ndarray:
    """Q_h(z) = ∏_{hard ends} (z - e)."""
    return _product_of_differences(z, structure.ends[structure.hard])


def _product_of_differences(z: np.ndarray, points: np.ndarray) -> np.ndarray:
    z = np.asarray(z)
    out = np.ones(z.shape, dtype=complex if np.iscomplexobj(z) else float)
    for e in points:
        out = out * (z - e)
    return out


def gap_rule(structure: BandStructure, gap: int, points: int = PANEL_POINTS) -> AngularRule:
    """Angular rule on gap ``gap`` (0-based: between bands gap and gap+1)."""
    e = structure.ends
    lo, hi = e[2 * gap + 1], e[2 * gap + 2]
    return angular_rule(lo, hi, near_lo=lo - e[2 * gap], near_hi=e[2 * gap + 3] - hi, points=points)


def distance_product(
    structure: BandStructure, lo_index: int, hi_index: int, rule, include_jacobian: bool = True
) -> np.ndarray:
    """∏_e |x - e|^{σ_e} (· dx/dθ) at the nodes of a rule on [e_lo, e_hi].

    σ_e = +1/2 for soft ends and -1/2 for hard ends, so the product is
    |R(x)|^{1/2} / |Q_h(x)|.  The rule's interval runs between two
    consecutive ends (a band or a gap), or from the last end outward
    (``hi_index = len(ends)``) or inward to the first (``lo_index = -1``).
    Distances to its own ends come from the angle (``rule.from_lo``,
    ``rule.to_hi``) and distances to the others are formed beyond the
    interval as (x - lo) + (lo - e) or (hi - x) + (e - hi), so nothing
    cancels however small the neighbouring gaps and bands are.  ``rule`` is an
    :class:`AngularRule` or anything with its attributes lo, hi, x, from_lo,
    to_hi and dx_dtheta.
    """
    e, hard = structure.ends, structure.hard
    n_left, right = max(lo_index, 0), min(hi_index + 1, e.size)
    distances = np.empty((rule.x.size, e.size))
    distances[:, :n_left] = rule.from_lo[:, None] + (rule.lo - e[:n_left])[None, :]
    distances[:, right:] = rule.to_hi[:, None] + (e[right:] - rule.hi)[None, :]
    if 0 <= lo_index < e.size:
        distances[:, lo_index] = rule.from_lo
    if 0 <= hi_index < e.size:
        distances[:, hi_index] = rule.to_hi
    # one square root per factor (no overflow however many ends), then soft over hard
    roots = np.sqrt(distances)
    weight = np.prod(roots, axis=1, where=~hard[None, :]) / np.prod(roots, axis=1, where=hard[None, :])
    return weight * rule.dx_dtheta if include_jacobian else weight


def gap_sign(structure: BandStructure, gap: int) -> int:
    """Sign of R^{1/2}/Q_h on gap ``gap`` (0-based).

    On gap j, R^{1/2} = (-1)^{k-1-j} |R|^{1/2} (principal roots), and Q_h has
    the sign (-1)^{#hard ends right of the gap}.
    """
    k = structure.bands
    return (-1) ** (k - 1 - gap) * (-1) ** int(structure.hard[2 * gap + 2:].sum())


def band_sign(structure: BandStructure, band: int) -> int:
    """Sign s_j with ψ = s_j h |R|^{1/2}/(2π |Q_h|) ... written ψ = s_j h ∏|x-e|^{σ_e}/(2π) on band j.

    From (1): ψ = -(1/π) Im G_+ = (-1)^{k-j} (-h Q_s/2)/(π |R|^{1/2}) (1-based j),
    and sign Q_s = (-1)^{#soft ends right of x}.
    """
    k = structure.bands
    soft_right = int((~structure.hard[2 * band + 1:]).sum())
    return (-1) ** (k - 1 - band + 1) * (-1) ** soft_right


def gap_weight(rule: AngularRule, structure: BandStructure, gap: int) -> np.ndarray:
    """R^{1/2}/Q_h · dx/dθ at the nodes of a gap rule: real and signed."""
    return gap_sign(structure, gap) * distance_product(structure, 2 * gap + 1, 2 * gap + 2, rule)


@dataclass(frozen=True)
class FieldSplit:
    """What (2)–(3) give for given ends, before P enters: the inner part K of
    f = V' Q_h / R^{1/2} and the moment residuals, with their derivatives with
    respect to the soft ends when asked for."""

    inner: np.ndarray  # row 0: Chebyshev coefficients of K; rows 1..: ∂K/∂e for the soft ends
    moments: np.ndarray
    moment_jacobian: np.ndarray  # shape (N, #soft), empty without derivatives
    gaps: tuple["GapQuadrature", ...] = ()  # the rules for (4), which depend on the ends only

    @property
    def has_derivatives(self) -> bool:
        return self.inner.shape[0] > 1


@dataclass(frozen=True)
class GapQuadrature:
    """The angular rule of one gap with the signed weight w = R^{1/2}/Q_h dx/dθ × weights,
    its norm Σ|w|, and T_m(t) at its nodes (m < number of coefficients of h)."""

    rule: AngularRule
    weight: np.ndarray
    norm: float
    basis: np.ndarray


def gap_quadrature(window: Window, structure: BandStructure, gap: int, count: int) -> GapQuadrature:
    rule = gap_rule(structure, gap, panel_points(count - 1))
    weight = gap_weight(rule, structure, gap) * rule.weights
    # t at the nodes from t(lo) and x - lo: no digits lost when the window is far from 0
    t = (rule.lo - window.dV.centre) / window.dV.half_width + rule.from_lo / window.dV.half_width
    return GapQuadrature(rule, weight, float(np.sum(np.abs(weight))), C.chebvander(t, count - 1))


@dataclass(frozen=True)
class AlgebraicState:
    """Everything (2)–(4) give for one band structure and one P."""

    structure: BandStructure
    h: np.ndarray  # Chebyshev coefficients of h on the window
    polynomial: np.ndarray  # Chebyshev coefficients of P on the window
    moment_residuals: np.ndarray
    gap_residuals: np.ndarray
    jacobian: np.ndarray | None = None  # d(residual)/d(soft ends, free P coefficients)
    split: FieldSplit | None = dataclass_field(default=None, repr=False)

    @property
    def residual(self) -> np.ndarray:
        return np.concatenate([self.moment_residuals, self.gap_residuals])


def field_split(window: Window, structure: BandStructure, with_derivatives: bool = False) -> FieldSplit:
    """K and the moment residuals (3) for the given ends, by one (batched) FFT.

    Since ∂f/∂e = f/(2(z - e)) for a soft end e, the derivatives come from
    the same FFT as f itself.
    """
    ellipse = window.ellipse
    # f is real on the real axis: half the ellipse suffices (ellipse.laurent_real)
    zeta, ratio, local = window.ratio_on_ellipse(structure)
    f = window.dV_upper / ratio
    soft = np.nonzero(~structure.hard)[0] if with_derivatives else np.zeros(0, dtype=int)
    if soft.size:
        samples = np.empty((1 + soft.size, zeta.size), dtype=complex)
        samples[0] = f
        samples[1:] = f[None, :] / (2.0 * (zeta[None, :] - local[soft][:, None]))
    else:
        samples = f[None, :]
    scaled = ellipse.laurent_real(samples)
    count = inner_count(window, structure)
    inner = ellipse.chebyshev_part(scaled, count)
    N = structure.moment_conditions
    if N:
        r = ellipse.outer_part(scaled, N)
        m = np.arange(1, N + 1)
        normal = (ellipse.half_width / 2.0) ** m / 2.0
        moments = r[0] * normal
        moments[-1] -= 1.0
        moment_jacobian = (r[1:] * normal).T
    else:
        moments = np.zeros(0)
        moment_jacobian = np.zeros((0, soft.size))
    gaps = tuple(gap_quadrature(window, structure, j, count) for j in range(structure.bands - 1))
    return FieldSplit(inner, moments, moment_jacobian, gaps)


def inner_count(window: Window, structure: BandStructure) -> int:
    """Number of Chebyshev coefficients kept for K (and h)."""
    return min(window.dV.degree + structure.hard_count + 3, window.ellipse.size // 2 - 1)


def algebraic_state(
    window: Window,
    structure: BandStructure,
    p_free: np.ndarray,
    with_jacobian: bool = False,
    split: FieldSplit | None = None,
) -> AlgebraicState:
    """Evaluate (2)–(4) for the given ends and free coefficients of P.

    With ``with_jacobian`` the derivatives with respect to the soft ends and
    the free coefficients are computed too (the derivative of the gap weight
    is -w/(2(x - e))).  ``split`` may pass the :class:`FieldSplit` of the same
    ends, e.g. when only P changes: (3) does not depend on P and (4) is
    linear in it.
    """
    soft = np.nonzero(~structure.hard)[0] if with_jacobian else np.zeros(0, dtype=int)
    if split is None or (soft.size and not split.has_derivatives):
        split = field_split(window, structure, with_derivatives=with_jacobian)
    inner = split.inner
    k, nh = structure.bands, structure.hard_count
    count = inner.shape[1]
    h = inner[0].copy()
    degree_P = nh - k - 1
    q = max(degree_P, 0)
    polynomial = np.zeros(max(degree_P + 1, 0))
    if degree_P >= 0:
        polynomial[:degree_P] = p_free
        polynomial[degree_P] = monic_leading(window.ellipse.half_width, degree_P)
        h[: degree_P + 1] -= 2.0 * polynomial
    N = structure.moment_conditions
    columns = soft.size + q
    jacobian = np.zeros((N + k - 1, columns)) if with_jacobian else None
    moments = split.moments
    if with_jacobian and N:
        jacobian[:N, : soft.size] = split.moment_jacobian
    gaps = np.empty(k - 1)
    soft_ends = structure.ends[soft]
    for j, quadrature in enumerate(split.gaps):
        rule, weight, norm, basis = quadrature.rule, quadrature.weight, quadrature.norm, quadrature.basis
        h_nodes = basis[:, : len(h)] @ h
        gaps[j] = np.dot(weight, h_nodes) / norm
        if with_jacobian:
            # d/de of ∫ h w over the gap: ∫ (∂h/∂e) w - ∫ h w / (2(x - e)), x - e signed;
            # distances to the gap's own ends come from the rule (no cancellation)
            signed = rule.x[:, None] - soft_ends[None, :]
            signed[:, soft == 2 * j + 1] = rule.from_lo[:, None]
            signed[:, soft == 2 * j + 2] = -rule.to_hi[:, None]
            dh = basis @ inner[1:].T
            row = N + j
            jacobian[row, : soft.size] = (weight @ dh - (weight * h_nodes) @ (0.5 / signed)) / norm
            jacobian[row, soft.size :] = -2.0 * (weight @ basis[:, :q]) / norm
    return AlgebraicState(structure, h, polynomial, moments, gaps, jacobian, split)


@dataclass(frozen=True)
class AlgebraicSolution:
    state: AlgebraicState
    iterations: int
    residual_norm: float
    converged: bool


def solve_structure(
    window: Window,
    structure: BandStructure,
    bounds: np.ndarray | None = None,
    p_free: np.ndarray | None = None,
    tolerance: float = 5e-15,
    max_iterations: int = 40,
) -> AlgebraicSolution:
    """Solve (3)–(4) for the soft ends and the free coefficients of P.

    Newton's method with the Jacobian of :func:`algebraic_state` and a
    backtracking line search that keeps the ends ordered and each soft end
    inside its piece of Σ (``bounds``, shape (2k, 2)).  When no step
    reduces the residual the iteration stops and ``converged`` is False: the
    caller then changes the structure (an end turns hard, a band or gap
    closes).
    """
    soft = np.nonzero(~structure.hard)[0]
    q = structure.free_polynomial_terms
    if len(soft) + q != structure.moment_conditions + structure.bands - 1:
        raise ValueError("unbalanced algebraic system")  # pragma: no cover - a logic error
    p = np.zeros(q) if p_free is None else np.asarray(p_free, dtype=float)
    ends = structure.ends.copy()
    state = algebraic_state(window, structure, p, with_jacobian=True)
    norm = float(np.max(np.abs(state.residual))) if state.residual.size else 0.0
    if len(soft) == 0:
        # linear in p: the residual is r0 + J p exactly, so one solve, one step of
        # iterative refinement on that affine residual, and one evaluation to confirm
        if q == 0 or norm < tolerance:
            return AlgebraicSolution(state, 0, norm, norm < 1e-11)
        try:
            step = np.linalg.solve(state.jacobian, state.residual)
            step += np.linalg.solve(state.jacobian, state.residual - state.jacobian @ step)
        except np.linalg.LinAlgError:
            step = np.linalg.lstsq(state.jacobian, state.residual, rcond=None)[0]
        trial = algebraic_state(window, structure, p - step, split=state.split)
        trial_norm = float(np.max(np.abs(trial.residual)))
        if trial_norm < norm:
            state, norm = trial, trial_norm
        return AlgebraicSolution(state, 1, norm, norm < 1e-11)
    iterations = 0
    floor = rounding_floor(state)
    for iterations in range(1, max_iterations + 1):
        if norm < tolerance:
            break
        try:
            delta = np.linalg.solve(state.jacobian, -state.residual)
        except np.linalg.LinAlgError:
            delta = np.linalg.lstsq(state.jacobian, -state.residual, rcond=None)[0]
        scale = 1.0
        accepted = False
        # at the rounding floor a full step that does not help ends the iteration
        halvings = 1 if norm < max(1e-12, 4.0 * floor) else 30
        for _ in range(halvings):
            trial = ends.copy()
            trial[soft] += scale * delta[: len(soft)]
            ok = bool(np.all(np.diff(trial) > 0))
            if ok and bounds is not None:
                ok = bool(np.all(trial >= bounds[:, 0]) and np.all(trial <= bounds[:, 1]))
            if ok:
                trial_p = p + scale * delta[len(soft):]
                trial_state = algebraic_state(window, structure.with_ends(trial), trial_p, with_jacobian=True)
                trial_norm = float(np.max(np.abs(trial_state.residual)))
                if np.isfinite(trial_norm) and (trial_norm < norm or trial_norm < tolerance):
                    ends, p, state, norm = trial, trial_p, trial_state, trial_norm
                    floor = rounding_floor(state)
                    accepted = True
                    break
            scale /= 2.0
        if not accepted:
            break
    return AlgebraicSolution(state, iterations, norm, norm < max(1e-11, 4.0 * floor))


def rounding_floor(state: AlgebraicState) -> float:
    """The residual that rounding the soft ends to doubles leaves by itself:
    max over the equations of Σ_e |∂r/∂e| ulp(e).

    A support far from the origin compared with its width (a narrow well at
    x = 17, say) cannot have its ends placed closer than ulp(17) ≈ 3.6e-15,
    and the residual of such a problem stops there; Newton's iteration counts
    as converged when its residual is below 1e-11 or within four times this
    floor (the checks of the measure still judge the result).
    """
    soft = ~state.structure.hard
    if state.jacobian is None or not np.any(soft):
        return 0.0
    spacing = np.spacing(np.abs(state.structure.ends[soft]))
    return float(np.max(np.abs(state.jacobian[:, : spacing.size]) @ spacing))
