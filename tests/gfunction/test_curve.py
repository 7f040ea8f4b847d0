"""Tests of gfunction.curve (and its graded Gauss–Jacobi rules, equilibrium.quadrature) against elliptic integrals, mpmath and theory."""

from __future__ import annotations

import itertools

import mpmath
import numpy as np
import pytest
from scipy.special import ellipk, ellipkm1

from equilibrium.errors import InputError
from gfunction.curve import curve_of_bands, _interval_integrals
from equilibrium.quadrature import graded_jacobi_rule
from gfunction.theta import riemann_theta


def random_bands(k: int, rng: np.random.Generator) -> list[tuple[float, float]]:
    pts = np.sort(rng.uniform(-5, 5, 2 * k))
    return [(pts[2 * j], pts[2 * j + 1]) for j in range(k)]


def mp_interval(e, m: int, l: int, dps: int = 30, levels: int = 30):
    """∫_{e_m}^{e_{m+1}} x^l |R(x)|^{-1/2} dx by mpmath.quad after x = e_m + L(1 - cos θ)/2.

    The substitution removes both end singularities; geometric breakpoints near θ = 0, π resolve
    a nearby branch point (tiny neighbouring gap or band).
    """
    with mpmath.workdps(dps):
        E = [mpmath.mpf(float(x)) for x in e]
        lo, hi = E[m], E[m + 1]
        L = hi - lo
        others = E[:m] + E[m + 2:]

        def f(th):
            x = lo + L * (1 - mpmath.cos(th)) / 2
            return x ** l / mpmath.sqrt(mpmath.fprod([abs(x - q) for q in others]))

        pi = mpmath.pi
        pts = ([0] + [pi * mpmath.mpf(2) ** -j for j in range(levels, 1, -1)] + [pi / 2]
               + [pi - pi * mpmath.mpf(2) ** -j for j in range(2, levels + 1)] + [pi])
        return mpmath.quad(f, pts)


# --- quadrature rule -------------------------------------------------------------------------

def test_graded_rule_against_closed_forms():
    # ∫_0^1 (1-x)^{-1/2} x^{-1/2} dx = π (Beta(1/2,1/2)); ∫_0^1 x^{-1/2} (x + d)^{-1/2} (1-x)^{-1/2} dx
    # against mpmath.quad; grading must keep full accuracy down to d = 1e-12.
    x, w = graded_jacobi_rule(0.0, 1.0, -0.5, -0.5)
    assert abs(w.sum() - np.pi) < 1e-14
    # Gauss–Jacobi exactness: moments ∫_0^1 x^p (1-x)^α x^β dx = B(p+β+1, α+1) (Euler Beta integral,
    # DLMF 5.12.1) for p ≤ 2n-1, for asymmetric and hard-edge-type exponents
    for alpha, beta in [(0.0, -0.5), (-0.5, 0.0), (-0.3, -0.7), (0.5, 1.5), (1.0, -0.5)]:
        x, w = graded_jacobi_rule(0.0, 1.0, alpha, beta, n=12)
        for p in range(24):
            ref = float(mpmath.beta(p + beta + 1, alpha + 1))
            assert abs(w @ x ** p - ref) < 5e-15, (alpha, beta, p)
    for d in (1e-2, 1e-6, 1e-12):
        x, w, da, db = graded_jacobi_rule(0.0, 1.0, -0.5, -0.5, near=[-d], return_distances=True)
        got = w @ (da + d) ** -0.5
        with mpmath.workdps(30):
            ref = mpmath.quad(lambda t: 1 / mpmath.sqrt((1 - mpmath.cos(t)) / 2 + d),
                              [0] + [mpmath.pi * mpmath.mpf(2) ** -j for j in range(45, 0, -1)] + [mpmath.pi])
        assert abs(got - float(ref)) < 1e-14 * float(ref)
    with pytest.raises(InputError):
        graded_jacobi_rule(1.0, 0.0, 0.0, 0.0)
    with pytest.raises(InputError):
        graded_jacobi_rule(0.0, 1.0, 0.0, 0.0, near=[0.5])


# --- genus 1: complete elliptic integrals -----------------------------------------------------

@pytest.mark.parametrize("bands", [[(-2.0, -0.5), (0.3, 1.7)], [(0.0, 1.0), (1.0 + 1e-8, 2.0)],
                                   [(0.0, 1e-8), (1.0, 3.0)], [(-1.0, 0.0), (5.0, 5.0 + 1e-7)]])
