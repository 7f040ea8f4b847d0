"""Front door: the signed problem on a given set and the positive problem with unknown support.

:func:`solve_signed`
    E = Σ compact: every end of Σ is an end of the support, all hard; the
    algebraic system is linear.

:func:`solve`
    The support is found in three stages.

    1. *Window.*  A finite window J ⊂ Σ surely containing the support: for
       unbounded Σ it grows until the signed density on Σ ∩ J is negative
       near its artificial ends.
    2. *Shrinking.*  E_0 = Σ ∩ J and E_{m+1} = {ψ_{E_m} > 0}, the set where
       the signed equilibrium density of E_m is positive.  The support of
       μ_V lies in every E_m (the support of the positive part of the signed
       equilibrium measure of a set containing S_V contains S_V: Saff and
       Totik, Logarithmic Potentials with External Fields, 1997, Thm IV.1.11
       — from memory of the statement), so the number of bands and rough
       ends emerge without any guess from the user.
    3. *Newton.*  The ends created in stage 2 become soft, those on ∂Σ stay
       hard, and the system of :mod:`equilibrium.algebraic` is solved.
       The result is then checked (positivity of the density, effective
       potential ≥ 0 off the support, ends that should switch between soft
       and hard); a failed check changes the structure (a band is born,
       split or removed, an edge switches) and stage 3 repeats.

    The answer is always rebuilt on a second window around the support
    (a second discretisation) and the two are compared.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.polynomial import chebyshev as C

from .algebraic import (
    AlgebraicSolution,
    BandStructure,
    Window,
    band_sign,
    field_window,
    solve_structure,
)
from .chebyshev import COLLEAGUE_MAX, real_roots
from .errors import InputError, NumericalFailure
from .verification import failure_policy, settle
from .field import Field
from .measure import EquilibriumMeasure, band_masses, build_measure
from .sets import IntervalSet

#: the most bands the search will create
MAX_SEARCH_BANDS = 12


# ============================================================== validation
def _check_field_on(field: Field, on: IntervalSet) -> None:
    if field.is_zero and not on.is_compact:
        raise InputError("V = 0 needs a compact set; give a bounded set a:b (or a union a:b,c:d) or a confining potential",
                         about="set")
    for side, sign in (("left", -1.0), ("right", 1.0)):
        end = on.hull[0] if sign < 0 else on.hull[1]
        if math.isfinite(end):
            continue
        # far out on a geometric ladder: confinement is a property of x -> infinity, and a field
        # that is small on a human scale ((x/10000)^2, 1e-8 x^2) confines all the same
        xs = sign * np.array([1e3, 1e6, 1e12, 1e24, 1e48, 1e96])
        with np.errstate(all="ignore"):
            values = np.asarray(field.V(xs), dtype=complex if np.iscomplexobj(field.V(xs)) else float)
        values = np.real_if_close(values)
        if np.iscomplexobj(values) or np.any(np.isnan(values)):
            raise InputError(f"V is not real and finite far to the {side} of the set; restrict the set", about="set")
        growth = np.where(values == np.inf, np.inf, values - 2 * np.log(np.abs(xs)))
        steps_ok = all(
            (g1 == np.inf) or (g1 - g0 > 0.5) for g0, g1 in zip(growth[1:-1], growth[2:])
        )
        if np.any(growth == -np.inf) or not (steps_ok and (growth[-1] == np.inf or growth[-1] > growth[0] + 1.0)):
            raise InputError(
                f"V does not confine on the {side}: V(x) - 2 log|x| must grow to +infinity as x -> {'-' if sign < 0 else '+'}inf "
                f"(here it is {growth[-1]:.3g} at x = {xs[-1]:.0e}); use a confining field or a bounded set a:b",
                about="set",
            )


def _check_values_on(field: Field, on: IntervalSet, lower: float, upper: float) -> None:
    """V and V' must be real and finite on Σ ∩ [lower, upper] (sampled densely, ends included)."""
    intervals = on.clipped(lower, upper).intervals
    if not intervals:
        return
    x = np.concatenate([np.concatenate([[a, b], np.linspace(a, b, 2001)[1:-1]]) for a, b in intervals])
    _sample_V(field, x)
    with np.errstate(all="ignore"):
        slopes = np.asarray(field.dV(x))
    if np.iscomplexobj(slopes):
        slopes = np.where(np.abs(slopes.imag) <= 1e-12 * (1 + np.abs(slopes.real)), slopes.real, np.nan)
    slopes = np.broadcast_to(slopes, x.shape).astype(float)
    bad = ~np.isfinite(slopes)
    if np.any(bad):
        raise InputError(
            f"V' is not finite at x = {x[np.argmax(bad)]:.6g} in the set; the field must be differentiable there "
            "(restrict the set)", about="set"
        )


