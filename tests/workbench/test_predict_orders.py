"""``workbench predict --order K --method series|residual``: the JSON, the orders, the methods.

Sources: Laguerre x^α e^{-nx} (DLMF 18.9.2 rescaled: a_n = √(1+α/n), b_n = 2 + (α+1)/n; off the diagonal
a_k = √(k(k+α))/n, b_k = (2k+α+1)/n; its zeros t_m/n from scipy.special.roots_genlaguerre), Hermite
(DLMF 18.9.2 rescaled: a_k^{(n)} = √(k/n)) and the leading-order output of the command before the
options existed (order 0 is unchanged).
"""

import json

import numpy as np
import pytest

from workbench.cli import main


def _json(capsys, argv):
    code = main(argv + ["--json"])
    out = capsys.readouterr()
    return code, json.loads(out.out), out.err


def test_order_zero_is_todays_output(capsys):
    base = ["predict", "--potential", "x**4/4 - 3.1*x**2/2 + 0.23*x", "--degrees", "300:303"]
    code, d0, _ = _json(capsys, base)
    code2, dd, _ = _json(capsys, base + ["--order", "0", "--method", "series"])
    assert code == code2 == 0 and d0 == dd
    assert d0["order"] == 0 and d0["method"] == "series" and d0["corrections"] is None
    for key in ("a", "b", "gap_zeros", "band_counts"):
        assert key in d0


def test_laguerre_orders_and_corrections(capsys):
    al = 0.7
    base = ["predict", "--potential", "x", "--on=0:", "--factor", f"x^{al}", "--degrees", "400:403"]
    n = np.arange(400, 403)
    errs = []
    for K in (0, 1, 2):
        code, d, err = _json(capsys, base + ["--order", str(K)])
        assert code == 0, err
        errs.append(np.max(np.abs(np.array(d["a"]) - np.sqrt(1 + al / n))))
        if K:
            c = np.array(d["corrections"]["a"])
            assert c.shape == (3, K) and np.allclose(c[:, 0], al / 2, atol=1e-13)
            assert np.allclose(np.array(d["b"]), 2 + (al + 1) / n, atol=1e-13)
    assert errs[1] < 1e-2 * errs[0] and errs[2] < 1e-2 * errs[1], errs


def test_residual_method_json(capsys):
    code, d, err = _json(capsys, ["predict", "--potential", "x**2/2", "--degrees", "100:102", "--method",
                                  "residual"])
    assert code == 0, err
    assert d["method"] == "residual" and len(d["error_estimate"]) == 2 and max(d["error_estimate"]) < 1e-13
    assert np.allclose(d["a"], 1.0, atol=2e-15) and np.allclose(d["b"], 0.0, atol=2e-15)


def test_residual_method_small_n_is_marked(capsys):
    code = main(["predict", "--potential", "x", "--on=0:", "--factor", "x^0.7", "--degrees", "20:21",
                 "--method", "residual"])
    out = capsys.readouterr()
    assert code == 3 and "neglected lens and gap jumps" in out.err and "20" in out.out


def test_a_root_inside_the_band_is_refused_beyond_leading_order(capsys):
    """|x - 0.2|^0.8 (a Fisher–Hartwig root) inside the band of x²/2: order 0 runs; orders 1, 2 and
    the residual method would need the confluent hypergeometric parametrix there and are refused
    with one line (gfunction.szego.interior_singular_points)."""
    base = ["predict", "--potential", "x^2/2", "--factor", "abs(x-0.2)^0.8", "--degrees", "10:12"]
    assert main(base) == 0
    capsys.readouterr()
    for extra in (["--order", "1"], ["--order", "2"], ["--method", "residual"]):
        assert main(base + extra) == 2
        err = capsys.readouterr().err.strip()
        assert len(err.splitlines()) == 1 and "0.2 inside a band" in err, err