def test_genus_one_periods_are_complete_elliptic_integrals(bands):
    # Four real roots d < c < b < a (d, c, b, a = a1, b1, a2, b2):
    #   ∫_c^b dx/|R|^{1/2} = 2K(k)/sqrt((a-c)(b-d)),   k² = (b-c)(a-d)/((a-c)(b-d))   (gap)
    #   ∫_b^a dx/|R|^{1/2} = ∫_d^c dx/|R|^{1/2} = 2K(k')/sqrt((a-c)(b-d)), k'² = 1 - k²  (bands)
    # Byrd & Friedman, Handbook of Elliptic Integrals (1971), 254.00 and 256.00 (formula numbers from
    # memory; the values are also confirmed by mpmath.quad below).  K from scipy.special.ellipk/ellipkm1.
    (a1, b1), (a2, b2) = bands
    c = curve_of_bands(bands)
    pre = 2.0 / np.sqrt((b2 - b1) * (a2 - a1))
    k2 = (a2 - b1) * (b2 - a1) / ((b2 - b1) * (a2 - a1))
    kp2 = (b2 - a2) * (b1 - a1) / ((b2 - b1) * (a2 - a1))       # = 1 - k², without cancellation
    K_gap = ellipk(k2) if k2 < 0.5 else ellipkm1(kp2)
    K_band = ellipk(kp2) if kp2 < 0.5 else ellipkm1(k2)
    gap, band = pre * K_gap, pre * K_band
    J = _interval_integrals(c.branch_points, 30, 1)[:, 0]
    assert abs(J[1] - gap) < 2e-15 * gap
    assert abs(J[2] - band) < 2e-15 * band
    assert abs(J[0] - band) < 2e-15 * band
    # A-period 2i∫_{band 2}, B-period -2∫_{gap} (module docstring), τ = i K(k)/K(k')
    assert abs(c.a_periods_raw[0, 0] - 2j * band) < 2e-15 * band
    assert abs(c.b_periods_raw[0, 0] + 2 * gap) < 2e-15 * gap
    assert abs(c.tau[0, 0] - 1j * K_gap / K_band) < 3e-15 * abs(c.tau[0, 0])
    # independent referee: mpmath at 30 digits
    assert abs(J[1] - float(mp_interval(c.branch_points, 1, 0))) < 2e-15 * gap


# --- period matrices in genus 2..6 -------------------------------------------------------------

@pytest.mark.parametrize("k", [3, 4, 5, 6, 7])
def test_period_matrix_is_a_riemann_matrix(k):
    # Riemann bilinear relations (Farkas & Kra, Riemann Surfaces, III.2.8): τ symmetric, Im τ > 0.
    rng = np.random.default_rng(100 + k)
    for _ in range(3):
        c = curve_of_bands(random_bands(k, rng))
        assert c.genus == k - 1
        assert c.checks["tau_symmetry"] < 1e-13 * max(1, np.abs(c.tau).max())
        assert c.checks["im_tau_min_eigenvalue"] > 0
        assert c.checks["a_normalisation_residual"] < 1e-12
        assert c.checks["band_sum_residual"] < 1e-13
        assert c.checks["quadrature_agreement"] < 1e-12 * max(1, np.abs(c.tau).max())
        assert np.all(c.tau.real == 0)


@pytest.mark.parametrize("bands", [[(-3, -2), (-1, 0.5), (1, 2)],
                                   [(-3, -2), (-1, 0.5), (1, 2), (2.5, 4)],
                                   [(-2, -1), (0, 0.5)]])
def test_bilinear_relation_with_a_third_kind_differential(bands):
    # Riemann bilinear relation for holomorphic ω_j and ν = z^g dz/R^{1/2} (simple poles at ∞_1, ∞_2,
    # residues -1, +1): Σ_k [A_k(ω_j) B_k(ν) - B_k(ω_j) A_k(ν)] = 2πi Σ_P res_P(ν) ∫^P ω_j
    # (Farkas & Kra III.3; Springer, Introduction to Riemann Surfaces, 1957, §10-3).  With our
    # orientation it reads B_j(ν) - Σ_k τ_jk A_k(ν) = -4πi A_j(∞_1): it ties the periods to the
    # independent quadrature of the Abel map out to infinity.
    c = curve_of_bands(bands)
    g, k = c.genus, c.genus + 1
    J = _interval_integrals(c.branch_points, 30, g + 1)[:, g]
    sb = np.array([(-1.0) ** (k - j) for j in range(1, k + 1)])
    sg = np.array([(-1.0) ** (k - m) for m in range(1, k)])
    A_nu = 2j * sb[1:] * J[2::2]
    B_nu = 2 * np.cumsum(sg * J[1::2])
    lhs = B_nu - c.tau @ A_nu
    assert np.allclose(lhs, -4j * np.pi * c.abel_infinity(), rtol=0, atol=1e-12 * np.abs(lhs).max())
    assert c.checks["infinity_paths_agreement"] < 1e-12


