"""Tests of gfunction.theta against outside references (mpmath, DLMF identities, brute-force sums).

DLMF sections are §21.2 (definitions) and §21.3 (quasi-periodicity); equation numbers are from memory.
"""

from __future__ import annotations

import itertools

import mpmath
import numpy as np
import pytest

from equilibrium.errors import InputError, NumericalFailure
from gfunction.theta import riemann_theta, riemann_theta_scaled, theta_gradient


def random_riemann_matrix(g: int, rng: np.random.Generator, lift: float = 0.4) -> np.ndarray:
    """Symmetric τ with Im τ = AAᵀ + lift·I (positive definite)."""
    A = rng.normal(size=(g, g))
    X = rng.normal(size=(g, g))
    return 0.5 * (X + X.T) + 1j * (A @ A.T + lift * np.eye(g))


def brute_force(u: np.ndarray, tau: np.ndarray, box: int, alpha=None, beta=None):
    """Direct sum of the DLMF §21.2 series over the box |m_j| ≤ box."""
    g = tau.shape[0]
    m = np.array(list(itertools.product(range(-box, box + 1), repeat=g)), float)
    if alpha is not None:
        m = m + alpha
        u = u + beta
    e = np.exp(1j * np.pi * np.einsum("ni,ij,nj->n", m, tau, m)[None, :] + 2j * np.pi * u @ m.T)
    return e.sum(axis=1), 2j * np.pi * e @ m


# --- genus 1 against mpmath ----------------------------------------------------------------

@pytest.mark.parametrize("tau", [0.3 + 1.1j, -0.45 + 0.35j, 0.1 + 3.0j])
def test_genus_one_matches_mpmath_jtheta(tau):
    # Source: mpmath.jtheta; θ(u|τ) = ϑ_3(πu, q) with q = e^{πiτ} (DLMF 21.2.1 with g = 1, and 20.2.3).
    rng = np.random.default_rng(0)
    u = rng.uniform(-1, 1, 12) + 1j * rng.uniform(-1.5, 1.5, 12)
    got = riemann_theta(u, tau)
    mpmath.mp.dps = 30
    q = mpmath.exp(1j * mpmath.pi * tau)
    ref = np.array([complex(mpmath.jtheta(3, mpmath.pi * mpmath.mpc(x), q)) for x in u])
    scale = np.exp(got.exponent)
    assert np.all(np.abs(got.value - ref) <= 5e-14 * scale + 2 * got.truncation_bound * scale)
    # derivative: d/du ϑ_3(πu, q) = π ϑ_3'(πu, q) (mpmath.jtheta with derivative=1)
    grad = riemann_theta(u, tau, gradient=True).gradient[:, 0]
    dref = np.array([complex(mpmath.pi * mpmath.jtheta(3, mpmath.pi * mpmath.mpc(x), q, 1)) for x in u])
    assert np.all(np.abs(grad - dref) <= 1e-12 * (1 + np.abs(u.imag)) * scale * 2 * np.pi)


def test_scaled_form_never_overflows():
    # θ(u + Nτ) = exp(-πi N²τ - 2πi N u) θ(u) (DLMF §21.3, iterated); at N = 400 θ itself overflows.
    tau = 0.2 + 0.9j
    u = np.array([0.13 + 0.05j, -0.31 + 0.2j])
    N = 400
    osc, expo = riemann_theta_scaled(u + N * tau, tau)
    osc0, expo0 = riemann_theta_scaled(u, tau)
    log_lhs = np.log(osc) + expo
    log_rhs = -1j * np.pi * N * N * tau - 2j * np.pi * N * u + np.log(osc0) + expo0
    assert np.isfinite(osc).all() and np.all(expo > 800)
    # compare modulus and phase of the logarithms (phase mod 2π)
    assert np.all(np.abs(log_lhs.real - log_rhs.real) < 1e-9 * np.abs(log_rhs.real))
    dphase = np.angle(np.exp(1j * (log_lhs.imag - log_rhs.imag)))
    assert np.all(np.abs(dphase) < 1e-9)


# --- quasi-periodicity and brute force in genus 2, 3 -----------------------------------------

