r"""π_n on the real line from the residual expansion: gap zeros, the bulk form and its zeros, at order K.

With ``T = e^{nℓσ₃/2} Y e^{-n(g+ℓ/2)σ₃}`` (so ``T_11 = π_n e^{-ng}``), ``S = R N`` outside
the matching discs and ``S = R P`` inside them (``gfunction.residual``; ``N`` the outer
parametrix with the Szegő function, ``P`` the Airy/Bessel parametrix).  Write
``J = P N^{-1}`` inside the discs (the exact scaled Airy/Bessel jump of
``gfunction.local.EdgeParametrix.mismatch``; it has no jump on the band and is bounded by
``|z - e|^{-1/4}``, hence analytic in the whole disc) and ``J = I`` outside; then everywhere

    S = R J N,      (R J N)_11 = D_∞ D^{-1} · m̃,     m̃ = r_1 M_11 + r_2 D_∞^{-2} M_21,

with ``(r_1, r_2)`` the first row of ``R J`` and ``M`` the theta-function parametrix
(``N = D_∞^{σ₃} M D^{-σ₃}``).

*Gaps* (no lens): ``T = S``, so π_n vanishes where ``m̃`` does.  On gap ``j``
``e^{iπw_j} M_11+`` is real, ``e^{iπw_j} M_21+`` imaginary (``M_+ = M_- e^{-2πiwσ₃}`` and
``M(z̄) = σ₃ conj M(z) σ₃``), ``r_1`` real and ``r_2`` imaginary (the same symmetry of R
and J), so ``e^{iπw_j} m̃_+`` is real and its sign changes are the gap zeros.

*Bands*: with the lens factors and ``(RJN)_{12+} = h (RJN)_{11-}`` (``N`` and ``P`` have
the band jump ``[[0, h], [-1/h, 0]]``; ``R J`` is analytic across the band up to the
exponentially small lens jumps)

    π_n(x) e^{-nV/2} e^{nℓ/2} / D_∞ = 2 Re( m̃_+ D_+^{-1} e^{n(g_+ - V/2 + ℓ/2)} )

(the ``−`` term is the complex conjugate of the ``+`` term by the same symmetries).

Order ``K``: ``R = I + R^{(1)}/n + … + R^{(K)}/n^K`` (inner R in the discs, outer R
elsewhere) and ``J`` exact; the relative error of ``m̃`` is ``O(n^{-K-1})``.  Order 0 is the
leading order ``R = J = I`` (``m̃ = M_11``), the prediction of
``gfunction.predict.Predictor.band_form`` and ``gap_zeros``.  Hence the gap zeros at order
``K`` are within ``O(n^{-K-1})`` of those of π_n, the bulk form has a relative error
``O(n^{-K-1})`` and its zeros (spacing ``1/n``) are within ``O(n^{-K-2})``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

from equilibrium.errors import InputError, NumericalFailure

__all__ = ["Corrections", "corrections", "outer_form", "band_form", "value_form", "gap_zeros", "bulk_pieces",
           "bulk_zeros"]

_LIFT = 1e-300j


#: degrees per batched residual expansion (as ``gfunction.series.corrected_recurrence``)
CHUNK = 256
#: degrees per block of :func:`gap_zeros` (bounds its memory: ~30 MB of tables per block)
_GAP_BLOCK = 512


@dataclass(frozen=True)
class Corrections:
    """The residual expansions of a batch of degrees at one order (``gfunction.residual``).

    ``expansions[i]`` is the batched ``ResidualExpansion`` of ``degrees[CHUNK i : CHUNK (i+1)]``
    (one set of circles and one jump expansion for all; the degree with position ``p`` in
    ``degrees`` is row ``p % CHUNK`` of expansion ``p // CHUNK``).  :meth:`row` gives the first row
    of ``R J`` (module docstring) and :meth:`matrix` ``R`` itself, at points paired with degrees;
    :meth:`grid_row` the row for every degree at every point of a grid.  ``verified``, ``checks``
    and ``message`` are those of the first expansion (its checks: trapezoid against residues,
    symmetry, ``det R = 1`` order by order, the series against the exact jump of its first
    degree; ``gfunction.residual``); the predictions built on it carry them.
    """

    predictor: Any
    degrees: np.ndarray
    order: int
    expansions: tuple
    verified: bool = True
    checks: dict = field(default_factory=dict)
    message: str = ""

    def merged(self, checks: dict, message: str) -> tuple[dict, bool, str]:
        """``checks`` of a prediction joined with the residual's (prefixed ``residual_``), verdict, message."""
        out = dict(checks)
        out.update({f"residual_{k}": float(v) for k, v in self.checks.items()})
        parts = [m for m in (message, self.message) if m]
        return out, not parts, "; ".join(parts)

    @property
    def jump(self):
        """The ``JumpExpansion`` shared by the expansions (circles, local parametrices)."""
        return self.expansions[0].jump

    def _index(self, degrees, shape) -> np.ndarray:
        d = np.broadcast_to(np.asarray(degrees, dtype=np.int64), shape)
        pos = np.searchsorted(self.degrees, d)
        pos = np.clip(pos, 0, self.degrees.size - 1)
        if np.any(self.degrees[pos] != d):
            missing = sorted(set(np.unique(d)) - set(self.degrees.tolist()))
            raise InputError(f"no residual expansion for degrees {missing[:5]}")
        return pos

    def at_infinity(self, degrees) -> tuple[np.ndarray, np.ndarray]:
        """``(R^{(k)}_1, R^{(k)}_2)`` (k = 1 … K) of each degree: two arrays (K, len(degrees), 2, 2)."""
        pos = self._index(degrees, np.shape(degrees))
        inf = np.stack([self.expansions[p // CHUNK].infinity[:, p % CHUNK] for p in np.ravel(pos)], axis=1)
        return inf[:, :, 0], inf[:, :, 1]

    def matrix(self, z, degrees) -> np.ndarray:
        """``R = I + Σ_{k≤K} R^{(k)}/n^k`` at ``z`` (inner R inside the discs), one degree per point.

        ``ResidualExpansion.paired_value`` of each batch: the modes of every point's degree are
        gathered, the powers of ``(z - e)/r`` computed once per point.
        """
        z = np.asarray(z, dtype=complex)
        pos = self._index(degrees, z.shape)
        out = np.empty(z.shape + (2, 2), dtype=complex)
        batch = pos // CHUNK
        for i in np.unique(batch):
            sel = batch == i
            out[sel] = self.expansions[i].paired_value(z[sel], pos[sel] - CHUNK * i, self.order)
        return out

    def row(self, x, degrees, *, outer=None) -> np.ndarray:
        """First row of ``R J`` at real ``x`` (upper side), ``J = P N^{-1}`` in the discs; ``x.shape + (2,)``.

        ``outer`` -- ``M(x + i0; w_n)`` at the same points (``x.shape + (2, 2)``), reused by the
        local parametrices inside the discs when the caller has it.
        """
        x = np.asarray(x, dtype=float)
        z = x + _LIFT
        n = np.broadcast_to(np.asarray(degrees, dtype=np.int64), x.shape)
        # R is analytic across the real line (outside the discs and, inner R, inside them): it is
        # evaluated at x itself; the lift selects boundary values of M and P only (its products
        # with the modes would be subnormal numbers, ~50 times slower arithmetic)
        row = self.matrix(x.astype(complex), n)[..., 0, :].copy()
        for ep in self.jump.parametrices:
            inside = np.abs(z - ep.edge) < ep.radius
            if np.any(inside):
                J = np.eye(2) + ep.mismatch(z[inside], n[inside], outer=None if outer is None else outer[inside])
                row[inside] = np.einsum("pi,pij->pj", row[inside], J)
        return row

    def grid_row(self, x, degrees, *, outer=None) -> np.ndarray:
        """:meth:`row` at every point of the 1-d grid ``x`` for every degree of ``degrees``; (N, P, 2).

        ``outer`` -- ``M`` on the grid, shape (N, P, 2, 2) (computed here when not given).  The
        powers of ``(z - e)/r`` and the local variables of the discs are computed once per point
        (they do not depend on n).
        """
        x = np.asarray(x, dtype=float).ravel()
        z = x + _LIFT
        n = np.atleast_1d(np.asarray(degrees, dtype=np.int64))
        if outer is None:
            outer = _outer_grid(self.predictor, x, n)
        pos = self._index(n, n.shape)
        row = np.empty((n.size, x.size, 2), dtype=complex)
        batch = pos // CHUNK
        for i in np.unique(batch):
            sel = batch == i
            row[sel] = self.expansions[i].grid_value(x.astype(complex), pos[sel] - CHUNK * i, self.order)[..., 0, :]
        for ep in self.jump.parametrices:
            inside = np.abs(z - ep.edge) < ep.radius
            if np.any(inside):
                J = np.eye(2) + ep.mismatch(z[inside], n[:, None], outer=outer[:, inside])
                row[:, inside] = np.einsum("npi,npij->npj", row[:, inside], J)
        return row


def corrections(predictor, degrees, order: int, *, jump=None) -> Corrections | None:
    """:class:`Corrections` of ``degrees`` (degree = scaling) at ``order`` (None at order 0: R = J = I).

    The expansions are batched ``CHUNK`` degrees at a time (as in
    ``gfunction.series.corrected_recurrence``, which can reuse them); the first batch carries the
    checks.
    """
    order = int(order)
    if order < 0:
        raise InputError(f"the order must be a non-negative integer; got {order}")
    if order == 0:
        return None
    from .residual import jump_expansion
    degrees = np.unique(np.atleast_1d(np.asarray(degrees)).astype(np.int64))
    if jump is None or jump.order < order:
        jump = jump_expansion(predictor, order)
    return _build(predictor, degrees, order, jump)


def _build(predictor, degrees, order, jump, verify: bool = True) -> Corrections:
    """:class:`Corrections` of the sorted unique ``degrees`` on ``jump`` (checks of the first batch if
    ``verify``; otherwise the result is not verified)."""
    from .residual import residual_expansion

    exps = tuple(residual_expansion(predictor, degrees[s:s + CHUNK], order, jump=jump, verify=verify and s == 0,
                                    on_failure="mark")
                 for s in range(0, degrees.size, CHUNK))
    first = exps[0]
    return Corrections(predictor, degrees, order, exps, bool(first.verified), dict(first.checks), first.message)


def _corrections_for(predictor, degrees, order, given):
    if int(order) == 0:
        return None
    if given is not None:
        if given.order != int(order):
            raise InputError(f"the corrections are of order {given.order}, not {order}")
        return given
    return corrections(predictor, degrees, order)


def outer_form(predictor, x, degrees, order: int = 0, *, corrections: Corrections | None = None) -> np.ndarray:
    r"""``m̃ = r_1 M_11 + r_2 D_∞^{-2} M_21`` at real ``x`` (upper side); ``degrees`` (= scalings)
    broadcast with ``x``, one per point.  Order 0 is ``M_11``."""
    x = np.asarray(x, dtype=float)
    n = np.broadcast_to(np.asarray(degrees, dtype=np.int64), x.shape)
    w = predictor.phases(n.ravel()).reshape(x.shape + (predictor.genus,))
    M = predictor.model.evaluate(x + _LIFT, w if predictor.genus else None)
    cor = _corrections_for(predictor, n, order, corrections)
    if cor is None:
        return M[..., 0, 0]
    return _combine(predictor, cor.row(x, n, outer=M), M)


def _combine(predictor, row, M) -> np.ndarray:
    """``m̃ = r_1 M_11 + r_2 D_∞^{-2} M_21``."""
    lim2 = 1.0 if predictor.szego is None else predictor.szego.limit ** 2
    return row[..., 0] * M[..., 0, 0] + row[..., 1] * M[..., 1, 0] / lim2


def _outer_grid(predictor, x, degrees, table=None) -> np.ndarray:
    """``M(x + i0; w_n)`` at every point of the 1-d grid ``x`` for every degree; shape (N, P, 2, 2).

    ``gfunction.residual.OuterTable`` of the points (one theta table for all phases; ``table``: a
    prepared one), except within 1 % of the gap width of a gap point ``z_j``, where ``M_12`` and
    ``M_21`` are 0/0 and ``ModelProblem.evaluate`` (its interpolation there) gives them.
    """
    from .residual import outer_table

    model = predictor.model
    x = np.asarray(x, dtype=float).ravel()
    n = np.atleast_1d(np.asarray(degrees, dtype=np.int64))
    z = x + _LIFT
    if table is None:
        table = outer_table(model, z)
    g = predictor.genus
    w = predictor.phases(n)
    M = table.evaluate(model.W(w) if g else np.zeros((n.size, 0)))
    close = np.zeros(x.shape, dtype=bool)
    for j, zj in enumerate(model.gap_points):
        close |= np.abs(z - zj) < 1e-2 * (model.support[j + 1][0] - model.support[j][1])
    if np.any(close):
        shape = (n.size, int(close.sum()))
        M[:, close] = model.evaluate(np.broadcast_to(z[close], shape), np.broadcast_to(w[:, None, :], shape + (g,)),
                                     abel=np.broadcast_to(model.abel(z[close]), shape + (g,)))
    return M


def _outer_form_grid(predictor, x, degrees, cor, table=None) -> np.ndarray:
    """:func:`outer_form` at every point of the 1-d grid ``x`` for every degree; shape (N, P).

    The theta tables of ``M``, the powers of the circle variables and the local variables are
    computed once per point and shared by the degrees (the numbers of :func:`outer_form` on the
    grid, to rounding).
    """
    x = np.asarray(x, dtype=float).ravel()
    n = np.atleast_1d(np.asarray(degrees, dtype=np.int64))
    M = _outer_grid(predictor, x, n, table)
    if cor is None:
        return M[..., 0, 0]
    return _combine(predictor, cor.grid_row(x, n, outer=M), M)


def band_form(predictor, x, degree: int, order: int = 0, *, corrections: Corrections | None = None) -> np.ndarray:
    r"""``2 Re(m̃_+ D_+^{-1} e^{n(g_+ - V/2 + ℓ/2)})`` on the bands: ``π_n e^{-nV/2} e^{nℓ/2}/D_∞`` to
    a relative ``O(n^{-order-1})`` (module docstring; order 0 is ``Predictor.band_form``)."""
    x = np.asarray(x, dtype=float)
    n = int(degree)
    gp, _ = predictor.g.boundary_values(x)
    shift = 0.5 * np.asarray(predictor.measure.field.V(x), dtype=float) - 0.5 * float(predictor.measure.lagrange)
    m = outer_form(predictor, x, n, order, corrections=corrections)
    if predictor.szego is not None:
        m = m / predictor.szego.boundary_values(x)[0]
    return 2.0 * (m * np.exp(n * (gp - shift))).real


def value_form(predictor, x, degree: int, order: int = 0, *, corrections: Corrections | None = None) -> np.ndarray:
    r"""``p_n w_n^{1/2} / (γ_n e^{-nℓ/2})`` on the bands, to a relative ``O(n^{-order-1})``.

    With ``w_n = e^{-nV} h`` and ``p_n = γ_n π_n``, :func:`band_form` gives
    ``π_n e^{-nV/2} e^{nℓ/2}/D_∞``, and ``h^{1/2} = |D_+|`` on the bands (``D_+ D_- = h``,
    ``D_- = conj D_+`` for a real positive factor; ``gfunction.szego``), so

        p_n w_n^{1/2} = γ_n e^{-nℓ/2} · D_∞ |D_+| · band_form.

    Without a factor this is :func:`band_form` itself.  The bulk form does not hold next to a
    singular point of the factor inside a band (``SzegoFunction.interior_points``), nor at the
    edges: use it in the bulk.
    """
    form = band_form(predictor, x, degree, order, corrections=corrections)
    if predictor.szego is None:
        return form
    return form * predictor.szego.limit * np.abs(predictor.szego.boundary_values(np.asarray(x, dtype=float))[0])


def gap_zeros(predictor, degrees, order: int = 1, *, corrections: Corrections | None = None,
              points: int = 161, on_failure: str = "raise"):
    r"""The zero of ``e^{iπw_j} m̃_+`` in each gap (module docstring) for each degree (= scaling).

    Each gap is sampled at ``x = lo + (hi - lo)(1 - cos t)/2`` (``points`` values of ``t``, ends
    excluded), as in ``Predictor.gap_zeros``, for all degrees at once; the sign changes are refined
    together by the Illinois method, each with its own degree.  Returns a
    ``gfunction.predict.GapZeros`` with ``order`` set; checks ``gap_realness`` (max
    ``|Im e^{iπw} m̃| / (1 + |m̃|)``, rounding for a real weight) and ``gap_sign_changes`` (most
    sign changes in one gap: at most one zero; such rows are NaN).  ``on_failure``:
    ``"raise"`` or ``"mark"`` (:mod:`equilibrium.verification`).
    """
    from equilibrium.verification import failure_policy, settle

    from .predict import GapZeros, _refine_sign_changes
    from .residual import outer_table

    failure_policy(on_failure)

    degrees = np.atleast_1d(np.asarray(degrees)).astype(np.int64)
    g = predictor.genus
    out = np.full((degrees.size, g), np.nan)
    worst_imag, most = 0.0, 0
    t = np.linspace(0.0, np.pi, points)[1:-1]
    w = predictor.phases(degrees)
    grids = []
    for j in range(g):
        lo, hi = predictor.g.support[j][1], predictor.g.support[j + 1][0]
        xs = lo + (hi - lo) * (1 - np.cos(t)) / 2
        grids.append((xs, outer_table(predictor.model, xs + _LIFT)))
    # blocks of degrees bound the memory (the grid values and the local parametrices of a block);
    # without given corrections each block gets its own, the first one carrying the checks
    jump = None
    if corrections is None and int(order) > 0:
        from .residual import jump_expansion
        jump = jump_expansion(predictor, int(order))
    cor = None
    for start in range(0, degrees.size, _GAP_BLOCK):
        sl = slice(start, start + _GAP_BLOCK)
        block = degrees[sl]
        if jump is not None:
            cb = _build(predictor, np.unique(block), int(order), jump, verify=start == 0)
        else:
            cb = _corrections_for(predictor, block, order, corrections)
        cor = cb if cor is None else cor
        for j, (xs, table) in enumerate(grids):
            phase = np.exp(1j * np.pi * w[sl, j])
            v = _outer_form_grid(predictor, xs, block, cb, table) * phase[:, None]
            worst_imag = max(worst_imag, float(np.max(np.abs(v.imag) / (1 + np.abs(v)))))
            r = v.real
            change = np.sign(r[:, :-1]) * np.sign(r[:, 1:]) < 0
            count = change.sum(axis=1)
            most = max(most, int(count.max(initial=0)))
            rows = np.nonzero(count == 1)[0]
            if rows.size == 0:
                continue
            idx = np.argmax(change[rows], axis=1)

            def f(x, active, rows=rows, block=block, phase=phase, cb=cb):
                sel = rows[active]
                return (outer_form(predictor, x, block[sel], order, corrections=cb) * phase[sel]).real

            out[start + rows, j] = _refine_sign_changes(f, xs[idx], xs[idx + 1], r[rows, idx], r[rows, idx + 1])
    checks = {"gap_realness": worst_imag, "gap_sign_changes": float(most)}
    verified, message = predictor._verdict(checks, f"gap zeros at order {order}")
    if cor is not None:
        checks, verified, message = cor.merged(checks, message)
    result = GapZeros(degrees, degrees.astype(float), out, verified, checks, message, order=int(order))
    return settle(result, on_failure)


def bulk_pieces(predictor, margin: float = 0.1) -> list[tuple[float, float]]:
    """The bulk of every band: ``[a + cut, b - cut]`` without ``(c - cut, c + cut)`` around each singular
    point ``c`` of the factor inside it, ``cut = margin · (b - a)`` (there the local parametrices, not
    the bulk form, describe the zeros)."""
    singular = [] if predictor.szego is None else [c for c, _ in predictor.szego.points]
    pieces = []
    for a, b in predictor.measure.support:
        cut = margin * (b - a)
        lo = a + cut
        for c in sorted(c for c in singular if a < c < b):
            if c - cut > lo:
                pieces.append((lo, min(c - cut, b - cut)))
            lo = max(lo, c + cut)
        if b - cut > lo:
            pieces.append((lo, b - cut))
    return pieces


def bulk_zeros(predictor, degree: int, order: int = 0, *, margin: float = 0.1,
               corrections: Corrections | None = None) -> np.ndarray:
    """Zeros of :func:`band_form` at ``order`` in the bulk of every band (:func:`bulk_pieces`), ascending.

    The form is sampled on a grid uniform in μ_V with about six points per expected spacing ``1/n``
    of the zeros, and each sign change is refined by the Illinois method to rounding.  The form has
    a relative error ``O(n^{-order-1})``, so these zeros are within ``O(n^{-order-2})`` of those of
    ``p_n`` (the quantile rule ``F(x_j) = (j - 1/2)/n`` is only ``O(1/n)``).
    """
    from .predict import _refine_sign_changes

    n = int(degree)
    cor = _corrections_for(predictor, [n], order, corrections)
    mu = predictor.measure
    found = []
    for lo, hi in bulk_pieces(predictor, margin):
        F_lo, F_hi = mu.distribution(np.array([lo, hi]))
        count = max(8, int(np.ceil(6 * n * (F_hi - F_lo))) + 2)
        x = np.concatenate([[lo], mu.quantile(np.linspace(F_lo, F_hi, count)[1:-1]), [hi]])
        f = band_form(predictor, x, n, order, corrections=cor)
        change = np.nonzero(np.sign(f[:-1]) * np.sign(f[1:]) < 0)[0]
        found.append(_refine_sign_changes(lambda t, _: band_form(predictor, t, n, order, corrections=cor),
                                          x[change], x[change + 1], f[change], f[change + 1]))
    return np.sort(np.concatenate(found)) if found else np.zeros(0)