def test_edge_zeros_of_laguerre_by_order(capsys):
    """--edge-zeros 3 for x^0.7 e^{-Nx}: the zeros t_m/N of L_N^{(0.7)} (scipy.special.roots_genlaguerre)
    next to the hard edge 0 (Bessel form) and the soft edge 4 (Airy form).  Measured at N = 100, 101:
    hard edge relative 3.4e-5, 1.4e-8, 1.9e-11; soft edge 2.5e-5, 7.8e-9, 4.6e-11 (orders 0, 1, 2)."""
    from scipy.special import roots_genlaguerre

    al = 0.7
    base = ["predict", "--potential", "x", "--on=0:", "--factor", f"x^{al}", "--degrees", "100:102",
            "--edge-zeros", "3"]
    hard, soft = [], []
    for K in (0, 1, 2):
        code, d, err = _json(capsys, base + ["--order", str(K)])
        assert code == 0, err
        left, right = d["edge_zeros"]["left"], d["edge_zeros"]["right"]
        assert left["kind"] == "hard" and left["form"] == "Bessel form" and abs(left["alpha"] - al) < 1e-12
        assert right["kind"] == "soft" and right["alpha"] is None and abs(right["edge"] - 4) < 1e-12
        h = s = 0.0
        for n, lz, rz in zip((100, 101), left["zeros"], right["zeros"]):
            t = roots_genlaguerre(n, al)[0] / n
            h = max(h, np.max(np.abs(np.array(lz) / t[:3] - 1)))
            s = max(s, np.max(np.abs(np.array(rz) - t[::-1][:3])))
        hard.append(h)
        soft.append(s)
    assert hard[0] < 1e-4 and hard[1] < 1e-3 * hard[0] and hard[2] < 1e-2 * hard[1], hard
    assert soft[0] < 1e-4 and soft[1] < 1e-2 * soft[0] and soft[2] < 1e-2 * soft[1], soft
    code, d, _ = _json(capsys, base[:-2])
    assert "edge_zeros" not in d                       # not asked: the JSON is unchanged


def test_near_diagonal_shifts(capsys):
    # Hermite e^{-n x²/2}: a_k^{(n)} = √(k/n), b_k = 0 (DLMF 18.9.2 rescaled by x -> x√(n/2))
    code, d, err = _json(capsys, ["predict", "--potential", "x**2/2", "--degrees", "40:42", "--shifts=-2:2",
                                  "--method", "residual"])
    assert code == 0, err
    near = d["near_diagonal"]
    assert near["shifts"] == [-2, -1, 0, 1]
    k = np.array([40, 41])[:, None] + np.array(near["shifts"])[None, :]
    assert np.max(np.abs(np.array(near["a"]) - np.sqrt(k / np.array([[40], [41]])))) < 1e-14
    assert np.max(np.abs(near["b"])) < 1e-14 and np.max(near["error_estimate"]) < 1e-13
    assert np.array(near["a"])[:, 2] == pytest.approx(d["a"], abs=1e-15)      # j = 0 is the diagonal
    # Laguerre x^α e^{-nx} at order 2: a_k = √(k(k+α))/n, b_k = (2k+α+1)/n (DLMF 18.9.2 rescaled)
    code, d, err = _json(capsys, ["predict", "--potential", "x", "--on=0:", "--factor", "x^0.7",
                                  "--degrees", "300:301", "--order", "2", "--shifts=-1:2"])
    assert code == 0, err
    k = 300 + np.array([-1, 0, 1])
    assert np.max(np.abs(np.array(d["near_diagonal"]["a"][0]) - np.sqrt(k * (k + 0.7)) / 300)) < 1e-8
    assert np.max(np.abs(np.array(d["near_diagonal"]["b"][0]) - (2 * k + 1.7) / 300)) < 1e-13
    assert d["near_diagonal"]["error_estimate"] is None


def test_near_diagonal_refusals(capsys):
    base = ["predict", "--potential", "x**2/2", "--degrees", "3:5"]
    for shifts, words in (("--shifts=-3:1", "N + j must be >= 1"), ("--shifts=2:1", "J1 < J2"),
                          ("--shifts=\uff12:3", "J1:J2"), ("--shifts=1:2:3", "J1:J2")):
        assert main(base + [shifts]) == 2
        out = capsys.readouterr()
        assert words in out.err and out.out == "" and "Traceback" not in out.err


def test_omega_refined_beyond_leading_order(capsys):
    """Beyond leading order Ω comes from the endpoint equations in extended precision (equilibrium.
    refinement; the symmetric quartic's Ω = 1/2 exactly, and irrational Ω against an independent mpmath
    solution in tests/equilibrium/test_refinement.py); order 0 keeps the double solve's Ω."""
    base = ["predict", "--potential", "x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x", "--degrees", "3000:3001"]
    code0, d0, _ = _json(capsys, base)
    code2, d2, err = _json(capsys, base + ["--order", "2"])
    assert code0 == code2 == 0, err
    assert d0["omega_refinement"] is None
    ref = d2["omega_refinement"]
    assert ref["endpoint_residual"] < 1e-20 and ref["omega_error"] < 1e-29
    assert ref["omega_shift"] == pytest.approx(np.max(np.abs(np.subtract(d2["omega"], d0["omega"]))), abs=0)
    assert 0 < ref["omega_shift"] < 2e-15
    code, dr, err = _json(capsys, base + ["--method", "residual"])
    assert code == 0 and dr["omega"] == d2["omega"], err
    # a field that is not a polynomial keeps the double Ω, and says why
    code, dc, err = _json(capsys, ["predict", "--potential", "cosh(x) - 2.2*x**2", "--degrees", "300:301",
                                   "--order", "1"])
    assert len(dc["omega"]) >= 1 and "not a polynomial" in dc["omega_refinement"]["note"], dc
