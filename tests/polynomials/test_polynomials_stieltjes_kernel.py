"""The compiled Stieltjes loop against the numpy loop (workbench.polynomials.stieltjes_kernel).

The two loops do the same arithmetic at every node (checked bit for bit by replaying
the numpy operations with the compiled loop's a_k, b_k) and differ only in the order
of the two sums per step, so their coefficients agree to rounding.  The closed-form
checks of the coefficients themselves (Hermite, Laguerre, Jacobi: NIST DLMF Table
18.9.1; mpmath referee) are in test_polynomials_recurrence.py and run on whichever
loop is built.

The compiled loop is built by ``pip install -e .`` (setup.py).  Where it is not built
(a checkout without the build step) the tests that need it are skipped, except on CI
(``CI`` set), where its absence is a failure.
"""

from __future__ import annotations

import math
import os
import subprocess
import sys
import textwrap

import numpy as np
import pytest

from equilibrium import Field, IntervalSet
from equilibrium.errors import InputError, NumericalFailure
from workbench.polynomials import stieltjes_kernel
from workbench.polynomials.discretisation import PRIMARY, SECONDARY, discretise, measure_for
from workbench.polynomials.recurrence import (_BIG, _RENORMALISE_EVERY, _initial, default_threads, kernel_for,
                                              recurrence_coefficients, stieltjes, stieltjes_numpy)
from workbench.polynomials.weight import Weight, parse_factor

needs_compiled = pytest.mark.skipif(
    not stieltjes_kernel.available() and not os.environ.get("CI"),
    reason="the compiled Stieltjes loop is not built here (pip install -e . builds it)",
)


def _weights():
    on = IntervalSet.parse("-1:1")
    half_line = IntervalSet.parse("0:")
    return {
        # two bands of different depth: the per-node exponents are renormalised many times
        "double well": (Weight(Field.from_expression("x**4/4 - 1.5*x**2 + 0.2*x"), 600), 600),
        # Jacobi factor on [-1, 1]: Gauss–Jacobi panels at the hard edges
        "jacobi": (Weight(Field.from_expression("x"), 200, on, parse_factor("(1-x)^0.5*(1+x)^-0.5", on=on)), 200),
        # fixed weight, growing degree: coefficients of size K
        "laguerre": (Weight(Field.from_expression("x"), 1, half_line, parse_factor("x^1.3", on=half_line)), 300),
    }


@needs_compiled
@pytest.mark.parametrize("name", list(_weights()))
def test_compiled_and_numpy_loops_agree(name):
    weight, count = _weights()[name]
    measure = measure_for(weight, count + 1)
    for layout in (PRIMARY, SECONDARY):
        disc = discretise(weight, count + 1, layout, measure)
        a1, b1 = stieltjes(disc, count, kernel="compiled")
        a0, b0 = stieltjes_numpy(disc, count)
        size = np.maximum(1.0, np.maximum(np.abs(a0), np.abs(b0)))
        # rounding only: the sums are taken in another order (measured ≤ 2e-14 here,
        # 5e-13 at n = K = 16000 where ~10⁴ steps accumulate it)
        assert np.max(np.abs(a1 - a0) / size) < 1e-13
        assert np.max(np.abs(b1 - b0) / size) < 1e-13