def test_genus_two_mpmath_referee_and_tiny_gap():
    # mpmath.quad at 30 digits of every band/gap integral, for a regular configuration and for one
    # with a gap of 1e-8 of the hull and one with a band of 1e-8 (periods must stay accurate).
    for bands in ([(-2.0, -1.0), (-0.3, 0.4), (1.1, 2.5)],
                  [(0.0, 1.0), (1.0 + 4e-8, 2.0), (3.0, 4.0)],
                  [(0.0, 1.0), (2.0, 2.0 + 4e-8), (3.0, 4.0)]):
        c = curve_of_bands(bands)
        J = _interval_integrals(c.branch_points, 30, 2)
        for m in range(J.shape[0]):
            for l in range(2):
                # θ-scale of a neighbour at distance 4e-8 is ~2e-4 ≈ π 2^-14: 18 levels suffice
                ref = float(mp_interval(c.branch_points, m, l, dps=22, levels=18))
                assert abs(J[m, l] - ref) < 3e-15 * abs(ref), (bands, m, l)
        assert c.checks["quadrature_agreement"] < 1e-13 * np.abs(c.tau).max()


# --- Abel map ----------------------------------------------------------------------------------

def mp_abel_upper(c, z, dps=25):
    """A(z) by mpmath: from a_1 straight up to a_1 + iH, across to Re z + iH, down to z (Im z > 0).

    An independent path in the upper half plane (the convention's values there are path independent).
    """
    e = [mpmath.mpf(float(x)) for x in c.branch_points]
    C = [[mpmath.mpc(complex(v)) for v in row] for row in c.normalisation]
    g = c.genus
    with mpmath.workdps(dps):
        def omega(t, j):
            r = mpmath.mpf(1)
            for a in e:
                r *= mpmath.sqrt(t - a)
            return sum(C[j][l] * t ** l for l in range(g)) / r
        H = mpmath.mpf(2)
        z = mpmath.mpc(z)
        p0, p1, p2 = e[0], e[0] + 1j * H, z.real + 1j * H
        out = []
        for j in range(g):
            v = mpmath.quad(lambda s: omega(p0 + 1j * s, j) * 1j, [0, H])
            v += mpmath.quad(lambda s: omega(p1 + s, j), [0, p2.real - p1.real])
            v += mpmath.quad(lambda s: omega(p2 - 1j * s, j) * (-1j), [0, H - z.imag])
            out.append(complex(v))
    return np.array(out)


def test_abel_map_against_mpmath_paths():
    c = curve_of_bands([(-2.0, -1.0), (-0.3, 0.4), (1.1, 2.5)])
    zs = [0.1 + 0.7j, -1.6 + 0.05j, 2.4 + 1.3j, -3.0 + 0.4j, 0.75 + 1e-3j]
    got = c.abel(np.array(zs))
    for z, a in zip(zs, got):
        ref = mp_abel_upper(c, z)
        assert np.allclose(a, ref, rtol=0, atol=2e-13), (z, a - ref)
    # mirror symmetry A(z̄) = -conj A(z) (real bands: ω(z̄) = -conj ω(z))
    assert np.allclose(c.abel(np.conj(zs)), -np.conj(got), atol=1e-15)


def lattice_residual(c, v):
    """Distance of v (..., g) from the lattice Z^g + τZ^g (coordinates rounded)."""
    Y = c.tau.imag
    n = np.linalg.solve(Y, v.imag.T).T
    m = v.real - n @ c.tau.real.T
    return np.abs(v - np.rint(m) - np.rint(n) @ c.tau.T).max()


def test_abel_map_at_branch_points_and_infinity():
    c = curve_of_bands([(-3, -2), (-1, 0.5), (1, 2), (2.5, 4)])
    g = c.genus
    e = c.branch_points
    assert np.all(c.abel(e[0]) == 0)
    # branch points are half periods: 2A(e) in the lattice (table in the module docstring)
    assert lattice_residual(c, 2 * c.abel(e)) < 1e-13
    # approaching a branch point from a generic direction (segment quadrature) reproduces the table
    # (A(e + δ) - A(e) = O(|δ|^{1/2}), so δ = 1e-24 puts the difference near 1e-12)
    for j, x in enumerate(e):
        approach = c.abel(np.array([x + 1e-24 * (1 + 1j), x - 1e-24 * (1 - 1j)]))
        assert np.allclose(approach, c.half_periods_at_branch_points[j], atol=1e-10)
    # continuation across the switch of nearest branch point (midpoints of bands and gaps)
    # (the two sides start from different branch points; their difference is ω·Δz to first order)
    mids = 0.5 * (e[:-1] + e[1:]) + 0.2j
    left, right = c.abel(mids - 1e-9), c.abel(mids + 1e-9)
    slope = c.holomorphic_differentials(mids) * 2e-9
    assert np.abs(right - left - slope).max() < 1e-14
    # A(z) -> A(∞_1) at rate O(1/z), from any direction (sheet 1 has a single point at infinity)
    far = c.abel(np.array([1e8, -1e8, 1e8j, -1e8j, 1e8 * np.exp(0.7j)]))
    assert np.abs(far - c.abel_infinity()).max() < 1e-7
    assert np.allclose(c.abel_infinity(2), -c.abel_infinity(1))
    assert c.abel(np.zeros((2, 3))).shape == (2, 3, g)