def check_field(field: Field, on: IntervalSet | None = None) -> None:
    """The input checks of :func:`solve` without solving (cheap: a few thousand evaluations of V).

    Raises :class:`InputError` when V = 0 on an unbounded set, when V does not
    confine on an unbounded side of Σ, or when V or V' is not real and finite on
    the part of Σ where the support can lie.  Callers that run many solves (a
    sweep) use it to refuse a bad field before starting.
    """
    on = IntervalSet.real_line() if on is None else on
    _check_field_on(field, on)
    _check_values_on(field, on, *_initial_window(field, on))


def _sample_V(field: Field, x: np.ndarray) -> np.ndarray:
    with np.errstate(all="ignore"):
        values = np.asarray(field.V(x))
    if np.iscomplexobj(values):
        if np.any(np.abs(values.imag) > 1e-12 * (1 + np.abs(values.real))):
            raise InputError("V is not real on the set; the field must be real-valued there")
        values = values.real
    values = np.broadcast_to(values, x.shape).astype(float)
    bad = ~np.isfinite(values)
    if np.any(bad):
        raise InputError(
            f"V is not finite at x = {x[np.argmax(bad)]:.6g} in the set; restrict the set to where V is finite",
            about="set",
        )
    return values


def _initial_window(field: Field, on: IntervalSet) -> tuple[float, float]:
    """A finite window of Σ outside which V is far above its minimum.

    The window is the hull of the points where V(x) - min V ≤ 8 + 2 log(1 + |x - x_0|),
    found on grids over [-R, R] ∩ Σ with R doubling until V at ±R is above
    that level (a heuristic; stage 1 of :func:`solve` enlarges the window
    when the signed density says the support reaches beyond it).
    """
    lo, hi = on.hull
    if math.isfinite(lo) and math.isfinite(hi):
        return lo, hi
    centre = lo if math.isfinite(lo) else (hi if math.isfinite(hi) else 0.0)
    R = 4.0
    while True:
        grid_lo = lo if math.isfinite(lo) else centre - R
        grid_hi = hi if math.isfinite(hi) else centre + R
        xs = np.linspace(grid_lo, grid_hi, 4001)
        xs = xs[on.contains(xs)]
        values = _sample_V(field, xs)
        i0 = int(np.argmin(values))
        x0, v0 = float(xs[i0]), float(values[i0])
        level = v0 + 8.0 + 2.0 * np.log1p(np.abs(xs - x0))
        low = values <= level
        left_ok = math.isfinite(lo) or not low[0]
        right_ok = math.isfinite(hi) or not low[-1]
        if left_ok and right_ok:
            step = xs[1] - xs[0]
            indices = np.nonzero(low)[0]
            a = max(lo, float(xs[indices[0]]) - 2 * step)
            b = min(hi, float(xs[indices[-1]]) + 2 * step)
            return a, b
        R *= 2.0
        if R > 1e7:
            raise InputError("V does not confine: it stays low up to |x| = 1e7; use a confining field or a bounded set")


# ============================================================ signed problem
def _all_hard(intervals) -> BandStructure:
    ends = np.array([e for ab in intervals for e in ab], dtype=float)
    return BandStructure(ends, np.ones(ends.size, dtype=bool))