@pytest.mark.parametrize("g", [2, 3])
def test_quasi_periodicity(g):
    # DLMF §21.3 (quasi-periodicity): θ(u + e_j) = θ(u), θ(u + τe_j) = exp(-πiτ_jj - 2πiu_j) θ(u).
    rng = np.random.default_rng(10 + g)
    tau = random_riemann_matrix(g, rng)
    u = rng.normal(size=(20, g)) + 0.5j * rng.normal(size=(20, g))
    base = riemann_theta(u, tau)
    for j in range(g):
        ej = np.eye(g)[j]
        shifted = riemann_theta(u + ej, tau)
        assert np.allclose(shifted.value, base.value, rtol=0, atol=1e-13 * np.exp(base.exponent).max())
        moved = riemann_theta(u + tau @ ej, tau)
        factor = np.exp(-1j * np.pi * tau[j, j] - 2j * np.pi * u[:, j])
        expected = factor * base.value
        assert np.all(np.abs(moved.value - expected) <= 1e-12 * np.abs(factor) * np.exp(base.exponent))


@pytest.mark.parametrize("g", [2, 3])
def test_against_brute_force_sum_and_bound(g):
    # Reference: the series of DLMF 21.2.1 summed over a box far larger than the ellipsoid.
    rng = np.random.default_rng(20 + g)
    tau = random_riemann_matrix(g, rng, lift=0.6)
    u = rng.normal(size=(15, g)) + 0.4j * rng.normal(size=(15, g))
    ref, dref = brute_force(u, tau, box=14 if g == 2 else 10)
    for tol in (1e-4, 1e-8, 1e-14):
        got = riemann_theta(u, tau, tol=tol, gradient=True)
        scale = np.exp(got.exponent)
        err = np.abs(got.value - ref) / scale
        # the guaranteed bound (DHBvHS 2004, Theorem 2) holds, up to rounding
        assert np.all(err <= got.truncation_bound + 1e-14), (tol, err.max(), got.truncation_bound)
        assert got.truncation_bound <= tol
        gerr = np.abs(got.gradient - dref) / scale[:, None]
        assert np.all(gerr <= got.gradient_truncation_bound + 1e-12)
    # the fine sum is accurate to rounding
    assert np.max(err) < 1e-13


def test_bound_is_not_vacuous_for_a_coarse_tolerance():
    # A coarse tolerance really drops terms: the error is non-zero but below the bound.
    rng = np.random.default_rng(5)
    tau = random_riemann_matrix(2, rng, lift=0.2)
    u = rng.normal(size=(30, 2))
    ref, _ = brute_force(u, tau, box=16)
    got = riemann_theta(u, tau, tol=1e-3)
    err = np.abs(got.value - ref)
    assert err.max() > 0 and err.max() <= got.truncation_bound
    assert got.lattice_points < riemann_theta(u, tau, tol=1e-14).lattice_points


def test_characteristics_match_definition():
    # DLMF 21.2.5: θ[α;β](u|τ) = Σ exp(πi(m+α)ᵀτ(m+α) + 2πi(m+α)ᵀ(u+β)), summed directly.
    rng = np.random.default_rng(7)
    tau = random_riemann_matrix(2, rng)
    u = rng.normal(size=(10, 2)) + 0.3j * rng.normal(size=(10, 2))
    alpha, beta = np.array([0.5, 0.0]), np.array([0.5, 0.5])
    ref, dref = brute_force(u, tau, 14, alpha, beta)
    got = riemann_theta(u, tau, gradient=True, characteristic=(alpha, beta))
    assert np.allclose(got.value, ref, rtol=0, atol=1e-12 * np.abs(ref).max())
    assert np.allclose(got.gradient, dref, rtol=0, atol=1e-11 * np.abs(dref).max())
    # a half-integer characteristic with 4αᵀβ odd gives an odd function, zero at u = 0
    # (parity of theta characteristics, DLMF §21.2 / common practice); 4αᵀβ even gives non-zero
    odd = riemann_theta(np.zeros(2), tau, characteristic=([0.5, 0.0], [0.5, 0.0])).value
    even = riemann_theta(np.zeros(2), tau, characteristic=([0.5, 0.5], [0.5, 0.5])).value
    assert abs(odd) < 1e-14 and abs(even) > 0.1


# --- derivatives ------------------------------------------------------------------------------

