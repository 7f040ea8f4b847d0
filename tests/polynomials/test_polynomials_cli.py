"""`workbench recurrence` and `workbench zeros` through workbench.cli.main."""

from __future__ import annotations

import json

import h5py
import numpy as np
import pytest
from scipy.special import roots_jacobi

from workbench.cli import main


def run(capsys, argv):
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_recurrence_json(capsys):
    code, out, err = run(capsys, ["recurrence", "--potential", "x**2/2", "--n", "50", "--count", "20", "--json"])
    assert code == 0
    data = json.loads(out)  # exactly one JSON object
    assert {"a", "b", "error_estimate", "n", "count"} <= set(data)
    assert data["n"] == 50 and data["count"] == 20 and len(data["a"]) == 21 and data["a"][0] == 0
    # (a_k^{(n)})^2 = k/n for x^2/2 (DLMF Table 18.9.1, Hermite, rescaled)
    assert np.max(np.abs(np.array(data["a"]) - np.sqrt(np.arange(21) / 50))) < 1e-13


def test_recurrence_with_parameters_and_table(capsys):
    code, out, _ = run(capsys, ["recurrence", "--potential", "x**4/4 - t*x**2/2", "--param", "t=1", "--n", "30",
                                "--count", "5"])
    assert code == 0 and "a_k" in out and len(out.strip().splitlines()) == 4 + 6


def test_zeros_json_against_scipy(capsys):
    # V = 0 on [-1, 1] with a Jacobi factor: zeros of P_n^{(α,β)} (scipy.special.roots_jacobi)
    code, out, _ = run(capsys, ["zeros", "--on=-1:1", "--factor", "(1-x)^0.5*(1+x)^-0.25", "--n", "12", "--json"])
    assert code == 0
    zeros = np.array(json.loads(out)["zeros"])
    assert np.all(np.diff(zeros) > 0)
    assert np.max(np.abs(zeros - roots_jacobi(12, 0.5, -0.25)[0])) < 1e-14


def test_zeros_degree_option(capsys):
    code, out, _ = run(capsys, ["zeros", "--potential", "x**2/2", "--n", "100", "--degree", "7", "--json"])
    assert code == 0 and len(json.loads(out)["zeros"]) == 7


def test_hdf5_output(tmp_path, capsys):
    path = tmp_path / "rc.h5"
    code, _, _ = run(capsys, ["recurrence", "--potential", "x**2/2", "--n", "10", "--count", "8", "--out", str(path)])
    assert code == 0
    with h5py.File(path, "r") as handle:
        group = handle["recurrence"]
        assert group["a"].shape == (9,) and group["b"].shape == (9,)
        for key in ("field", "n", "set", "factor", "method", "error_estimate"):
            assert key in group.attrs
    path = tmp_path / "zeros.h5"
    code, _, _ = run(capsys, ["zeros", "--potential", "x**2/2", "--n", "10", "--out", str(path)])
    assert code == 0
    with h5py.File(path, "r") as handle:
        assert handle["zeros/zeros"].shape == (10,)
        assert "error_estimate" in handle["zeros"].attrs


@pytest.mark.parametrize("argv", [
    ["recurrence", "--potential", "x**2/2", "--n", "0", "--count", "5"],
    ["recurrence", "--potential", "x**2/2", "--n", "5", "--count", "-1"],
    ["recurrence", "--on=1:0", "--n", "5", "--count", "3"],
    ["recurrence", "--potential", "x**2/2 + y", "--n", "5", "--count", "3"],
    ["recurrence", "--on=-1:1", "--factor", "(1-x)^-1.5", "--n", "5", "--count", "3"],
    ["recurrence", "--potential", "x**2/2", "--n", "5", "--count", "2.5"],
    ["recurrence", "--potential", "x**2/2", "--n", "five", "--count", "2"],
    ["recurrence", "--potential", "x**2/2", "--n", "5", "--count", "1000000000"],
    ["recurrence", "--n", "5", "--count", "3"],
    ["zeros", "--potential", "x**2/2", "--n", "5", "--degree", "0"],
    ["recurrence", "--potential", "x**2/2", "--param", "t", "--n", "5", "--count", "3"],
])
def test_bad_input_exit_2_one_line(capsys, argv):
    code, out, err = run(capsys, argv)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err