def solve_signed(field: Field, on: IntervalSet, *, on_failure: str = "raise") -> EquilibriumMeasure:
    """The signed equilibrium measure of a compact union of intervals E = ``on``.

    The measure ν has ν(E) = 1, 2U^ν + V = ℓ on all of E (one constant), and
    an inverse square-root singularity at every end of E.

    ``on_failure`` -- ``"raise"`` (NumericalFailure when a check
    fails) or ``"mark"`` (the measure with ``verified = False`` and the failed
    checks in ``message``); see :mod:`equilibrium.verification`.
    """
    failure_policy(on_failure)
    if not on.is_compact:
        raise InputError("the signed problem needs a compact set: a bounded a:b or a union a:b,c:d", about="set")
    structure = _all_hard(on.intervals)
    lo, hi = on.hull
    _check_values_on(field, on, lo, hi)
    window = field_window(field, lo, hi)
    solution = solve_structure(window, structure)
    second = _variant_window(field, lo, hi)
    solution2 = solve_structure(second, structure)
    masses = band_masses(window, solution.state)
    agreement = _ends_and_masses_agreement(solution.state, masses, solution2.state, band_masses(second, solution2.state))
    measure = build_measure(
        window, solution.state, field, on, "signed", extra_checks={"discretisation_agreement": agreement}, masses=masses
    )
    return settle(measure, on_failure, what="the signed equilibrium measure")


def _variant_window(field: Field, lo: float, hi: float) -> Window:
    """The same window with a different ellipse: an independent discretisation."""
    return field_window(field, lo, hi, variant=True)


# ========================================================== positive problem
def _positive_parts(window: Window, structure: BandStructure, h: np.ndarray, minimum_width: float):
    """Pieces of each interval where the signed density is positive.

    Returns the new intervals and, for each, whether its ends are cut points
    (zeros of the density) rather than ends of the old interval.
    """
    pieces = []
    # one root-finding for all bands when the series is short (the colleague matrix sees all roots)
    candidates = real_roots(h, -np.inf, np.inf) if len(h) <= COLLEAGUE_MAX else None
    for j in range(structure.bands):
        a, b = structure.ends[2 * j], structure.ends[2 * j + 1]
        sign = band_sign(structure, j)
        t_a, t_b = window.t(a), window.t(b)
        roots = window.t(_real_roots_in(window, h, a, b, candidates))
        points = np.concatenate([[t_a], roots, [t_b]])
        for left, right in zip(points[:-1], points[1:]):
            middle = 0.5 * (left + right)
            if sign * C.chebval(middle, h) > 0:
                x_left = window.dV.centre + window.dV.half_width * left
                x_right = window.dV.centre + window.dV.half_width * right
                if left == t_a:
                    x_left = a
                if right == t_b:
                    x_right = b
                if x_right - x_left > minimum_width:
                    pieces.append(((x_left, x_right), (left != t_a, right != t_b)))
    return pieces


def _sigma_piece_bounds(on: IntervalSet, ends: np.ndarray) -> np.ndarray:
    bounds = np.empty((ends.size, 2))
    for i, e in enumerate(ends):
        for a, b in on.intervals:
            if a <= e <= b:
                bounds[i] = (a, b)
                break
        else:
            bounds[i] = (e, e)
    return bounds


