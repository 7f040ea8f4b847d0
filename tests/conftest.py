"""Test configuration: reproducible property and fuzz tests, and helpers shared by test files.

Hypothesis draws the same examples on every run (``derandomize``), so a CI
result can be reproduced exactly; run with ``--hypothesis-seed`` or set
``HYPOTHESIS_PROFILE=explore`` to search afresh.

The helpers reach the tests as session-scoped fixtures that return a
function (not by importing this file, which pytest does not promise to
allow); each call builds its own state, so nothing is shared between tests.
Session scope keeps hypothesis from warning about function-scoped fixtures
in ``@given`` tests.
"""

from __future__ import annotations

import builtins
import contextlib
import os
import sys
import typing
from collections.abc import Iterator, Sequence
from pathlib import Path

import numpy as np
import pytest
from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("explore", derandomize=False, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


# ----------------------------------------------------------------------------- tripwires
class Tripwire(AssertionError):
    """Raised by a wired builtin: text was about to be run as code.

    An AssertionError, so that a test fails with the message even where no
    one expects the exception.
    """


def _library_call(frame) -> bool:
    """A call made while a module is being imported (module code, code generated from fixed
    templates as mpmath does) or by typing (annotations): source of installed code, not user text."""
    if frame.f_code.co_filename == typing.__file__:
        return True
    while frame is not None:
        if frame.f_code.co_filename.startswith("<frozen importlib._bootstrap"):
            return True
        frame = frame.f_back
    return False


@contextlib.contextmanager
def _armed(*, also_import: bool = False, let_library_through: bool = False) -> Iterator[list[str]]:
    calls: list[str] = []
    names = ("eval", "exec", "compile") + (("__import__",) if also_import else ())
    saved = {name: getattr(builtins, name) for name in names}

    def wire(name):
        def tripped(*args, **kwargs):
            frame = sys._getframe(1)
            if let_library_through and _library_call(frame):
                return saved[name](*args, **kwargs)
            calls.append(name)
            raise Tripwire(f"{name} was called from {frame.f_code.co_filename}")
        return tripped

    for name in saved:
        setattr(builtins, name, wire(name))
    try:
        yield calls
    finally:
        for name, original in saved.items():
            setattr(builtins, name, original)
    # reached only when the block ended normally: a tripwire whose exception the code
    # under test caught and swallowed still fails the test here
    assert calls == [], f"tripwires hit: {calls}"


@pytest.fixture(scope="session")
def tripwires():
    """Context-manager factory: inside it, eval/exec/compile raise :class:`Tripwire` and record the call.

    ``with tripwires(...) as calls:`` yields the list of wired names that were
    called.  On leaving the block the builtins are restored, and, if the block
    ended normally, ``calls`` must be empty (so a caught tripwire still fails).

    Parameters
    ----------
    also_import : bool, default False
        Wire ``__import__`` too.  For code that must not even import (the
        expression parser); code that imports lazily, as the set, parameter
        and weight parsers may, cannot be held to this.
    let_library_through : bool, default False
        Pass on calls made by the import machinery (any caller frame inside
        ``importlib._bootstrap``) or by :mod:`typing` (annotations) to the real
        builtin.  Those run the source of installed modules, not user text; a
        parser that imports a module on first use (mpmath generates code from
        fixed templates) would otherwise trip the wire.  Off, every call trips.

    Returns
    -------
    callable
        ``armed(*, also_import=False, let_library_through=False)``, a context
        manager yielding the list of tripped names.
    """
    return _armed


# ----------------------------------------------------------------------------- case files
@pytest.fixture(scope="session")
def case_text():
    """Function returning the text of a minimal case file (TOML), by default V = x**2/2 on R.

    The layout is fixed -- tests name line numbers of this text (``line 7``
    is ``value_points``) and change it with ``str.replace``.

    Parameters
    ----------
    expression : str, default "x**2/2"
        The field V, the [field] expression.
    n : sequence of int, default (10, 20)
        The degrees of [polynomials].
    comparisons : sequence of str, default ()
        Lines of a [comparisons] table, written before [figures]; none, no table.
    figures : sequence of str, default ('formats = ["png"]', "dpi = 100")
        Lines of the [figures] table.

    Returns
    -------
    callable
        ``text(expression=..., n=..., comparisons=..., figures=...) -> str``.
    """
    return _case_text


def _case_text(expression: str = "x**2/2", n: Sequence[int] = (10, 20), comparisons: Sequence[str] = (),
               figures: Sequence[str] = ('formats = ["png"]', "dpi = 100")) -> str:
    lines = ["[case]", 'name = "gauss"', "[field]", f'expression = "{expression}"',
             "[polynomials]", f"n = [{', '.join(str(k) for k in n)}]", "value_points = 5"]
    if comparisons:
        lines += ["[comparisons]", *comparisons]
    lines += ["[figures]", *figures]
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="session")
def sweep_case_text():
    """Function returning a tiny 1-D sweep case (TOML): x**4/4 - t*x**2/2 at t = 0, 0.5, 1, no figures.

    Returns
    -------
    callable
        ``text() -> str``.
    """
    return _sweep_case_text


