"""Continuation along a parameter and the location of phase transitions.

A one-parameter family of fields t ↦ V_t changes the number of bands at a
critical t*: a gap opens where the density vanishes inside a band (a band
splits), a band is born where the effective potential touches zero off the
support, and a soft edge meets a hard wall.  On the side with fewer bands
the band structure continues analytically past t* (the algebraic system of
:mod:`equilibrium.algebraic` keeps a solution, no longer positive), and the
relevant *margin*

    m(t) = min( min over the band interiors of η_t / max η_t ,
                min over critical points x off S of eff_t(x) / max(1, |ℓ_t|),
                min over soft edges e of η_t(e) / max η_t )

crosses zero transversally at t*.  Brent's method on m locates t* to
near machine precision; the two sides are solved independently and must
have different band counts.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.optimize import brentq

from .algebraic import BandStructure, band_sign, field_window, solve_structure
from .errors import InputError, NumericalFailure
from .field import Field
from .measure import EquilibriumMeasure, _effective_potential_touches, build_measure
from .search import _initial_window, _sigma_piece_bounds, solve
from .sets import IntervalSet


@dataclass(frozen=True)
class Transition:
    """A located phase transition of a family of fields."""

    parameter: float
    bracket: tuple[float, float]
    bands_before: int
    bands_after: int
    kind: str
    margin_at_parameter: float
    evaluations: int


@dataclass(frozen=True)
class StructureMargin:
    """The margin of one band structure solved for one field.

    ``margin`` -- the smallest of the normalised quantities that must stay positive for the
    structure to hold (the density inside each band and at each soft edge, the effective
    potential off the support); it changes sign at a phase transition.  ``kind`` says which
    one is smallest; ``structure`` is the solved structure (its ends), from which the next
    parameter continues.
    """

    margin: float
    structure: BandStructure
    kind: str


def structure_margin(field: Field, on: IntervalSet, structure: BandStructure) -> StructureMargin:
    """Solve a fixed band structure for ``field`` and return its margin and the solved structure."""
    ends = structure.ends
    span = ends[-1] - ends[0]
    # the window must see the whole region where a band could be born, not only the support
    search_lo, search_hi = _initial_window(field, on)
    lo = max(on.hull[0], min(ends[0] - 0.15 * span, search_lo))
    hi = min(on.hull[1], max(ends[-1] + 0.15 * span, search_hi))
    window = field_window(field, lo, hi)
    solution = solve_structure(window, structure, bounds=_sigma_piece_bounds(on, ends))
    if not solution.converged:
        raise NumericalFailure(f"continuation of the band structure failed (residual {solution.residual_norm:.2e})")
    state = solution.state
    measure = build_measure(window, state, field, on, "positive", light=True)
    margins = []
    peak = 0.0
    values = []
    for j, (a, b) in enumerate(measure.support):
        theta = np.linspace(0, math.pi, 401)
        xs = a + (b - a) * np.sin(theta / 2) ** 2
        eta = band_sign(state.structure, j) * measure.h(xs)
        if not np.all(np.isfinite(eta)):
            raise NumericalFailure("continuation of the band structure left the window (non-finite density)")
        values.append((eta, j))
        peak = max(peak, float(np.max(np.abs(eta))))
    if peak == 0.0:
        raise NumericalFailure("continuation of the band structure gave a vanishing density")
    kinds = []
    for eta, j in values:
        interior = float(np.min(eta[1:-1])) / peak
        margins.append(interior)
        kinds.append("interior zero of the density")
        for side in (0, -1):
            index = 2 * j + (0 if side == 0 else 1)
            if not state.structure.hard[index]:
                margins.append(float(eta[side]) / peak)
                kinds.append("density vanishes faster than a square root at a soft edge")
    scale = max(1.0, abs(measure.lagrange))
    for _, value in _effective_potential_touches(measure):
        margins.append(value / scale)
        kinds.append("effective potential touches zero off the support")
    i = int(np.argmin(margins))
    return StructureMargin(float(margins[i]), state.structure, kinds[i])


def locate_transition(
    family: Callable[[float], Field],
    lower: float,
    upper: float,
    on: IntervalSet | None = None,
    tolerance: float = 1e-12,
    steps: int = 64,
) -> Transition:
    """Locate the parameter in [lower, upper] where the number of bands changes.

    Parameters
    ----------
    family : t ↦ Field.
    lower, upper : a bracket; the solutions at both ends must differ in
        their number of bands, and both must be verified (their band counts
        are trusted): NumericalFailure otherwise.
    tolerance : absolute tolerance of Brent's method on the parameter.
    steps : continuation steps from the side with fewer bands toward the other end
        until the margin changes sign (a bracket of one cell of a sweep grid needs few).
    """
    on = IntervalSet.real_line() if on is None else on
    if not lower < upper:
        raise InputError("the bracket must satisfy lower < upper")
    mu_lo, mu_hi = solve(family(lower), on), solve(family(upper), on)
    if mu_lo.bands == mu_hi.bands:
        raise InputError(
            f"both ends of the bracket have {mu_lo.bands} band(s); give a bracket across a change of the number of bands"
        )
    # continue from the side with fewer bands
    fewer = mu_lo if mu_lo.bands < mu_hi.bands else mu_hi
    start = lower if fewer is mu_lo else upper
    other = upper if fewer is mu_lo else lower
    structure = fewer.structure
    evaluations = [0]
    last = {"kind": ""}
    solved_at: dict[float, BandStructure] = {start: structure}  # parameter -> structure solved there

    def margin(t: float) -> float:
        # continue from the structure solved at the nearest parameter (Brent's iterates jump
        # about; continuing from the last one can leave the branch)
        evaluations[0] += 1
        nearest = solved_at[min(solved_at, key=lambda u: abs(u - t))]
        solved = structure_margin(family(t), on, nearest)
        last["kind"] = solved.kind
        solved_at[t] = solved.structure
        return solved.margin

    m_start = margin(start)
    # march toward the other end until the margin changes sign (continuation in small steps)
    if steps < 1:
        raise InputError("steps must be >= 1")
    previous = start
    found = None
    for s in np.linspace(start, other, steps + 1)[1:]:
        try:
            m = margin(float(s))
        except NumericalFailure:
            break
        if (m < 0) != (m_start < 0):
            found = (previous, float(s))
            break
        previous = float(s)
    if found is None:
        raise NumericalFailure("the margin of the continued band structure did not change sign inside the bracket")
    a, b = sorted(found)
    # Brent continues from the marched structures (nearest parameter first)
    t_star = brentq(margin, a, b, xtol=tolerance, rtol=4 * np.finfo(float).eps)
    kind = last["kind"]
    return Transition(
        parameter=float(t_star),
        bracket=(float(a), float(b)),
        bands_before=mu_lo.bands,
        bands_after=mu_hi.bands,
        kind=kind,
        margin_at_parameter=float(margin(t_star)),
        evaluations=evaluations[0],
    )
