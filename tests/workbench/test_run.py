"""`workbench run`: the pipeline on a case with closed forms, resuming, interrupting, plot/show.

Reference values (outside the project): for V = x^2/2 on R the orthonormal
polynomials of exp(-n x^2/2) are rescaled Hermite polynomials, so
(a_k^{(n)})^2 = k/n and b_k = 0 (DLMF 18.9.1 with x -> sqrt(n/2) x); the
equilibrium measure is the semicircle on [-2, 2] with ell = 1 and energy
3/4 (Saff & Totik, Logarithmic Potentials with External Fields, 1997,
Thm IV.5.1; the CONVENTIONS check values).  The small-norm deviation
|T M^{-1} - I| is O(1/n) (Deift et al., CPAM 52 (1999), Thm 7.10).
"""

from __future__ import annotations

import functools
import os
import signal
import subprocess
import sys
import time

import h5py
import numpy as np
import pytest

from workbench.case import parse_case
from workbench.cli import main
from workbench.pipeline import run_case


@pytest.fixture
def gauss_case(case_text):
    """Function returning the case text of this file.

    ``case_text`` of tests/conftest.py with n = 10, 20, 40, 80 (unless ``n`` is
    given) and ``contour_points = 32`` in [comparisons].
    """
    return functools.partial(case_text, n=(10, 20, 40, 80), comparisons=["contour_points = 32"])


def _case(tmp_path, text, name):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_gaussian_run_against_closed_forms(tmp_path, gauss_case):
    case = parse_case(gauss_case(), source="gauss.toml")
    outcome = run_case(case, tmp_path / "out", progress=False, draw=False)
    assert outcome.verified, outcome.messages
    with h5py.File(outcome.path, "r") as f:
        np.testing.assert_allclose(f["equilibrium/support"][()], [[-2.0, 2.0]], atol=1e-10)
        assert f["equilibrium"].attrs["lagrange"] == pytest.approx(1.0, abs=1e-10)
        assert f["equilibrium"].attrs["energy"] == pytest.approx(0.75, abs=1e-10)
        for n in (10, 20, 40, 80):
            a = f[f"direct/n_{n:05d}/a"][()]
            k = np.arange(a.size)
            np.testing.assert_allclose(a, np.sqrt(k / n), rtol=1e-10, atol=1e-12)
        # a_n^{(n)} = 1 and b_n = 0 exactly: the model problem is exact here too
        np.testing.assert_allclose(f["comparison/a_model"][()], 1.0, atol=1e-10)
        np.testing.assert_allclose(f["comparison/err_a"][()], 0.0, atol=1e-10)
        counts = f["comparison/band_counts_direct"][()]
        np.testing.assert_array_equal(counts[:, 0], [10, 20, 40, 80])
        rates = f["comparison/rates/small_norm"].attrs
        assert rates["slope"] == pytest.approx(-1.0, abs=0.15)
        assert np.all(np.diff(f["comparison/small_norm"][()]) < 0)
        # the zeros approach the quantile rule of the semicircle (their counting measure
        # tends to mu_V; Saff & Totik 1997, Thm III.4.1): the bulk error decreases with n
        assert np.all(np.diff(f["comparison/err_zeros_bulk"][()]) < 0)


def test_interrupted_run_resumes_without_recomputing(tmp_path, gauss_case):
    case = parse_case(gauss_case(), source="gauss.toml")
    out = tmp_path / "out"

    def stop_after_second(n):
        if n == 20:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_case(case, out, progress=False, draw=False, after_each_n=stop_after_second)
    assert not (out / "run.h5").exists()
    assert sorted(p.name for p in (out / "partial").glob("n_*.h5")) == ["n_00010.h5", "n_00020.h5"]
    assert (out / "partial" / "model.h5").exists()    # the model stage, kept for the resume
    outcome = run_case(case, out, progress=False, draw=False)
    assert outcome.reused == (10, 20) and outcome.computed == (40, 80)
    again = run_case(case, out, progress=False, draw=False)
    assert again.computed == () and again.reused == (10, 20, 40, 80)
    # a changed case does not reuse the partial results of another
    changed = parse_case(gauss_case().replace("value_points = 5", "value_points = 6"), source="g.toml")
    assert run_case(changed, out, progress=False, draw=False).reused == ()