@pytest.mark.parametrize("g", [2, 3])
def test_gradient_against_finite_differences(g):
    rng = np.random.default_rng(30 + g)
    tau = random_riemann_matrix(g, rng)
    u = rng.normal(size=(6, g)) + 0.3j * rng.normal(size=(6, g))
    grad = theta_gradient(u, tau)
    h = 1e-5
    for j in range(g):
        ej = np.eye(g)[j] * h
        fd = (riemann_theta(u + ej, tau).value - riemann_theta(u - ej, tau).value) / (2 * h)
        assert np.allclose(grad[:, j], fd, rtol=1e-7, atol=1e-7 * np.abs(fd).max())


@pytest.mark.parametrize("g", [2, 3])
def test_heat_equation(g):
    # Heat equation: 4πi ∂θ/∂τ_jj = ∂²θ/∂u_j², and for j ≠ k (τ_jk = τ_kj moved together)
    # 2πi ∂θ/∂τ_jk = ∂²θ/∂u_j∂u_k.  It follows termwise from the series DLMF 21.2.1; the one-variable
    # case is DLMF 20.13.1.  (The brief pointed to DLMF §21.4; from memory that section holds
    # graphics, so the section is not cited here.)  τ-derivatives by central differences.
    rng = np.random.default_rng(40 + g)
    tau = random_riemann_matrix(g, rng)
    u = rng.normal(size=(5, g)) + 0.2j * rng.normal(size=(5, g))
    h = 1e-4
    for j, k in [(0, 0), (0, 1), (g - 1, g - 1), (1, g - 1)]:
        E = np.zeros((g, g))
        E[j, k] = E[k, j] = 1.0
        dtau = (riemann_theta(u, tau + h * E).value - riemann_theta(u, tau - h * E).value) / (2 * h)
        ek = np.eye(g)[k] * h
        d2 = (theta_gradient(u + ek, tau)[:, j] - theta_gradient(u - ek, tau)[:, j]) / (2 * h)
        factor = 4j * np.pi if j == k else 2j * np.pi
        assert np.allclose(factor * dtau, d2, rtol=1e-6, atol=1e-6 * np.abs(d2).max())


# --- shapes, large Im tau, errors ----------------------------------------------------------------

def test_shapes_and_genus_one_batches():
    tau = 1j
    assert riemann_theta(0.3, tau).value.shape == ()
    assert riemann_theta(np.zeros((4, 5)), tau).value.shape == (4, 5)
    assert riemann_theta(np.zeros((4, 1)), tau).value.shape == (4,)
    t2 = np.array([[1j, 0.2], [0.2, 1.3j]])
    r = riemann_theta(np.zeros((3, 4, 2)), t2, gradient=True)
    assert r.value.shape == (3, 4) and r.gradient.shape == (3, 4, 2)


def test_ill_conditioned_imaginary_part_direct_path():
    # Im τ with eigenvalues ~ 119.5 and 0.5: the factored sum would overflow; the direct path is used.
    tau = 1j * np.array([[60.0, 59.5], [59.5, 60.0]]) + 0.1
    rng = np.random.default_rng(3)
    u = rng.normal(size=(8, 2)) + 0.5j * rng.normal(size=(8, 2))
    ref, _ = brute_force(u, tau, 12)
    got = riemann_theta(u, tau)
    assert np.all(np.abs(got.value - ref) <= (1e-13 + got.truncation_bound) * np.exp(got.exponent))


def test_bad_input_is_refused():
    with pytest.raises(InputError):
        riemann_theta(np.zeros(2), np.array([[1j, 0.3], [0.1, 1j]]))           # not symmetric
    with pytest.raises(InputError):
        riemann_theta(np.zeros(2), np.array([[1j, 2j], [2j, 1j]]))             # Im τ indefinite
    with pytest.raises(InputError):
        riemann_theta(np.zeros(3), np.eye(2) * 1j)                              # wrong genus
    with pytest.raises(InputError):
        riemann_theta(0.0, -1j)
    with pytest.raises(NumericalFailure, match="budget"):
        riemann_theta(np.zeros(3), 0.05j * np.eye(3), max_points=1000)


# --- fixed arguments, many real shifts (ThetaShiftTable) ------------------------------------