def _shrink(field: Field, on: IntervalSet, window_bounds: tuple[float, float]):
    """Stages 1 and 2: a window and the shrinking sequence E_m."""
    lo, hi = window_bounds
    for _ in range(40):
        window = field_window(field, lo, hi)
        E = on.clipped(lo, hi)
        structure = _all_hard(E.intervals)
        solution = solve_structure(window, structure)
        h = solution.state.h
        span = hi - lo
        grow_lo = grow_hi = False
        # positive density at an artificial window end: the support reaches beyond it
        if lo > on.hull[0] and band_sign(structure, 0) * C.chebval(window.t(lo), h) > 0:
            grow_lo = True
        if hi < on.hull[1] and band_sign(structure, structure.bands - 1) * C.chebval(window.t(hi), h) > 0:
            grow_hi = True
        if not (grow_lo or grow_hi):
            break
        # half a span at a time: a whole span can overshoot into a region where V is huge,
        # whose signed measure then points the other way (seen to oscillate with two deep wells)
        if grow_lo:
            lo = max(on.hull[0], lo - 0.5 * span)
        if grow_hi:
            hi = min(on.hull[1], hi + 0.5 * span)
    else:
        raise InputError("the support does not fit in any window up to the search limit; is V confining?")

    cut = np.zeros(structure.ends.size, dtype=bool)
    previous = None
    for iteration in range(60):
        pieces = _positive_parts(window, structure, solution.state.h, 1e-12 * (hi - lo))
        if not pieces:
            raise NumericalFailure("the signed density is nowhere positive on the set; no support found")
        if len(pieces) > MAX_SEARCH_BANDS:
            raise NumericalFailure(f"the support search produced {len(pieces)} bands (more than {MAX_SEARCH_BANDS})")
        ends = np.array([x for (ab, _) in pieces for x in ab])
        cut = np.array([c for (_, cc) in pieces for c in cc])
        structure = BandStructure(ends, np.ones(ends.size, dtype=bool))
        if previous is not None and previous.size == ends.size:
            movement = np.max(np.abs(previous - ends)) / (hi - lo)
            if movement < 2e-2:
                break
        previous = ends
        solution = solve_structure(window, structure)
    # ends that are cut points (or artificial window ends) become soft
    sigma_ends = set(on.finite_endpoints)
    hard = np.array([(not c) and (e in sigma_ends) for e, c in zip(structure.ends, cut)])
    return window, BandStructure(structure.ends, hard)


def _newton(window: Window, structure: BandStructure, on: IntervalSet) -> AlgebraicSolution:
    bounds = _sigma_piece_bounds(on, structure.ends)
    return solve_structure(window, structure, bounds=bounds)


def _repair(window: Window, on: IntervalSet, solution: AlgebraicSolution, field: Field):
    """One structural correction after Newton, or None when the structure is right.

    Returns a new BandStructure, or None.
    """
    structure = solution.state.structure
    h = solution.state.h
    ends, hard = structure.ends.copy(), structure.hard.copy()
    sigma_ends = np.array(on.finite_endpoints)
    span = ends[-1] - ends[0]
    # a soft end stuck on the boundary of Σ becomes hard there
    if not solution.converged:
        for i in np.nonzero(~hard)[0]:
            if sigma_ends.size:
                nearest = sigma_ends[np.argmin(np.abs(sigma_ends - ends[i]))]
                if abs(nearest - ends[i]) < 1e-3 * span:
                    ends[i] = nearest
                    hard[i] = True
                    if np.all(np.diff(ends) > 0):
                        return BandStructure(ends, hard)
                    # the snapped end meets its neighbour: the band (or gap) between them closes
                    j = i - 1 if i > 0 and ends[i - 1] >= ends[i] else i + 1
                    keep = np.ones(ends.size, dtype=bool)
                    keep[[min(i, j), max(i, j)]] = False
                    if keep.sum() == 0:
                        return None
                    kept_ends = ends[keep]
                    kept_hard = hard[keep]
                    return BandStructure(kept_ends, kept_hard) if np.all(np.diff(kept_ends) > 0) else None
        # a band or a gap closing: remove the band of smallest width or merge across the smallest gap
        widths = np.diff(ends)
        i = int(np.argmin(widths))
        if structure.bands > 1:
            keep = np.ones(ends.size, dtype=bool)
            keep[[i, i + 1]] = False
            return BandStructure(ends[keep], hard[keep])
        return None
    # a hard end where the density would be negative detaches and becomes soft
    for i in np.nonzero(hard)[0]:
        j = i // 2
        if band_sign(structure, j) * C.chebval(window.t(ends[i]), h) < 0:
            inward = 1 if i % 2 == 0 else -1
            width = ends[i + 1] - ends[i] if inward > 0 else ends[i] - ends[i - 1]
            ends[i] += inward * 0.05 * width
            hard[i] = False
            return BandStructure(ends, hard)
    return None