def _sweep_case_text() -> str:
    return "\n".join(['[case]', 'name = "sw"', '[field]', 'expression = "x**4/4 - t*x**2/2"',
                      'parameters = { t = 1.0 }', '[[sweep.axis]]', 'name = "t"', 'start = 0.0', 'stop = 1.0',
                      'num = 3', '[figures]', 'enabled = false']) + "\n"


# ----------------------------------------------------------------------------- zeros
@pytest.fixture(scope="session")
def nearest_distance():
    """Function ``(exact, predicted) -> max over predicted of the distance to the nearest exact zero``.

    Each prediction is matched with its nearest neighbour among ``exact`` (no index bookkeeping
    across bands, whose counts move with n Omega).
    """
    return _nearest_distance


def _nearest_distance(exact, predicted) -> float:
    import numpy as np

    from workbench.compare import nearest_zero_distances  # the one matching rule (runs use it too)

    return float(np.max(nearest_zero_distances(exact, predicted)))


@pytest.fixture(scope="session")
def jacobi_edge_offsets():
    """Function ``(n, alpha, beta, edge, count) -> x_m - edge`` for the ``count`` zeros of the Jacobi
    polynomial P_n^{(alpha, beta)} nearest ``edge`` (+1 or -1), from the edge inward.

    scipy.special.roots_jacobi gives the zeros, each polished by Newton steps on mpmath.jacobi at
    30 digits (``x_m - edge`` keeps its relative accuracy, which the float roots lose next to +-1).
    """
    return _jacobi_edge_offsets


def _jacobi_edge_offsets(n: int, alpha: float, beta: float, edge: float, count: int = 3):
    import mpmath
    import numpy as np
    from scipy.special import roots_jacobi

    roots = np.sort(roots_jacobi(n, alpha, beta)[0])
    near = roots[::-1][:count] if edge > 0 else roots[:count]
    with mpmath.workdps(30):
        return np.array([float(mpmath.findroot(lambda y: mpmath.jacobi(n, alpha, beta, y), mpmath.mpf(r),
                                               verify=False) - edge) for r in near])


# ----------------------------------------------------------------------------- reference tables
#: the top-level data/ folder: reference tables with their sources (data/README.md)
DATA = Path(__file__).resolve().parents[1] / "data"


@pytest.fixture(scope="session")
def reference_table():
    """Function reading a table of ``data/`` (CSV with ``# key: value`` header lines).

    Parameters
    ----------
    name : str
        Path below ``data/`` without the ``.csv``, e.g. ``"recurrence/double_well_n30_K40"``.

    Returns
    -------
    callable
        ``table(name) -> (header, columns)``: ``header`` maps each ``# key: value`` line's
        key to its text, ``columns`` maps each column name to a float array.
    """
    return _reference_table


def _reference_table(name: str) -> tuple[dict[str, str], dict[str, np.ndarray]]:
    lines = (DATA / f"{name}.csv").read_text(encoding="utf-8").splitlines()
    header = {}
    for line in lines:
        if line.startswith("#"):
            key, _, value = line[1:].partition(":")
            header[key.strip()] = value.strip()
    rows = [line for line in lines if line and not line.startswith("#")]
    names = rows[0].split(",")
    values = np.array([[float(v) for v in row.split(",")] for row in rows[1:]])
    return header, {column: values[:, j] for j, column in enumerate(names)}


