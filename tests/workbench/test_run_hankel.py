"""The Hankel determinant in a run: /comparison/log_hankel_* against closed forms, the rate, table and figure.

References (outside the project):

* Gaussian e^{-n x^2/2}: Mehta's integral, log D_n = (n/2) log 2π - (n²/2) log n + log G(n+1)
  (Mehta, Random Matrices, 3rd ed. 2004; CONVENTIONS), G from mpmath.barnesg.  Its expansion
  through c_2/n² errs by B_6/(24 n⁴) + B_8/(48 n⁶) = 1/(1008 n⁴) - 1/(1440 n⁶) (DLMF 5.17.5).
* Laguerre x^α e^{-nx} on [0, ∞): the monic norms k! Γ(k+α+1) n^{-(2k+α+1)} (DLMF Table 18.3.1),
  so log D_n = log G(n+1) + log G(n+α+1) - log G(α+1) - (n² + αn) log n, and a_n^{(n)} =
  sqrt(n(n+α))/n (DLMF 18.9.2, rescaled x -> nx); the expansion through c_2/n² errs by O(n⁻³).
"""

from __future__ import annotations

import math

import h5py
import mpmath
import numpy as np
import pytest

from workbench.case import parse_case
from workbench.cli import main
from workbench.pipeline import run_case


def _log_g(z):
    return mpmath.log(mpmath.barnesg(z))


def _mehta(n: int) -> float:
    with mpmath.workdps(40):
        return float(mpmath.mpf(n) / 2 * mpmath.log(2 * mpmath.pi) - mpmath.mpf(n) ** 2 / 2 * mpmath.log(n)
                     + _log_g(n + 1))


def _laguerre(n: int, alpha: str) -> float:
    with mpmath.workdps(40):
        a = mpmath.mpf(alpha)
        return float(_log_g(n + 1) + _log_g(n + a + 1) - _log_g(a + 1) - (mpmath.mpf(n) ** 2 + a * n) * mpmath.log(n))


def test_gaussian_log_hankel_in_a_run(tmp_path, case_text, capsys):
    ns = (12, 24, 48)
    case = parse_case(case_text(n=ns, comparisons=["contour_points = 16", "small_norm = false"]),
                      source="gauss.toml")
    outcome = run_case(case, tmp_path / "out", progress=False, draw=False)
    assert outcome.verified, outcome.messages
    with h5py.File(outcome.path, "r") as f:
        comp = f["comparison"]
        direct = comp["log_hankel_direct"][()]
        estimate = comp["log_hankel_error_estimate"][()]
        for n, value, est in zip(ns, direct, estimate):
            truth = _mehta(n)
            assert abs(value - truth) <= 1e-12 * abs(truth)
            assert abs(value - truth) <= max(est, math.ulp(truth))
            assert f[f"direct/n_{n:05d}"].attrs["log_det"] == value
        # model - direct is the first neglected Barnes term, 1/(1008 n^4) - 1/(1440 n^6) (DLMF 5.17.5)
        expected = np.array([1 / (1008 * n ** 4) - 1 / (1440 * n ** 6) for n in ns])
        err = comp["err_log_hankel"][()]
        assert np.all(np.abs(err - expected) <= 1e-3 * expected + 2 * estimate)   # measured: 5e-5 relative at n = 12, 24; 1.5e-13 (rounding) at 48
        assert comp["rates/err_log_hankel"].attrs["slope"] == pytest.approx(-4.0, abs=0.05)
        terms = f["model/log_hankel_terms"]
        assert terms.attrs["regime"] == "one band (Gaussian)"
        total = sum(terms[name][()] for name in terms if name != "n")
        np.testing.assert_allclose(total, f["model/log_hankel"][()], rtol=1e-15)
    # the run table shows the error of log D_n and its rate
    assert main(["show", str(outcome.path)]) == 0
    out = capsys.readouterr().out
    assert "err log Dn" in out and "err_log_hankel" in out


def test_laguerre_case_file_with_a_power_factor(tmp_path, capsys):
    # x^0.7 on [0, inf) written as [factor] expression (the --factor grammar); a hard edge at 0
    text = "\n".join([
        "[case]", 'name = "laguerre"', "[field]", 'expression = "x"', "[set]", 'intervals = "0:"',
        "[factor]", 'expression = "x^0.7"', "[polynomials]", "n = [20, 40, 80]", "value_points = 5",
        "[figures]", 'formats = ["png"]', "dpi = 100", "which = [\"errors\"]",
    ]) + "\n"
    path = tmp_path / "laguerre.toml"
    path.write_text(text)
    assert main(["run", str(path), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    capsys.readouterr()
    with h5py.File(tmp_path / "out" / "run.h5", "r") as f:
        comp = f["comparison"]
        ns = comp["n"][()]
        # a_n^{(n)} = sqrt(1 + alpha/n) (DLMF 18.9.2 rescaled)
        np.testing.assert_allclose(comp["a_direct"][()], np.sqrt(1 + 0.7 / ns), rtol=1e-12)
        for n, value in zip(ns, comp["log_hankel_direct"][()]):
            truth = _laguerre(int(n), "0.7")
            assert abs(value - truth) <= 1e-12 * abs(truth)
        assert f["model/log_hankel_terms"].attrs["regime"] == "one band (Laguerre)"
        assert comp["rates/err_log_hankel"].attrs["slope"] <= -2.8        # O(n^-3); measured -3.0
    assert (tmp_path / "out" / "figures" / "errors.png").exists()


def test_outside_the_expansion_is_a_note(tmp_path, case_text):
    # two bands with hard edges: no expansion; the direct log D_n is still stored, the run says why
    text = case_text(n=(12, 16), comparisons=["small_norm = false"]).replace(
        'expression = "x**2/2"', "zero = true").replace("[polynomials]", '[set]\nintervals = "-1:-0.25,0.4:1"\n[polynomials]')
    outcome = run_case(parse_case(text, source="two.toml"), tmp_path / "out", progress=False, draw=False)
    assert outcome.tree.has("comparison/log_hankel_direct")
    assert not outcome.tree.has("comparison/err_log_hankel")
    assert any(note.startswith("log D_n not compared") and "soft edges only" in note for note in outcome.notes)
    # and [comparisons] log_hankel = false leaves the model side out without a note
    off = parse_case(case_text(n=(12, 16), comparisons=["small_norm = false", "log_hankel = false"]),
                     source="off.toml")
    outcome = run_case(off, tmp_path / "off", progress=False, draw=False)
    assert not outcome.tree.has("model/log_hankel") and not outcome.tree.has("comparison/err_log_hankel")
    assert not any("log D_n" in note for note in outcome.notes)
