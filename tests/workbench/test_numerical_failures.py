"""Numerical failure paths: a clear exit 3 naming the figure, or a result marked unverified.

Each test provokes one failure through a budget or tolerance the code
exposes as a parameter, or by replacing a solver with one that returns a
bad figure, and checks what the command line and the pipeline report:
exit code 3, one line on stderr naming the failed figure, and, when a file
is written, ``verified = False`` with the messages.  Never a silent wrong
number.

Closed forms used as the outside reference: V = x^2/2 on R has the
semicircle law on [-2, 2] with ell = 1 (the CONVENTIONS check values; Saff &
Totik 1997, Thm IV.5.1); V = x^4/4 - t x^2/2 with t > 2 has the two bands
±[sqrt(t-2), sqrt(t+2)] (symmetric quartic; Bleher & Its, Ann. Math. 150
(1999) -- from memory).
"""

from __future__ import annotations

import functools
import math

import h5py
import numpy as np
import pytest

import equilibrium.search as search
import gfunction.theta as theta
from equilibrium import Field, IntervalSet, solve
from equilibrium.errors import NumericalFailure
from workbench.cli import main

TWO_BAND = "x**4/4 - 3*x**2/2"


def _run(argv, capsys):
    code = main(argv)
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err
    return code, captured.out, captured.err.strip().splitlines()


# ------------------------------------------------------------ two discretisations disagree
@pytest.mark.parametrize("command", [["recurrence", "--count", "6"], ["zeros"]])
def test_disagreeing_discretisations_exit_3_and_write_nothing(command, tmp_path, capsys):
    out = tmp_path / "r.h5"
    code, stdout, err = _run([command[0], "--potential", "x**2/2", "--n", "10", *command[1:],
                              "--tolerance", "1e-300", "--out", str(out)], capsys)
    assert code == 3 and stdout == ""
    assert len(err) == 1 and "numerical failure" in err[0]
    assert "two discretisations of the weight disagree" in err[0] and "(tolerance 1e-300)" in err[0]
    assert not out.exists() and list(tmp_path.iterdir()) == []


#: the tables the case files here add to the minimal case (``case_text`` of tests/conftest.py)
NO_SMALL_NORM_NO_FIGURES = {"comparisons": ["small_norm = false"], "figures": ["enabled = false"]}


def test_run_with_unverified_direct_coefficients_marks_the_file(tmp_path, capsys, monkeypatch, case_text):
    """The pipeline keeps going, writes the file and marks it unverified, naming every failed n."""
    import workbench.polynomials as polynomials

    strict = functools.partial(polynomials.recurrence_coefficients, tolerance=1e-300)
    monkeypatch.setattr(polynomials, "recurrence_coefficients", strict)
    case = tmp_path / "gauss.toml"
    case.write_text(case_text(**NO_SMALL_NORM_NO_FIGURES))
    code, _, err = _run(["run", str(case), "--out", str(tmp_path / "o"), "--quiet"], capsys)
    assert code == 3
    assert len(err) == 1 and "results written but not verified" in err[0]
    assert "direct coefficients at n = 10 not verified" in err[0]
    assert "direct coefficients at n = 20 not verified" in err[0]
    with h5py.File(tmp_path / "o" / "run.h5", "r") as f:
        assert not f.attrs["verified"]
        assert "n = 10 not verified" in str(f.attrs["messages"])
        assert not f["direct/n_00010"].attrs["verified"]
        # the figure that failed is stored beside the flag (a real, non-zero disagreement)
        assert f["direct/n_00010"].attrs["error_estimate"] > 0


# ------------------------------------------------------------ theta sum over its budget
def test_theta_budget_raises_numerical_failure():
    tau = np.array([[1.0j]])
    with pytest.raises(NumericalFailure, match="theta sum over its budget"):
        theta.riemann_theta(np.array([0.1]), tau, max_points=2)
    # the same sum with its default budget: θ(0.1 | i) against the Jacobi product formula
    # θ3(z | τ) = Π (1 - q^{2m})(1 + 2 q^{2m-1} cos 2πz + q^{4m-2}), q = e^{πiτ} (DLMF 20.5.3)
    q = math.exp(-math.pi)
    product = 1.0
    for m in range(1, 40):
        product *= (1 - q ** (2 * m)) * (1 + 2 * q ** (2 * m - 1) * math.cos(2 * math.pi * 0.1) + q ** (4 * m - 2))
    value = complex(np.ravel(theta.riemann_theta(np.array([0.1]), tau).value)[0])
    assert abs(value - product) < 1e-13


def _small_theta_budget(monkeypatch, budget=2):
    for function in (theta.theta_lattice, theta.riemann_theta, theta.riemann_theta_scaled,
                     theta.theta_shift_table):
        monkeypatch.setitem(function.__kwdefaults__, "max_points", budget)


