"""Every shipped case runs at its reduced size and produces a complete, verified file.

Checks that hold for any case (outside references): the zeros of p_n are
simple and interlace with those of p_{n-1} (Szegő, Orthogonal Polynomials,
1939, Thm 3.3.2); they lie in the convex hull of Σ (Thm 3.41.1 there); the
band masses sum to 1; a_n^{(n)} > 0.  Sweep: the symmetric quartic
x^4/4 - t x^2/2 has one band for t < 2 and two for t > 2 (Bleher & Its,
Ann. Math. 150 (1999) 185-266, the critical point t = 2 in our scaling).
"""

from __future__ import annotations

import math

import h5py
import numpy as np
import pytest

from workbench.case import load_case, shipped_cases_directory
from workbench.pipeline import run_case
from workbench.sweep import sweep_case

CASES = sorted(shipped_cases_directory().glob("*.toml"))
RUN_CASES = [p for p in CASES if load_case(p).sweep is None]
SWEEP_CASES = [p for p in CASES if load_case(p).sweep is not None]


def test_enough_scenarios_are_shipped():
    assert len(RUN_CASES) >= 8 and len(SWEEP_CASES) >= 1
    for path in CASES:
        assert "[reduced" in path.read_text(), f"{path.name} has no [reduced] size"


@pytest.mark.parametrize("path", RUN_CASES, ids=[p.stem for p in RUN_CASES])
def test_shipped_case_runs_at_reduced_size(path, tmp_path):
    case = load_case(path, reduced=True)
    outcome = run_case(case, tmp_path, progress=False, draw=False)
    assert outcome.verified, outcome.messages
    with h5py.File(outcome.path, "r") as f:
        assert {"equilibrium", "model", "direct", "comparison", "figures"} <= set(f)
        assert f["equilibrium"].attrs["verified"]
        assert math.isclose(float(np.sum(f["equilibrium/masses"][()])), 1.0, abs_tol=1e-10)
        lo, hi = case.set.intervals[0][0], case.set.intervals[-1][1]
        for n in case.polynomials.n:
            group = f[f"direct/n_{n:05d}"]
            x = group["zeros"][()]
            assert x.size == n and np.all(np.diff(x) > 0)
            assert lo <= x[0] and x[-1] <= hi
            a, b = group["a"][()], group["b"][()]
            assert np.all(a[1:] > 0)
            # zeros of p_{n-1}: eigenvalues of the leading (n-1) Jacobi block; interlacing
            from scipy.linalg import eigvalsh_tridiagonal

            y = eigvalsh_tridiagonal(b[: n - 1], a[1: n - 1])
            assert np.all((x[:-1] < y) & (y < x[1:]))
        assert f["model"].attrs["available"]
        assert np.all(np.isfinite(f["comparison/a_model"][()]))
        # the case's own formulas: |direct - formula| at every n; a gap formula that is the
        # model's own prediction reproduces the run's gap comparison
        for spec in case.formulas:
            entry = f[f"comparison/formulas/{spec.name}"]
            error, direct, value = (entry[k][()] for k in ("error", "direct", "value"))
            assert np.array_equal(error, np.abs(direct - value), equal_nan=True)
            if spec.expression == f"gap_zero_model_{spec.gap}":
                both = np.isfinite(error)
                assert np.array_equal(direct[both], f["comparison/gap_zeros_direct"][()][both, spec.gap - 1])
                assert np.all(error[both] <= f["comparison/err_zeros_gap"][()][both])


@pytest.mark.parametrize("path", SWEEP_CASES, ids=[p.stem for p in SWEEP_CASES])
def test_shipped_sweep_runs_at_reduced_size(path, tmp_path):
    case = load_case(path, reduced=True)
    result = sweep_case(case, tmp_path, workers=2, progress=False, draw=True)
    assert result.outcome.complete and result.outcome.failed == 0
    with h5py.File(result.path, "r") as f:
        bands = f["grid/bands"][()]
        assert bands.shape == case.sweep.shape
        t = f["grid/axis_t"][()]
        s = f["grid/axis_s"][()]
        assert s[0] == 0.0
        # on the symmetric line s = 0: one band below t = 2, two above
        assert np.all(bands[t < 1.9, 0] == 1) and np.all(bands[t > 2.1, 0] == 2)
    assert (tmp_path / "figures" / "phase.png").exists()
    rerun = sweep_case(case, tmp_path, workers=2, progress=False, draw=False)
    assert rerun.outcome.computed == 0