def _ends_and_masses_agreement(state_a, masses_a, state_b, masses_b) -> float:
    """Agreement of two discretisations: ends (relative to the hull) and band masses."""
    ends_a, ends_b = state_a.structure.ends, state_b.structure.ends
    if ends_a.size != ends_b.size:
        return math.inf
    scale = max(1.0, float(np.max(np.abs(ends_a))))
    return float(max(np.max(np.abs(ends_a - ends_b)) / scale, np.max(np.abs(masses_a - masses_b))))


def _solve_structure_search(window: Window, structure: BandStructure, on: IntervalSet) -> AlgebraicSolution:
    """Newton with structural repairs (edges switching, bands or gaps closing)."""
    solution = _newton(window, structure, on)
    for _ in range(8):
        repaired = _repair(window, on, solution, window.field)
        if repaired is None:
            break
        solution = _newton(window, repaired, on)
    return solution


def solve(
    field: Field,
    on: IntervalSet | None = None,
    guess: EquilibriumMeasure | BandStructure | None = None,
    *,
    on_failure: str = "raise",
) -> EquilibriumMeasure:
    """The equilibrium measure μ_V of ``field`` on ``on`` (default: the real line).

    The number of bands, their ends and the kind of each end are found
    automatically.  The result carries its checks; when they fail,
    NumericalFailure is raised (or, with ``on_failure="mark"``, ``verified``
    is False and ``message`` names the failed checks).

    Parameters
    ----------
    guess : a measure (or band structure) of a nearby field, e.g. the previous
        point of a sweep.  Newton's method then starts from its structure;
        when that does not lead to a verified measure the full search runs,
        so a guess never changes the answer, only the time to it.
    on_failure : ``"raise"`` (NumericalFailure when a check
        fails) or ``"mark"`` (the measure with ``verified = False`` and the
        failed checks in ``message``); see :mod:`equilibrium.verification`.
    """
    failure_policy(on_failure)
    on = IntervalSet.real_line() if on is None else on
    # intermediate structures may overflow; every check of the answer is tested for finiteness
    with np.errstate(all="ignore"):
        measure = _solve(field, on, guess)
    return settle(measure, on_failure, what="the equilibrium measure")


def _solve(field: Field, on: IntervalSet, guess) -> EquilibriumMeasure:
    _check_field_on(field, on)
    bounds = _initial_window(field, on)
    _check_values_on(field, on, *bounds)
    if guess is not None:
        structure = guess.structure if isinstance(guess, EquilibriumMeasure) else guess
        lo = min(bounds[0], structure.ends[0])
        hi = max(bounds[1], structure.ends[-1])
        window = field_window(field, max(lo, on.hull[0]), min(hi, on.hull[1]))
        try:
            measure = _search_from(field, on, window, structure)
        except (NumericalFailure, ValueError, np.linalg.LinAlgError):
            measure = None
        if measure is not None and measure.verified:
            return measure
    window, structure = _shrink(field, on, bounds)
    return _search_from(field, on, window, structure)


def _search_from(field: Field, on: IntervalSet, window: Window, structure: BandStructure) -> EquilibriumMeasure:
    """Stage 3 and the structural corrections suggested by the verification."""
    solution = _solve_structure_search(window, structure, on)
    measure = None
    for attempt in range(6):
        measure = _finish(field, on, window, solution)
        if measure.verified:
            return measure
        # the verification itself suggests the structure: a band born or split
        new_structure = _structure_from_checks(window, measure, on)
        if new_structure is None:
            break
        candidate = _solve_structure_search(window, new_structure, on)
        if not candidate.converged:
            break
        solution = candidate
    return measure


