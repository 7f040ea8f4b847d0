"""`workbench hankel` through workbench.cli.main and as a process.

The Gaussian reference is Mehta's integral, D_n = (2π)^{n/2} n^{-n²/2} ∏_{k<n} k!
(CONVENTIONS), with ∏ k! = G(n+1) from mpmath.barnesg.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys

import mpmath

from workbench.cli import main


def run(capsys, argv):
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_json_gaussian(capsys):
    code, out, err = run(capsys, ["hankel", "--potential", "x**2/2", "--n", "40", "--json"])
    assert code == 0, err
    data = json.loads(out)          # exactly one JSON object
    with mpmath.workdps(30):
        exact = float(20 * mpmath.log(2 * mpmath.pi) - 800 * mpmath.log(40) + mpmath.log(mpmath.barnesg(41)))
    assert abs(data["log_det"] - exact) <= 1e-12 * abs(exact)
    assert data["log_partition"] == math.lgamma(41) + data["log_det"]
    assert set(data["terms"]) == {"quadratic", "linear", "log_n", "constant", "inverse_n", "inverse_n_squared"}
    assert data["log_det_model"] == math.fsum(data["terms"].values())
    # through c_2/n² the Gaussian expansion errs by 1/(1008 n⁴) (DLMF 5.17.5), here 4e-10
    assert abs(data["model_minus_direct"]) < 2e-9
    assert data["regime"] == "one band (Gaussian)" and data["verified"] and data["error_estimate"] < 1e-10
    assert "from memory" in data["sources"]["constant"]


def test_table_and_model_not_available(capsys):
    code, out, _ = run(capsys, ["hankel", "--on=-1:-0.25,0.4:1", "--n", "20"])
    assert code == 0
    assert "log D_20" in out and "log Z_20" in out and "expansion: not available" in out
    code, out, _ = run(capsys, ["hankel", "--on=-1:-0.25,0.4:1", "--n", "20", "--json"])
    data = json.loads(out)
    assert data["log_det_model"] is None and data["terms"] == {} and "soft edges only" in data["model_message"]


def test_two_band_table_shows_the_theta_term(capsys):
    code, out, _ = run(capsys, ["hankel", "--potential", "x**4/4 - t*x**2/2 + s*x", "--param", "t=3.1",
                                "--param", "s=0.23", "--n", "60"])
    assert code == 0 and "log theta" in out and "several bands" in out


def test_process_bad_input():
    proc = subprocess.run([sys.executable, "-m", "workbench", "hankel", "--potential", "x^2", "--n", "10",
                           "--factor", "(1-x)^0.5"], capture_output=True, text=True)
    assert proc.returncode == 2 and proc.stdout == ""
    assert len(proc.stderr.strip().splitlines()) == 1 and "changes sign" in proc.stderr
