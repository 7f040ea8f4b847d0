"""g-function and outer parametrix: closed forms and jump relations."""

import json
import subprocess
import sys

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve
from equilibrium.errors import InputError
from gfunction import g_function, harmonic_phases, jump_residuals, model_problem, predictor


@pytest.fixture(scope="module")
def gaussian():
    return solve(Field.from_expression("x**2/2"), on=IntervalSet.real_line())


@pytest.fixture(scope="module")
def quartic():
    return solve(Field.from_expression("x**4/4 - t*x**2/2", {"t": 3.0}), on=IntervalSet.real_line())


def test_g_semicircle_closed_form(gaussian):
    # V = x²/2: G(z) = (z - (z²-4)^{1/2})/2, so g(z) = z²/4 - z s/4 + log((z+s)/2) - 1/2, s = (z²-4)^{1/2}
    # (Wigner semicircle; closed form by integrating G, "common practice"; ℓ = 1 from CONVENTIONS)
    gf = g_function(gaussian)
    z = np.array([0.3 + 0.2j, 1.9 + 0.01j, 5 + 5j, -2.2 + 0j, -1.5 - 0.4j, 40 - 3j])
    s = np.sqrt(z - 2) * np.sqrt(z + 2)
    exact = z ** 2 / 4 - z * s / 4 + np.log((z + s) / 2) - 0.5
    assert np.max(np.abs(gf(z) - exact)) < 1e-12
    assert max(gf.checks.values()) < 1e-12


def test_g_jumps_and_continuity(quartic):
    gf = g_function(quartic)
    # continuity of the two independent evaluations certifies ℓ and Ω (module docstring)
    assert gf.checks["continuity"] < 1e-11
    x = np.linspace(1.01, 2.2, 9)
    gp, gm = gf.boundary_values(x)
    assert np.max(np.abs(gp + gm - gf.V(x) + gf.lagrange)) < 1e-12
    gp, gm = gf.boundary_values(np.array([-0.5, 0.3]))
    assert np.max(np.abs(gp - gm - 2j * np.pi * 0.5)) < 1e-12     # Ω = 1/2 by symmetry
    assert np.max(np.abs(gf(np.array([1e3 + 1j])) - np.log(1e3 + 1j))) < 1e-5  # g = log z + O(1/z)


def test_soft_edge_variable(gaussian):
    # V = x²/2 at b = 2: φ = ∫_2^z (s²-4)^{1/2} ds, f'(2) = (c²/4)^{1/3} with c² = 4 -> 1 (DKMVZ 1999 §7)
    gf = g_function(gaussian)
    assert abs(gf.edges[1].derivative - 1.0) < 1e-14
    z = 2 + 1e-3 * np.exp(1j * np.linspace(0.1, 3, 5))
    f = gf.local_variable(1, z)
    assert np.max(np.abs((f / (z - 2)) - 1)) < 2e-3   # conformal, f ≈ (z-2)


@pytest.mark.parametrize("phase", [0.0, np.sqrt(2) - 1, np.pi - 3])
def test_genus_one_model_problem(phase):
    t = 3.0
    a, b = np.sqrt(t - 2), np.sqrt(t + 2)
    mp = model_problem([(-b, -0.7 * a), (a, b)])
    r = jump_residuals(mp, [phase])
    assert r["band_jump"] < 1e-12 and r["gap_jump"] < 1e-12 and r["det"] < 1e-12
    assert r["infinity"] < 1e-7      # Richardson estimate of M_1 vs the series


def test_genus_two_model_problem():
    mp = model_problem([(-3, -2.1), (-1, 0.5), (1.1, 2.9)])
    r = jump_residuals(mp, [np.sqrt(2) - 1, np.exp(1) - 2])
    assert r["band_jump"] < 1e-12 and r["gap_jump"] < 1e-12 and r["det"] < 1e-12


def test_one_band_limits():
    # a -> (b-a)/4, b -> (a+b)/2 (DKMVZ, Comm. Pure Appl. Math. 52 (1999) 1335-1425)
    mu = solve(Field.from_expression("x**4/4 + x/2"), on=IntervalSet.real_line())
    (lo, hi), = mu.support
    rec = predictor(mu).recurrence([100, 101])
    a, b = rec.a, rec.b
    assert np.max(np.abs(a - (hi - lo) / 4)) < 1e-13
    assert np.max(np.abs(b - (hi + lo) / 2)) < 1e-13


def test_bleher_its_quartic(quartic):
    # V = x⁴/4 - t x²/2, t = 3: a_n alternate (√(t+2) ± √(t-2))/2, b_n = 0
    # (Bleher and Its, Ann. of Math. 150 (1999) 185-266)
    t = 3.0
    p = predictor(quartic).predict(np.arange(100, 104))
    big, small = (np.sqrt(t + 2) + np.sqrt(t - 2)) / 2, (np.sqrt(t + 2) - np.sqrt(t - 2)) / 2
    assert np.max(np.abs(p.a - np.array([small, big, small, big]))) < 1e-10
    assert np.max(np.abs(p.b)) < 1e-10
    # odd degree: a zero at 0 in the gap (odd polynomial); counts add up to n
    assert np.isnan(p.gap_zeros[0, 0]) and abs(p.gap_zeros[1, 0]) < 1e-9
    assert [list(c) for c in p.band_counts] == [[50, 50], [50, 50], [51, 51], [51, 51]]


def test_harmonic_phases_symmetric():
    # symmetric two bands: harmonic measure 1/2 on each (symmetry)
    assert abs(harmonic_phases([(-2, -1), (1, 2)])[0] - 0.5) < 1e-13


