"""``workbench equilibrium`` through the command line: JSON, tables, exit codes, HDF5."""

import json
import subprocess
import sys

import h5py
import numpy as np
import pytest

from workbench.cli import main


def run(args, capsys):
    code = main(args)
    out, err = capsys.readouterr()
    return code, out, err


def test_json_has_the_documented_keys(capsys):
    code, out, err = run(["equilibrium", "--potential", "x**4/4 - t*x**2/2", "--param", "t=3", "--json"], capsys)
    assert code == 0, err
    data = json.loads(out)
    for key in ("support", "masses", "omega", "lagrange", "energy", "capacity", "kind", "checks"):
        assert key in data
    assert data["kind"] == "positive" and data["capacity"] is None
    # Bleher and Its, Ann. of Math. 150 (1999): support ±[(t-2)^{1/2}, (t+2)^{1/2}]
    np.testing.assert_allclose(data["support"], [[-5**0.5, -1.0], [1.0, 5**0.5]], atol=1e-12)
    assert out.count("\n") == 1  # exactly one JSON object


def test_capacity_and_signed(capsys):
    code, out, _ = run(["equilibrium", "--on=-1:3", "--json"], capsys)
    data = json.loads(out)
    assert code == 0 and abs(data["capacity"] - 1.0) < 1e-14  # cap[a,b] = (b-a)/4 (Ransford 1995)
    code, out, _ = run(["equilibrium", "--on=-2:-1,1:2", "--signed", "--json"], capsys)
    data = json.loads(out)
    assert code == 0 and data["kind"] == "signed"
    assert abs(data["capacity"] - 3**0.5 / 2) < 1e-13  # (b²-a²)^{1/2}/2 (Ransford 1995, Table 5.1)


def test_table_output(capsys):
    code, out, _ = run(["equilibrium", "--potential", "x^2/2"], capsys)
    assert code == 0
    assert "verified" in out and "mass_error" in out and "ell = " in out


@pytest.mark.parametrize(
    "args,fragment",
    [
        (["--potential", "x**3"], "does not confine"),
        (["--potential=-x**2"], "does not confine"),
        (["--potential", "-x**2"], "attached with '='"),
        (["--potential", "log(1+x^2)"], "does not confine"),
        (["--potential", "y*x"], "unknown name 'y'"),
        (["--potential", "x^2", "--on=1:0"], "reversed"),
        (["--potential", "x^2", "--on=0:1,0.5:2"], "overlap"),
        (["--on=0:"], "compact"),
        (["--potential", "x^2", "--param", "t"], "NAME=VALUE"),
        (["--potential", "log(x)", "--on=-1:1"], "not finite"),
        (["--potential", "x^2", "--on=a:b"], "not a number"),
        (["--potential", "sqrt(x)", "--on=-1:1"], "not"),
        (["--potential", "x^2", "--signed"], "compact"),
    ],
)
def test_bad_input_exit_code_two_one_line(args, fragment, tmp_path):
    out_file = tmp_path / "never.h5"
    result = subprocess.run(
        [sys.executable, "-m", "workbench", "equilibrium", *args, "--out", str(out_file)],
        capture_output=True,
        text=True,
    )
    assert result.returncode == 2, result.stderr
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in result.stderr
    assert fragment in lines[0]
    assert not out_file.exists() and list(tmp_path.iterdir()) == []


def test_hdf5_round_trip_with_plain_h5py(tmp_path, capsys):
    path = tmp_path / "mu.h5"
    code, _, _ = run(["equilibrium", "--potential", "x**4/4 - 1.5*x**2 + 0.1*x", "--out", str(path)], capsys)
    assert code == 0
    with h5py.File(path, "r") as f:
        group = f["equilibrium"]
        assert "conventions" in f.attrs and "conventions" in group.attrs
        support = group["support"][()]
        assert support.shape == (2, 2)
        assert abs(group["masses"][()].sum() - 1) < 1e-12
        assert group.attrs["verified"]
        assert "description" in group["density"].attrs