def test_predict_with_theta_over_budget_exits_3(capsys, monkeypatch):
    _small_theta_budget(monkeypatch)
    code, stdout, err = _run(["predict", "--potential", TWO_BAND, "--degrees", "10:12"], capsys)
    assert code == 3 and stdout == ""
    assert len(err) == 1 and "theta sum over its budget" in err[0]


def test_run_with_theta_over_budget_marks_the_model_failed(tmp_path, capsys, monkeypatch, case_text):
    _small_theta_budget(monkeypatch)
    case = tmp_path / "two.toml"
    case.write_text(case_text(expression=TWO_BAND, n=[12], **NO_SMALL_NORM_NO_FIGURES))
    code, _, err = _run(["run", str(case), "--out", str(tmp_path / "o"), "--quiet"], capsys)
    assert code == 3
    assert len(err) == 1 and "model problem failed: theta sum over its budget" in err[0]
    with h5py.File(tmp_path / "o" / "run.h5", "r") as f:
        assert not f.attrs["verified"]
        assert "theta sum over its budget" in str(f.attrs["messages"])
        assert not f["model"].attrs["available"]
        # the equilibrium measure and the direct side stand on their own, and are right
        support = f["equilibrium/support"][()].reshape(-1, 2)
        np.testing.assert_allclose(support, [[-math.sqrt(5), -1], [1, math.sqrt(5)]], atol=1e-10)


# ------------------------------------------------------------ a support search that does not converge
def _never_converging(monkeypatch):
    original = search.solve_structure

    def stuck(*args, **kwargs):
        solution = original(*args, **kwargs)
        return type(solution)(solution.state, solution.iterations, max(solution.residual_norm, 1e-3), False)

    monkeypatch.setattr(search, "solve_structure", stuck)


def test_unconverged_search_is_marked_unverified(monkeypatch):
    _never_converging(monkeypatch)
    mu = solve(Field.from_expression("x**2/2"), on_failure="mark")
    assert not mu.verified
    assert "did not converge" in mu.message
    with pytest.raises(NumericalFailure, match="equilibrium measure: .*did not converge"):
        solve(Field.from_expression("x**2/2"))


def test_unconverged_search_exits_3_and_marks_the_file(tmp_path, capsys, monkeypatch):
    _never_converging(monkeypatch)
    out = tmp_path / "mu.h5"
    code, _, err = _run(["equilibrium", "--potential", "x**2/2", "--out", str(out)], capsys)
    assert code == 3
    assert len(err) == 1 and "not verified" in err[0] and "did not converge" in err[0]
    with h5py.File(out, "r") as f:
        assert not f["equilibrium"].attrs["verified"]


# ------------------------------------------------------------ ill-conditioned linear systems
@pytest.mark.parametrize("relative_error", [1e-8, 1e-4, 1e-1, 1.0])
def test_inexact_linear_solves_never_give_a_silent_wrong_measure(relative_error, monkeypatch):
    """A linear solver as inaccurate as an ill-conditioned system makes it: the result is right or flagged."""
    original = np.linalg.solve
    rng = np.random.default_rng(7)

    def inexact(a, b):
        x = original(a, b)
        return x * (1 + relative_error * rng.standard_normal(np.shape(x)))

    monkeypatch.setattr(np.linalg, "solve", inexact)
    flags = []
    for expression, ends, ell in (("x**2/2", [[-2.0, 2.0]], 1.0),
                                  (TWO_BAND, [[-math.sqrt(5), -1.0], [1.0, math.sqrt(5)]], None)):
        mu = solve(Field.from_expression(expression), on_failure="mark")
        flags.append(mu.verified)
        if mu.verified:
            np.testing.assert_allclose(np.asarray(mu.support).reshape(-1, 2), ends, atol=1e-9)
            if ell is not None:
                assert abs(mu.lagrange - ell) < 1e-9
        else:
            assert "did not converge" in mu.message or "not verified" in mu.message
    if relative_error >= 1.0:
        # steps with 100 % error defeat Newton: the failure branch is really exercised
        assert not all(flags)


def test_singular_linear_system_exits_3_with_one_line(capsys, monkeypatch):
    def singular(a, b):
        raise np.linalg.LinAlgError("Singular matrix")

    monkeypatch.setattr(np.linalg, "solve", singular)
    code, stdout, err = _run(["predict", "--potential", TWO_BAND, "--degrees", "10:12"], capsys)
    assert code == 3 and stdout == ""
    assert len(err) == 1 and "linear algebra failed (Singular matrix)" in err[0]


def test_overflowing_field_reports_figures_without_numpy_warnings(capsys):
    """V = 1e300 x^2 on [-1, 1]: overflow everywhere; exit 3, one line naming the failed figures."""
    code, _, err = _run(["equilibrium", "--potential", "1e300*x^2", "--on=-1:1"], capsys)
    assert code == 3
    assert len(err) == 1  # numpy's overflow warnings do not reach stderr
    assert "not verified" in err[0] and "euler_lagrange_residual = " in err[0]