@needs_compiled
def test_compiled_loop_does_the_numpy_arithmetic_at_every_node():
    """Replay the numpy loop's operations with the compiled loop's a_k, b_k: the final
    mantissas and exponents must be the same floating-point numbers, bit for bit."""
    weight, count = _weights()["double well"]
    disc = discretise(weight, count + 1, PRIMARY)
    x, u, p, exponent, scale = _initial(disc)
    a = np.zeros(count + 1)
    b = np.zeros(count + 1)
    assert stieltjes_kernel.run(x, u, p, exponent, scale, a, b, _RENORMALISE_EVERY, _BIG) == -1
    # after the loop the compiled state holds u = a_K r_K (undivided) in one of the two arrays
    x, m_cur, m_prev, e, s = _initial(disc)
    for k in range(count):
        if k > 0:
            m_cur = m_cur * (1.0 / a[k])
        v = (x - b[k]) * m_cur
        if k > 0:
            v = v - m_prev * a[k]
        m_prev, m_cur = m_cur, v
        if (k + 1) % _RENORMALISE_EVERY == 0:
            big = np.flatnonzero(np.abs(m_cur) > _BIG)
            _, shift = np.frexp(np.maximum(np.abs(m_cur[big]), np.abs(m_prev[big])))
            m_cur[big] = np.ldexp(m_cur[big], -shift)
            m_prev[big] = np.ldexp(m_prev[big], -shift)
            e[big] += shift
            s[big] = np.ldexp(1.0, np.clip(2 * e[big], -2000, 2000))
    assert np.any(e != np.floor(0.5 * (disc.log_weights - disc.log_mass) / math.log(2.0)))  # renormalised
    final = u if count % 2 == 0 else p  # the roles of the two arrays swap every step
    assert np.array_equal(final, m_cur)
    assert np.array_equal(exponent, e) and np.array_equal(scale, s)


@needs_compiled
def test_threads_do_not_change_the_numbers():
    weight, count = _weights()["jacobi"]
    one = recurrence_coefficients(weight, count, threads=1)
    two = recurrence_coefficients(weight, count, threads=2)
    assert np.array_equal(one.a, two.a) and np.array_equal(one.b, two.b)
    assert one.error_estimate == two.error_estimate
    assert "compiled loop" in one.method


@needs_compiled
def test_stop_flag_ends_the_loop():
    weight, count = _weights()["double well"]
    disc = discretise(weight, count + 1, PRIMARY)
    stop = stieltjes_kernel.Stop()
    stop.set()
    with pytest.raises(NumericalFailure, match="stopped"):
        stieltjes(disc, count, kernel="compiled", stop=stop)


def test_numpy_loop_on_request_and_bad_settings(monkeypatch):
    weight, count = _weights()["jacobi"]
    rc = recurrence_coefficients(weight, count, kernel="numpy", threads=1)
    assert rc.verified and "numpy loop" in rc.method
    monkeypatch.setenv("WORKBENCH_KERNEL", "numpy")
    assert kernel_for("auto") == "numpy"
    with pytest.raises(InputError, match="kernel must be"):
        kernel_for("fast")
    for text in ("0", "-1", "two", "２"):
        monkeypatch.setenv("WORKBENCH_THREADS", text)
        with pytest.raises(InputError, match="WORKBENCH_THREADS must be a positive integer"):
            default_threads()
    monkeypatch.setenv("WORKBENCH_THREADS", "8")
    assert default_threads() == 2  # two discretisations: never more than two threads
    with pytest.raises(InputError, match="threads must be"):
        recurrence_coefficients(weight, count, threads=0)


def test_numpy_loop_alone_when_the_compiled_one_is_missing(tmp_path):
    """Hide the extension module: everything must still work, on the numpy loop."""
    script = textwrap.dedent("""
        import sys
        sys.modules["workbench.polynomials._stieltjes"] = None   # import now fails
        from equilibrium import Field
        from equilibrium.errors import InputError
        from workbench.polynomials import stieltjes_kernel
        from workbench.polynomials.recurrence import kernel_for, recurrence_coefficients
        from workbench.polynomials.weight import Weight
        assert not stieltjes_kernel.available()
        assert kernel_for("auto") == "numpy"
        try:
            kernel_for("compiled")
        except InputError as exc:
            assert "not built" in str(exc)
        else:
            raise SystemExit("kernel='compiled' without the module must be refused")
        rc = recurrence_coefficients(Weight(Field.from_expression("x**2/2"), 200), 200)
        assert rc.verified and "numpy loop" in rc.method, rc.method
        print("ok")
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "ok"