def test_shift_table_matches_mpmath_and_brute_force():
    from gfunction.theta import theta_lattice, theta_shift_table
    rng = np.random.default_rng(7)
    # genus 1 against mpmath.jtheta: θ(u + s|τ) = ϑ_3(π(u + s), e^{πiτ}) (DLMF 21.2.1, 20.2.3)
    tau = 0.3 + 0.8j
    u = rng.uniform(-1, 1, 5) + 1j * rng.uniform(-1, 1, 5)
    s = rng.uniform(-2, 2, 4)
    tab = theta_shift_table(u[:, None], tau)
    got = tab.oscillatory(s[:, None]) * np.exp(tab.exponent)[None, :]
    mpmath.mp.dps = 30
    q = mpmath.exp(1j * mpmath.pi * tau)
    ref = np.array([[complex(mpmath.jtheta(3, mpmath.pi * mpmath.mpc(x + y), q)) for x in u] for y in s])
    assert np.max(np.abs(got - ref) / np.exp(tab.exponent)[None, :]) < 1e-13
    # genus 3 against the brute-force box sum (outer table, paired shifts, shift 0)
    tau3 = random_riemann_matrix(3, rng)
    u3 = rng.normal(size=(6, 3)) + 0.4j * rng.normal(size=(6, 3))
    s3 = rng.normal(size=(3, 3))
    tab3 = theta_shift_table(u3, tau3)
    scale = np.exp(tab3.exponent)
    for i, sh in enumerate(s3):
        ref3, _ = brute_force(u3 + sh, tau3, 9)
        assert np.max(np.abs(tab3.oscillatory(s3)[i] * scale - ref3) / scale) < 1e-12
    ref_p, _ = brute_force(u3 + s3[[0, 1, 2, 0, 1, 2]], tau3, 9)
    assert np.max(np.abs(tab3.paired(s3[[0, 1, 2, 0, 1, 2]]) * scale - ref_p) / scale) < 1e-12
    assert np.max(np.abs(tab3.unshifted() * scale - brute_force(u3, tau3, 9)[0]) / scale) < 1e-12
    # a reused lattice gives the same values as a fresh one (it covers every shift of the cube)
    lat = theta_lattice(tau3)
    a, _ = riemann_theta_scaled(u3, tau3, lattice=lat)
    b, _ = riemann_theta_scaled(u3, tau3)
    assert np.max(np.abs(a - b)) < 1e-14
    assert lat.covers(np.full((1, 3), 0.5)) and not theta_lattice(tau3, shifts=np.zeros((1, 3))).covers(
        np.full((1, 3), 0.5))


def _box_sum_longdouble(u: np.ndarray, tau: np.ndarray, box: int, gradient: bool = False) -> np.ndarray:
    """θ(u_p|τ) (or its gradient, 2πi Σ m e^{...}) by the plain DLMF 21.2.1 series over |m_j| ≤ box,
    one exponential per term, in 80-bit long double (x86; rounding ~1e-19, far below the 1e-14 checked)."""
    g = tau.shape[0]
    m = np.array(list(itertools.product(range(-box, box + 1), repeat=g)), dtype=np.longdouble)
    t = tau.astype(np.clongdouble)
    quad = np.einsum("ni,ij,nj->n", m, t, m)
    pi = np.longdouble(np.pi)
    e = np.exp(1j * pi * quad[None, :] + 2j * pi * (u.astype(np.clongdouble) @ m.T))
    return 2j * pi * (e @ m) if gradient else e.sum(axis=1)