def _finish(field: Field, on: IntervalSet, window: Window, solution: AlgebraicSolution) -> EquilibriumMeasure:
    """Re-solve on a window hugging the support (second discretisation) and build the result."""
    message = "" if solution.converged else f"Newton did not converge (residual {solution.residual_norm:.2e})"
    ends = solution.state.structure.ends
    span = ends[-1] - ends[0]
    lo2 = max(on.hull[0], ends[0] - 0.15 * span)
    hi2 = min(on.hull[1], ends[-1] + 0.15 * span)
    tight = field_window(field, lo2, hi2)
    second = solve_structure(tight, solution.state.structure, bounds=_sigma_piece_bounds(on, ends))
    masses = band_masses(tight, second.state)
    agreement = (
        _ends_and_masses_agreement(solution.state, band_masses(window, solution.state), second.state, masses)
        if second.converged
        else math.inf
    )
    if not second.converged:
        message = (message + "; " if message else "") + "the second discretisation did not converge"
    return build_measure(
        tight,
        second.state,
        field,
        on,
        "positive",
        extra_checks={"discretisation_agreement": agreement},
        message=message,
        masses=masses,
    )


def _real_roots_in(window: Window, h: np.ndarray, a: float, b: float, candidates: np.ndarray | None = None) -> np.ndarray:
    """Real zeros of the Chebyshev series h (on the window) inside (a, b), ascending.

    ``candidates`` may pass the real roots of h in t over a larger range when
    several intervals are searched for the same h.
    """
    t_a, t_b = window.t(a), window.t(b)
    roots = real_roots(h, t_a, t_b) if candidates is None else candidates[(candidates > t_a) & (candidates < t_b)]
    return window.dV.centre + window.dV.half_width * roots


def _structure_from_checks(window: Window, measure: EquilibriumMeasure, on: IntervalSet) -> BandStructure | None:
    """A band born where the effective potential is negative, or a band split where the density is."""
    structure = measure.structure
    ends, hard = structure.ends, structure.hard
    span = ends[-1] - ends[0]
    # negative density inside a band: split it where the regular part of the density is negative
    for j, (a, b) in enumerate(measure.support):
        theta = np.linspace(0, math.pi, 513)[1:-1]
        xs = a + (b - a) * np.sin(theta / 2) ** 2
        eta = band_sign(structure, j) * measure.h(xs)
        i = int(np.argmin(eta))
        if eta[i] < -1e-10 * np.max(np.abs(eta)):
            roots = _real_roots_in(measure._window, measure._state.h, a, b)
            below = roots[roots < xs[i]]
            above = roots[roots > xs[i]]
            if below.size == 0 or above.size == 0:
                continue
            lo, hi = float(below.max()), float(above.min())
            new_ends = np.concatenate([ends[: 2 * j + 1], [lo, hi], ends[2 * j + 1:]])
            new_hard = np.concatenate([hard[: 2 * j + 1], [False, False], hard[2 * j + 1:]])
            if np.all(np.diff(new_ends) > 0):
                return BandStructure(new_ends, new_hard)
    # negative effective potential off the support: a band is born there
    from .measure import _off_support_regions

    for lo, hi in _off_support_regions(measure):
        xs = lo + (hi - lo) * np.linspace(0, 1, 801)[1:-1]
        values = measure.effective_potential(xs)
        if not np.any(np.isfinite(values)):
            continue
        i = int(np.nanargmin(values))
        if values[i] < -1e-10 * max(1.0, abs(measure.lagrange)):
            negative = xs[values < 0]
            width = max(negative.max() - negative.min(), 1e-6 * span)
            centre = xs[i]
            a, b = centre - width / 2, centre + width / 2
            a, b = max(a, lo + 1e-9 * span), min(b, hi - 1e-9 * span)
            position = np.searchsorted(ends, centre)
            new_ends = np.insert(ends, position, [a, b])
            new_hard = np.insert(hard, position, [False, False])
            if np.all(np.diff(new_ends) > 0):
                return BandStructure(new_ends, new_hard)
    return None