def test_sheet_two_is_minus_sheet_one_modulo_the_lattice():
    # Continue across band j: from a_1 along the upper shore to x in band j, then through the cut into
    # the lower half plane of sheet 2 (where the differential is -ω of sheet 1) to w.  The endpoint
    # value must agree with abel(w, sheet=2) = -A(w) up to a lattice vector.  The piece x -> w is
    # integrated by mpmath (independent of the module's segment quadrature).
    c = curve_of_bands([(-2.0, -1.0), (-0.3, 0.4), (1.1, 2.5)])
    e = [mpmath.mpf(float(v)) for v in c.branch_points]
    C = c.normalisation
    for x, w in [(0.1, 0.2 - 0.6j), (-1.5, -1.2 - 0.3j), (2.0, 0.0 - 1.0j)]:
        Ax = c.abel(x + 0j)                  # upper boundary value on the band
        def omega(t, j):
            r = mpmath.mpf(1)
            for a in e:
                r *= mpmath.sqrt(t - a)
            return sum(complex(C[j, l]) * t ** l for l in range(c.genus)) / r
        piece = np.array([complex(mpmath.quad(lambda s: -omega(x + s * (w - x), j) * (w - x), [0, 1]))
                          for j in range(c.genus)])
        val = Ax + piece
        assert lattice_residual(c, val - c.abel(w, sheet=2)) < 1e-12


# --- Riemann constant ----------------------------------------------------------------------------

@pytest.mark.parametrize("bands", [[(-2, -1), (0, 0.5)], [(-3, -2), (-1, 0.5), (1, 2)],
                                   [(-3, -2), (-1, 0.5), (1, 2), (2.5, 4)]])
def test_riemann_constant_theta_divisor(bands):
    # Riemann's vanishing theorem (Farkas & Kra VI.3.3): for generic D = P_1 + ... + P_g the function
    # P -> θ(A(P) - A(D) - K) vanishes exactly at P_1..P_g (not identically).
    c = curve_of_bands(bands)
    g = c.genus
    K = c.riemann_constant
    assert lattice_residual(c, 2 * K) < 1e-13            # K is a half period
    rng = np.random.default_rng(g)
    for _ in range(3):
        P = rng.uniform(-3, 4, g) + 1j * rng.uniform(-1.5, 1.5, g)
        AD = c.abel(P).sum(axis=0)
        at_D = riemann_theta(c.abel(P) - AD - K, c.tau).oscillatory
        Q = rng.uniform(-3, 4, 4) + 1j * rng.uniform(-1.5, 1.5, 4)
        elsewhere = riemann_theta(c.abel(Q) - AD - K, c.tau).oscillatory
        assert np.abs(at_D).max() < 1e-12
        assert np.abs(elsewhere).min() > 1e-4
    # among all 2^{2g} half periods only K has θ(A(Q_1)+...+A(Q_{g-1}) + h) ≡ 0
    Qs = rng.uniform(-3, 4, (4, g - 1)) + 1j * rng.uniform(0.1, 1.5, (4, g - 1))
    AQ = c.abel(Qs).sum(axis=1) if g > 1 else np.zeros((4, 1))
    vanishing = []
    for eps in itertools.product([0, 1], repeat=2 * g):
        h = 0.5 * np.array(eps[:g]) + 0.5 * c.tau @ np.array(eps[g:])
        if np.abs(riemann_theta(AQ + h, c.tau).oscillatory).max() < 1e-10:
            vanishing.append(h)
    assert len(vanishing) == 1
    assert lattice_residual(c, vanishing[0] - K) < 1e-12


# --- errors --------------------------------------------------------------------------------------

def test_bad_bands_are_refused():
    for bad in ([(0, 1)], [(0, 1), (0.5, 2)], [(1, 0), (2, 3)], [(0, 1), (np.inf, 3)], [[0, 1, 2]], "x"):
        with pytest.raises(InputError):
            curve_of_bands(bad)
    c = curve_of_bands([(0, 1), (2, 3)])
    with pytest.raises(InputError):
        c.abel(1.0, sheet=3)
    with pytest.raises(InputError):
        c.abel(np.inf)