@pytest.mark.parametrize("g", [1, 2, 3])
def test_folded_shift_sums_equal_the_direct_lattice_sum(g):
    """ThetaShiftTable.oscillatory folds n and -n into a real matrix product over one table of
    phases shared by tables of different lattices (theta.ShiftPhases); the line sums of
    riemann_theta_scaled keep their lattice data between calls.  Both against a plain lattice
    sum: mpmath.jtheta in genus 1 (θ(u|τ) = ϑ_3(πu, e^{πiτ}), DLMF 20.2.3 with 21.2.1) and the
    DLMF 21.2.1 series over a large box, term by term in long double, in genus 2 and 3 (period
    matrices of hyperelliptic curves, as in the predictions).  To 1e-14 on the scale e^{π yᵀY⁻¹y}
    of the oscillatory part (|θ̂| ≤ Σ|terms| = O(1))."""
    from gfunction.theta import shift_phases, theta_lattice, theta_shift_table

    rng = np.random.default_rng(60 + g)
    tau = np.array([[0.3 + 0.8j]]) if g == 1 else _curve_tau(g)
    # two tables with different imaginary parts, hence different (non-symmetric) lattices
    uA = rng.uniform(-1, 1, (5, g)) + 0.3j * rng.normal(size=(5, g))
    uB = rng.uniform(-1, 1, (4, g)) + 1j * (0.6 + 0.2 * rng.normal(size=(4, g)))
    s = rng.uniform(-2, 2, (7, g))
    tabA, tabB = theta_shift_table(uA, tau), theta_shift_table(uB, tau)
    shared = shift_phases(np.zeros((0, g)), [tabA.lattice, tabB.lattice]).at(s)
    only_A = shift_phases(s, [tabA.lattice])        # tabB falls back to phases of its own points
    if g > 1:   # that fallback is exercised: a point of tabB's lattice is not among A's (nor its mirror)
        assert np.min(only_A.locate(tabB.lattice.points)[0]) < 0

    def reference(u):
        if g == 1:
            mpmath.mp.dps = 30
            q = mpmath.exp(1j * mpmath.pi * complex(tau[0, 0]))
            return np.array([complex(mpmath.jtheta(3, mpmath.pi * mpmath.mpc(complex(x)), q)) for x in u[:, 0]])
        return _box_sum_longdouble(u, tau, box=9 if g == 2 else 7).astype(complex)

    for tab, u in ((tabA, uA), (tabB, uB)):
        scale = np.exp(tab.exponent)
        ref = np.array([reference(u + sh) for sh in s])                      # (Q, P)
        for phases in (s, shared, only_A):
            got = tab.oscillatory(phases) * scale[None, :]
            assert np.max(np.abs(got - ref) / scale[None, :]) < 1e-14
        rows = [4, 0, 2]
        got = tab.oscillatory(shared.rows(rows)) * scale[None, :]
        assert np.max(np.abs(got - ref[rows]) / scale[None, :]) < 1e-14
        neg = np.array([reference(u - sh) for sh in s[:2]])
        got = tab.oscillatory(shared.rows([0, 1]).negated()) * scale[None, :]
        assert np.max(np.abs(got - neg) / scale[None, :]) < 1e-14
        # the gradient terms (theta_shift_table(gradient=True)): d/du ϑ_3(πu, q) = π ϑ_3'(πu, q)
        # (mpmath.jtheta with derivative=1) in genus 1, the box sum of 2πi m e^{...} in genus 2, 3;
        # to 1e-13 (measured 1.6e-14): each term carries 2π|m|, about ten times the value scale
        gtab = theta_shift_table(u, tau, gradient=True)
        if g == 1:
            q = mpmath.exp(1j * mpmath.pi * complex(tau[0, 0]))
            gref = np.array([[[complex(mpmath.pi * mpmath.jtheta(3, mpmath.pi * mpmath.mpc(complex(x + sh[0])), q, 1))]
                              for x in u[:, 0]] for sh in s])
        else:
            box = 9 if g == 2 else 7
            gref = np.array([_box_sum_longdouble(u + sh, tau, box, gradient=True).astype(complex) for sh in s])
        gscale = np.exp(gtab.exponent)[None, :, None]
        assert np.max(np.abs(gtab.oscillatory_gradient(shared) * gscale - gref) / gscale) < 1e-13
        got0 = gtab.unshifted_gradient() * gscale[0]
        ref0 = (np.array([[complex(mpmath.pi * mpmath.jtheta(3, mpmath.pi * mpmath.mpc(complex(x)), q, 1))]
                          for x in u[:, 0]]) if g == 1 else _box_sum_longdouble(u, tau, box, gradient=True).astype(complex))
        assert np.max(np.abs(got0 - ref0) / gscale[0]) < 1e-13
        # the line sums at u + s with one lattice for all shifts, called twice (its data kept)
        lat = theta_lattice(tau, arguments=u, margin=1.01)
        for _ in range(2):
            osc, expo = riemann_theta_scaled((u[None, :, :] + s[:, None, :]).reshape(-1, g), tau, lattice=lat)
            assert np.max(np.abs(osc.reshape(ref.shape) - ref / np.exp(expo.reshape(ref.shape)))) < 1e-14
        # ThetaLattice.scaled: the same sums without the checks of τ (bit for bit), and an argument
        # the lattice does not cover goes through riemann_theta_scaled (a lattice of its own)
        args = (u[None, :, :] + s[:, None, :]).reshape(-1, g)
        assert all(np.array_equal(x, y) for x, y in zip(lat.scaled(args), riemann_theta_scaled(args, tau, lattice=lat)))
        narrow = theta_lattice(tau, shifts=np.zeros((1, g)))       # covers the shift r = 0 only
        assert not narrow.covers(narrow.shifts_of(u))
        osc, expo = narrow.scaled(u)
        assert np.max(np.abs(osc * np.exp(expo) - reference(u)) / np.exp(expo)) < 1e-14