def _block_numerics(monkeypatch):
    """Make the numerical packages unusable: plot/show must work from the file alone."""
    import equilibrium
    from workbench.cli import build_parser

    build_parser()  # import every command module first, so teardown restores the unblocked ones

    def boom(*args, **kwargs):
        raise AssertionError("a numerical package was called")

    monkeypatch.setattr(equilibrium, "solve", boom)
    monkeypatch.setattr(equilibrium, "solve_signed", boom)
    for name in list(sys.modules):
        if name == "gfunction" or name.startswith("gfunction.") or name.startswith(
                "workbench.polynomials") or name == "workbench.pipeline" or name.startswith("workbench.commands."):
            # command modules are dropped too, so none keeps the blocked `solve` after this test
            monkeypatch.delitem(sys.modules, name)
    for name in ("gfunction", "gfunction.predict", "workbench.polynomials", "workbench.pipeline"):
        monkeypatch.setitem(sys.modules, name, None)  # import raises ImportError


def test_plot_and_show_need_no_recomputation(tmp_path, monkeypatch, capsys, gauss_case):
    case = parse_case(gauss_case(n=[10, 20]), source="g.toml")
    outcome = run_case(case, tmp_path / "out", progress=False, draw=True)
    drawn = {p.name for files in outcome.figures.values() for p in files}
    _block_numerics(monkeypatch)
    with pytest.raises(ImportError):
        import gfunction.predict  # noqa: F401
    assert main(["plot", str(outcome.path), "--out", str(tmp_path / "again"), "--formats", "png",
                 "--dpi", "100"]) == 0
    again = {p.name for p in (tmp_path / "again").iterdir()}
    assert again == drawn
    assert main(["show", str(outcome.path)]) == 0
    text = capsys.readouterr().out
    assert "1 band(s) [-2.000000, 2.000000]" in text and "fitted rates" in text


def test_cli_errors_name_the_line(tmp_path, capsys, gauss_case):
    bad = _case(tmp_path, gauss_case().replace("value_points = 5", "value_pints = 5"), "bad.toml")
    assert main(["run", str(bad), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert f"{bad} line 7: unknown key 'value_pints' in [polynomials]" in err
    assert main(["show", str(tmp_path / "missing.h5")]) == 2


# ------------------------------------------------------------ killing a real process
SLOW_DEGREES = [40, 60, 80, 100, 120, 140, 160, 180, 200, 220]


def _start(case_path, out):
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    return subprocess.Popen([sys.executable, "-m", "workbench", "run", str(case_path), "--out",
                             str(out), "--quiet", "--no-figures"], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, env=env, text=True)


def _wait_for_partials(out, count, process, timeout=60.0):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if len(list((out / "partial").glob("n_*.h5"))) >= count:
            return
        if process.poll() is not None:
            pytest.fail(f"run ended before it could be interrupted: {process.stderr.read()}")
        time.sleep(0.02)
    pytest.fail("no partial result appeared")


def _check_directory(out):
    """The final file is absent or complete; every partial file is complete."""
    final = out / "run.h5"
    if final.exists():
        with h5py.File(final, "r") as f:
            assert f.attrs["format"] == "workbench-run"
    for path in (out / "partial").glob("n_*.h5"):
        with h5py.File(path, "r") as f:
            assert f["a"].shape[0] > 0


@pytest.mark.parametrize("how", [signal.SIGKILL, signal.SIGINT])
def test_killed_run_leaves_no_truncated_file_and_resumes(tmp_path, how, gauss_case):
    case_path = _case(tmp_path, gauss_case(n=SLOW_DEGREES), "slow.toml")
    out = tmp_path / "out"
    process = _start(case_path, out)
    _wait_for_partials(out, 2, process)
    process.send_signal(how)
    _, stderr = process.communicate(timeout=60)
    if how == signal.SIGINT:
        assert process.returncode == 130, stderr
        assert "Traceback" not in stderr
        assert not list(out.rglob("*.tmp"))  # the interrupted writer cleaned up after itself
    else:
        assert process.returncode == -signal.SIGKILL
    _check_directory(out)
    assert not (out / "run.h5").exists()
    finished = len(list((out / "partial").glob("n_*.h5")))
    assert 2 <= finished < 10
    # the rerun takes the finished n from partial/ and computes only the rest
    from workbench.case import load_case

    outcome = run_case(load_case(case_path), out, progress=False, draw=False)
    assert len(outcome.reused) == finished and len(outcome.computed) == 10 - finished
    assert not list(out.rglob("*.tmp"))
    _check_directory(out)
