"""The gap zeros' root finding: brackets tightened from the grid, stopped at 4 ulps of x."""

from __future__ import annotations

import numpy as np

import gfunction.predict as predict_module
from equilibrium import Field, solve
from gfunction import predictor
from gfunction.predict import _refine_sign_changes, _tightened


def test_tightened_brackets_hold_the_roots():
    # f(t) = cos t - c on the gap grid: its root arccos c is known (numpy's arccos, correctly
    # rounded to ~1 ulp); the brackets must hold it and the refinement must land on it
    grid = predict_module._GAP_GRID
    c = np.array([0.9, 0.3, 0.05, -0.45, -0.999])   # roots off the grid points
    roots = np.arccos(c)
    values = np.cos(grid)[None, :] - c[:, None]
    cells = np.argmax(np.sign(values[:, :-1]) * np.sign(values[:, 1:]) < 0, axis=1)
    rows = np.arange(c.size)

    def f(t, sel):
        return np.cos(t) - c[sel]

    tl, tr = grid[cells], grid[cells + 1]
    l2, r2, fl2, fr2 = _tightened(f, grid, values, cells, tl, tr, values[rows, cells], values[rows, cells + 1])
    assert np.all((l2 <= roots) & (roots <= r2))
    assert np.all((tl <= l2) & (r2 <= tr))
    # 8x the distance of the cubic from the quadratic estimate: O(h³) of a cell of width h = π/160;
    # not for the last root, next to t = π where f' = -sin t nearly vanishes (the inverse is steep)
    assert np.all((r2 - l2)[:4] < 2e-3 * (tr - tl)[:4])
    assert np.all(np.sign(fl2) != np.sign(fr2))
    found = _refine_sign_changes(f, l2, r2, fl2, fr2)
    np.testing.assert_allclose(found, roots, rtol=4e-15, atol=0)


def test_non_monotone_rows_keep_their_cells():
    grid = np.linspace(0.0, 1.0, 9)
    values = np.array([[1.0, 2.0, 1.0, -1.0, -2.0, -3.0, -4.0, -5.0, -6.0]])   # not monotone around cell 2
    f = lambda t, sel: np.interp(t, grid, values[0])
    out = _tightened(f, grid, values, np.array([2]), grid[[2]], grid[[3]], values[0, [2]], values[0, [3]])
    assert out[0][0] == grid[2] and out[1][0] == grid[3]


def test_gap_zeros_as_with_plain_illinois_steps(monkeypatch):
    # the tightened start and the stop at 4 ulps of x give the zeros of plain Illinois steps from the
    # grid cells stopped at 4 ulps of the angle, to the rounding noise of M_11 on the gaps (a few
    # ulps of the gap's x; the gap around 0 holds zeros near 0, so the bound is absolute)
    field = Field.from_expression("x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x")     # three bands
    degrees = np.arange(200, 400)
    fast = predictor(solve(field)).predict(degrees)
    plain = predict_module._refine_sign_changes
    monkeypatch.setattr(predict_module, "_tightened", lambda f, g, v, c, *bracket: bracket)
    monkeypatch.setattr(predict_module, "_refine_sign_changes",
                        lambda *a, coordinate=None, **k: plain(*a, **k))
    slow = predictor(solve(field)).predict(degrees)
    assert fast.verified and slow.verified
    np.testing.assert_array_equal(np.isnan(fast.gap_zeros), np.isnan(slow.gap_zeros))
    np.testing.assert_allclose(fast.gap_zeros, slow.gap_zeros, rtol=0, atol=1e-14)
    np.testing.assert_array_equal(fast.band_counts, slow.band_counts)