def test_cli_json_and_errors():
    out = subprocess.run([sys.executable, "-m", "workbench", "predict", "--potential", "x**4/4 - t*x**2/2",
                          "--param", "t=3", "--degrees", "10:13", "--json"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["degrees"] == [10, 11, 12] and len(data["gap_zeros"][0]) == 1
    assert all(sum(c) + sum(z is not None for z in g) == d
               for c, g, d in zip(data["band_counts"], data["gap_zeros"], data["degrees"]))
    bad = subprocess.run([sys.executable, "-m", "workbench", "predict", "--potential", "x**2",
                          "--degrees", "9:3"], capture_output=True, text=True)
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1


def test_gap_abel_interpolant_and_gap_zeros_of_the_fast_path():
    # three bands, irrational phases: the Chebyshev interpolant of the Abel map on each gap
    # against the direct map, and each predicted gap zero is a zero of the theta numerator
    # θ(u + d + W) evaluated directly by riemann_theta (Riemann vanishing, DKMVZ 1999 §4)
    from gfunction.outer import gap_abel_map
    from gfunction.theta import riemann_theta_scaled
    mu = solve(Field.from_expression("x**6/6 - 1.5*x**4 + 3.3*x**2 + 0.3*x"), on=IntervalSet.real_line())
    pred = predictor(mu)
    mp = pred.model
    t = np.linspace(0.05, np.pi - 0.05, 37)
    for j in range(2):
        ga = gap_abel_map(mp, j)
        assert ga.coefficients is not None and ga.error < 1e-14
        assert np.max(np.abs(ga(t) - mp.abel(ga.x(t) + 1e-300j))) < 1e-13
    degrees = np.arange(500, 540)
    p = pred.predict(degrees)
    W = mp.W(pred.phases(degrees))
    found = 0
    for i, row in enumerate(p.gap_zeros):
        for j, x in enumerate(row):
            if np.isnan(x):
                continue
            found += 1
            u = mp.abel(np.array([x + 1e-300j]))
            zero, _ = riemann_theta_scaled(u + mp.d + W[i], mp.tau)
            ref, _ = riemann_theta_scaled(u + mp.d, mp.tau)
            assert abs(zero[0]) < 1e-11 * abs(ref[0])
    assert found > 10
    assert all(sum(c) + np.isfinite(g).sum() == d
               for c, g, d in zip(p.band_counts, p.gap_zeros, degrees))
    assert p.verified and p.message == ""
    assert p.checks["count_rounding"] < 1e-6 and p.checks["gap_realness"] < 1e-12


def test_prediction_results_raise_or_mark(quartic, monkeypatch):
    # every prediction is a result object with verified, float-only checks and a message;
    # a tolerance below the figure (here: the realness of M_11 e^{iπw}, ~1e-16) makes it fail
    import gfunction.predict as predict_module
    from equilibrium.errors import NumericalFailure

    pred = predictor(quartic)
    degrees = np.arange(100, 106)
    parts = (pred.recurrence(degrees), pred.gap_zeros(degrees), pred.band_counts(degrees),
             pred.predict(degrees), pred.soft_edge_zeros(3, 200, 3))
    for part in parts:
        assert part.verified and part.message == ""
        assert part.checks and all(type(v) is float for v in part.checks.values())
    assert parts[1].zeros.shape == (6, 1) and parts[2].counts.shape == (6, 2)
    assert parts[3].checks == {**parts[0].checks, **parts[1].checks, **parts[2].checks}
    assert parts[1].checks["gap_realness"] > 0
    monkeypatch.setitem(predict_module.TOLERANCES, "gap_realness", 0.0)
    marked = pred.gap_zeros(degrees, on_failure="mark")
    assert not marked.verified and "gap_realness" in marked.message
    assert np.array_equal(marked.zeros, parts[1].zeros, equal_nan=True)   # the numbers are kept
    whole = pred.predict(degrees, on_failure="mark")
    assert not whole.verified and "gap_realness" in whole.message
    with pytest.raises(NumericalFailure, match="gap_realness"):
        pred.gap_zeros(degrees)
    with pytest.raises(InputError, match="on_failure"):
        pred.recurrence(degrees, on_failure="ignore")


def test_prediction_results_of_one_band(gaussian):
    # genus 0: no gaps, every zero in the band; a -> (b-a)/4 = 1, b -> 0 on the semicircle
    # support [-2, 2] of V = x²/2 (DKMVZ, Comm. Pure Appl. Math. 52 (1999) 1335-1425)
    p = predictor(gaussian).predict([10, 11])
    assert p.verified and p.gap_zeros.shape == (2, 0) and p.band_counts.tolist() == [[10], [11]]
    assert np.max(np.abs(p.a - 1)) < 1e-13 and np.max(np.abs(p.b)) < 1e-13


def test_lattice_decomposition_recovers_integer_coordinates():
    """Z = p + τ q with integer p, q (genus 2, τ with positive definite imaginary part) plus a
    perturbation of 1e-9: the integers come back and the rounding is the perturbation's size."""
    from gfunction.outer import LatticePoint, lattice_decomposition

    tau = np.array([[0.2 + 1.3j, -0.4 + 0.35j], [-0.4 + 0.35j, 0.7 + 0.9j]])
    p, q = np.array([3, -2]), np.array([-1, 4])
    point = lattice_decomposition(p + tau @ q, tau)
    assert isinstance(point, LatticePoint)
    assert np.array_equal(point.p, p) and np.array_equal(point.q, q) and point.rounding < 1e-14
    shifted = lattice_decomposition(p + tau @ q + np.array([1e-9, -2e-9]), tau)
    assert np.array_equal(shifted.q, q) and 0.9e-9 < shifted.rounding < 2.1e-9