# --- rounding, which the truncation bound does not contain ----------------------------------

def _scaled_theta_mpmath(u: np.ndarray, tau: np.ndarray, exponent: float, box: int) -> complex:
    """θ(u|τ) e^{-exponent} by the DLMF 21.2.1 series in 60-digit mpmath over |m_j - k_j| ≤ box."""
    mpmath.mp.dps = 60
    g = tau.shape[0]
    k = np.rint(np.linalg.solve(tau.imag, u.imag))
    T, U = mpmath.matrix(tau.tolist()), mpmath.matrix(u.tolist())
    total = mpmath.mpc(0)
    for n in itertools.product(range(-box, box + 1), repeat=g):
        m = mpmath.matrix([n[i] - k[i] for i in range(g)])
        z = 1j * mpmath.pi * (m.T * T * m)[0] + 2j * mpmath.pi * (m.T * U)[0]
        total += mpmath.exp(z - mpmath.mpf(exponent))
    return complex(total)


@pytest.mark.parametrize("g", [1, 2])
def test_rounding_grows_with_the_exponent(g):
    # The module docstring ("Rounding"): the truncation bound holds in exact arithmetic; rounding
    # adds about eps (1 + pi y^T Y^-1 y).  Measured here against mpmath (60 digits) at scaling
    # exponents 10, 150 and 300 (theta ~ e^300): within tol + 4 eps (1 + exponent).
    rng = np.random.default_rng(40 + g)
    eps = np.finfo(float).eps
    for _ in range(3):
        tau = random_riemann_matrix(g, rng, lift=0.6)
        for target in (10.0, 150.0, 300.0):
            d = rng.normal(size=g)
            d /= np.sqrt(np.pi * d @ np.linalg.solve(tau.imag, d))  # pi y^T Y^-1 y = target
            u = 3 * rng.normal(size=g) + 1j * np.sqrt(target) * d
            got = riemann_theta(u[None, :], tau, tol=1e-14)
            exponent = float(got.exponent[0])
            assert exponent == pytest.approx(target, rel=1e-12)
            ref = _scaled_theta_mpmath(u, tau, exponent, box=30 if g == 1 else 10)
            error = abs(got.oscillatory[0] - ref)
            assert error <= got.truncation_bound + 4 * eps * (1 + exponent), (target, error)


def test_linear_exponentials_are_the_direct_exponentials():
    """The per-coordinate tables of theta_shift_table and ThetaShiftTable give exp(2πi nᵀf)
    to rounding (common practice: exp(a + b) = exp(a) exp(b)); factors whose tables could
    overflow are left to the direct form (None)."""
    from gfunction.theta import _linear_exponentials
    rng = np.random.default_rng(3)
    for g in (1, 2, 4):
        points = rng.integers(-6, 7, size=(300, g))
        for factors in (rng.uniform(-3, 3, (40, g)), rng.uniform(-3, 3, (40, g)) + 0.3j * rng.normal(size=(40, g))):
            direct = np.exp(2j * np.pi * (factors @ points.T))
            got = _linear_exponentials(points, factors)
            assert np.max(np.abs(got - direct) / np.abs(direct)) < 1e-13
    assert _linear_exponentials(np.array([[40]]), np.array([[3j]])) is None   # e^{2π·40·3}: direct form