@pytest.fixture(scope="session")
def omega_to_rounding():
    """Function: the phases' frequencies Ω_j of a polynomial field on the real line, to ~30 digits.

    The double Ω of :func:`equilibrium.solve` carries an error of a few 1e-16 (its
    ``mass_error``), which the phases ``nΩ`` multiply by n; tests that measure rates or
    agreements of 1e-13 at n ~ 4000 take Ω from here.  Source: the endpoint equations of
    the equilibrium measure of a polynomial V with soft edges (Deift, *Orthogonal polynomials
    and random matrices*, 1999, §6.6-6.7; from memory): with ``R = Π(z - e_i)`` and ``h`` a
    polynomial, ``G(z) = (V'(z) - h(z) R(z)^{1/2})/2 = 1/z + O(z^-2)`` at infinity, and
    ``∫_gap h |R|^{1/2} = 0`` across every gap (equal effective potential on all bands); the
    density is ``|h| |R|^{1/2}/2π`` and ``Ω_j`` the mass of the bands right of band ``j``.
    Solved by mpmath (Newton from the double solution, tanh-sinh quadrature).

    Parameters
    ----------
    field : equilibrium.Field with a polynomial V;  measure : its double-precision measure.

    Returns
    -------
    float array (bands - 1,): Ω_j correctly rounded.
    """
    return _omega_to_rounding


_OMEGA_CACHE: dict = {}


def _omega_to_rounding(field, measure, dps: int = 30) -> np.ndarray:
    key = (tuple(float(c) for c in field.polynomial), dps)
    if key not in _OMEGA_CACHE:
        _OMEGA_CACHE[key] = _omega_mp(field, measure, dps)
    return _OMEGA_CACHE[key].copy()


def _omega_mp(field, measure, dps: int) -> np.ndarray:
    import mpmath

    with mpmath.workdps(dps + 10):
        V = [mpmath.mpf(float(c)) for c in field.polynomial]
        dV = [k * V[k] for k in range(1, len(V))]                  # ascending coefficients of V'
        k = len(measure.support)
        deg = len(dV) - 1
        hdeg = deg - k                                             # degree of h

        def sqrt_series(e, M):                                     # Π(1 - e_i w)^{1/2} to w^M
            p = [mpmath.mpf(1)]
            for ei in e:
                q = [mpmath.mpf(0)] * (len(p) + 1)
                for i, c in enumerate(p):
                    q[i] += c
                    q[i + 1] -= ei * c
                p = q
            p = (p + [mpmath.mpf(0)] * (M + 1))[:M + 1]
            s = [mpmath.mpf(1)] + [mpmath.mpf(0)] * M
            for m in range(1, M + 1):
                s[m] = (p[m] - sum(s[i] * s[m - i] for i in range(1, m))) / 2
            return s

        def unpack(u):
            e = list(u[:2 * k])
            h = [c * dV[-1] for c in list(u[2 * k:])] + [dV[-1]]  # h ascending, leading coefficient that of V'
            return e, h

        def hR(e, h):
            return lambda x: sum(c * x ** i for i, c in enumerate(h)) * mpmath.sqrt(abs(mpmath.fprod(x - ei for ei in e)))

        def equations(*u):
            e, h = unpack(u)
            s = sqrt_series(e, hdeg + k + 2)

            def coefficient(power):                                # of z^power in h(z) z^k Σ s_m z^-m
                return sum(c * s[i + k - power] for i, c in enumerate(h) if 0 <= i + k - power < len(s))

            out = [coefficient(p) - dV[p] for p in range(deg)] + [coefficient(-1) + 2]
            out += [mpmath.quad(hR(e, h), [e[2 * j + 1], e[2 * j + 2]]) for j in range(k - 1)]
            return out

        start = [mpmath.mpf(v) for band in measure.support for v in band] + [mpmath.mpf(0)] * hdeg
        u = mpmath.findroot(equations, start, tol=mpmath.mpf(10) ** (-dps - 5), maxsteps=60)
        e, h = unpack([u[i] for i in range(len(start))])
        density = hR(e, h)
        masses = [abs(mpmath.quad(density, [e[2 * j], e[2 * j + 1]])) / (2 * mpmath.pi) for j in range(k)]
        assert abs(sum(masses) - 1) < mpmath.mpf(10) ** (-dps), "the endpoint equations were not solved"
        return np.array([float(sum(masses[j + 1:])) for j in range(k - 1)])