# --- the basis reduction (n = U n' reorders the series; DHBvHS 2004 §4, LLL 1982) -----------

def _curve_tau(g: int) -> np.ndarray:
    from gfunction.curve import curve_of_bands

    edges = np.linspace(-3.0, 3.0, 2 * (g + 1))
    return curve_of_bands([(edges[2 * j], edges[2 * j + 1]) for j in range(g + 1)]).tau


@pytest.mark.parametrize("g", [2, 3, 4])
def test_basis_reduction_changes_values_only_by_rounding(g, monkeypatch):
    # Period matrices of hyperelliptic curves (equally spaced bands).  Reference: the same sums
    # without the reduction (U = I) and, in genus 4, the DLMF 21.2.1 series over a box.
    from gfunction import theta

    tau = _curve_tau(g)
    rng = np.random.default_rng(40 + g)
    u = rng.normal(size=(12, g)) + 0.5j * rng.normal(size=(12, g))
    s = rng.normal(size=(5, g))
    U = theta._reduction(theta._period_matrix(tau))
    assert U.dtype == np.int64 and abs(round(np.linalg.det(U))) == 1
    reduced = riemann_theta(u, tau, gradient=True)
    tab = theta.theta_shift_table(u, tau)
    paired_shifts = np.resize(s, (12, g))
    osc, pair = tab.oscillatory(s), tab.paired(paired_shifts)
    monkeypatch.setattr(theta, "_reduction", lambda t: np.eye(t.shape[0], dtype=np.int64))
    plain = riemann_theta(u, tau, gradient=True)
    ptab = theta.theta_shift_table(u, tau)
    assert np.allclose(reduced.exponent, plain.exponent, rtol=1e-13, atol=1e-13)   # π yᵀY⁻¹y is invariant
    assert np.max(np.abs(reduced.oscillatory - plain.oscillatory)) < 1e-13
    assert np.max(np.abs(reduced.oscillatory_gradient - plain.oscillatory_gradient)) < 1e-12
    assert reduced.truncation_bound <= 1e-14 and plain.truncation_bound <= 1e-14   # tol, in either basis
    assert np.max(np.abs(osc - ptab.oscillatory(s))) < 1e-13
    assert np.max(np.abs(pair - ptab.paired(paired_shifts))) < 1e-13
    if g == 4:
        # the point set over the cube of shifts: 5505 points unreduced, 3055 reduced (measured)
        monkeypatch.undo()
        fewer = theta.theta_lattice(tau).points.shape[0]
        monkeypatch.setattr(theta, "_reduction", lambda t: np.eye(t.shape[0], dtype=np.int64))
        assert fewer < 0.6 * theta.theta_lattice(tau).points.shape[0]
        ref, _ = brute_force(u[:3], tau, box=6)
        assert np.max(np.abs(reduced.value[:3] - ref) / np.exp(reduced.exponent[:3])) < 1e-13


def test_predictions_unchanged_by_the_basis_reduction(monkeypatch):
    # The shipped three-band case (genus 2): a, b, gap zeros and band counts with and without
    # the reduction agree to rounding (measured 1.4e-15; genus 3 and 4 fields 1.9e-15, 2.3e-15).
    import tomllib
    from pathlib import Path

    from equilibrium import Field, IntervalSet, solve
    from gfunction import predictor, theta

    case = tomllib.loads((Path(__file__).resolve().parents[2] / "cases" / "three_band.toml").read_text())
    field = Field.from_expression(case["field"]["expression"], case["field"].get("parameters", {}))
    degrees = np.arange(1000, 1040)
    reduced = predictor(solve(field, on=IntervalSet.real_line())).predict(degrees)
    monkeypatch.setattr(theta, "_reduction", lambda t: np.eye(t.shape[0], dtype=np.int64))
    plain = predictor(solve(field, on=IntervalSet.real_line())).predict(degrees)
    for name in ("a", "b", "gap_zeros"):
        mine, theirs = getattr(reduced, name), getattr(plain, name)
        assert np.array_equal(np.isnan(mine), np.isnan(theirs)), name        # NaN: no zero in that gap
        assert np.nanmax(np.abs(mine - theirs)) < 1e-13, name
    assert np.array_equal(reduced.band_counts, plain.band_counts)
