"""The Stieltjes loop of :mod:`.recurrence` as one compiled pass per step.

Why a compiled loop
-------------------
The numpy form of the loop (:func:`.recurrence.stieltjes_numpy`) makes about ten
array passes per step over the M nodes, each a separate numpy call.  At large K
the nodes no longer fit in the core's cache and every pass streams the arrays
from memory, so the cost is the number of passes, not the arithmetic.  The C
loop (``_stieltjes.c``, built by ``pip install -e .``) makes one pass per step:
with ``c = u/a_k`` (``u`` the mantissa of ``a_k r_k``) and
``v = (x - b_k) c - a_k (p/a_{k-1})`` (``p`` that of ``a_{k-1} r_{k-1}``) it
writes ``v`` over ``p`` and accumulates the sums of the *next* step,
``Σ v² 2^{2e}`` and ``Σ v² 2^{2e} x``, so that ``a_{k+1}`` and ``b_{k+1}`` are
ready when the pass ends.  It reads four arrays and writes one per step.

Why C and not numba
-------------------
Both were measured (interleaved, same run).  The fused loop costs the same in
either (0.6–1.0 ns per node and step); but importing numba and loading its
cached kernel costs about 1 s of CPU per process (0.35–0.5 s for the import,
0.4 s for the first call even from the on-disk cache), more than the whole
budget of ``workbench recurrence --n 16000 --count 16000`` (1.2 × a bare numpy
pass, ~1.3 s), and it would be paid again by every test process.  The C
extension costs nothing to import, needs no cache directory (read-only installs
work), releases the GIL, and needs no new dependency: ``setup.py`` builds it
with the install, and when no C compiler is available the install goes on and
the numpy loop is used (:func:`available` is False).

Same numbers as numpy
---------------------
Node by node the arithmetic is that of the numpy form, operation for operation
(``c = u · (1/a_k)``, ``v = (x - b_k) · c - (p · (1/a_{k-1})) · a_k``,
``w = v · v · 2^{2e}``; compiled with ``-ffp-contract=off``, so no fused
multiply-add), hence every node's mantissas are the numpy form's floating-point
numbers given the same ``a_k, b_k``.  Only the order of summation differs: the
sums are taken over blocks of 2048 nodes into 32 partial sums (node i into sum
i mod 32, so that consecutive additions do not wait on each other), added
pairwise, then block by block in order; the rounding error of a sum is
``O((64 + 5 + M/2048) ε)`` of the sum of its absolute values, comparable to
numpy's pairwise sums (Higham, *Accuracy and Stability of Numerical
Algorithms*, SIAM 2002, §4.2).  The loop is compiled in AVX-512, AVX2 and
baseline copies, the CPU choosing at load time (GCC ``target_clones``).  The per-node
exponents are renormalised every few steps exactly as in the numpy form
(powers of two: exact).
"""

from __future__ import annotations

import numpy as np

try:  # built by setup.py; optional, so the numpy loop must keep working without it
    from . import _stieltjes as _compiled
except ImportError:  # pragma: no cover - exercised by a subprocess test that hides the module
    _compiled = None


def available() -> bool:
    """Whether the compiled loop is built and importable."""
    return _compiled is not None


class Stop:
    """A flag another thread sets to end a running loop early (checked every 64 steps)."""

    def __init__(self) -> None:
        self.flag = np.zeros(1, dtype=np.int32)

    def set(self) -> None:
        self.flag[0] = 1


def run(x: np.ndarray, u: np.ndarray, p: np.ndarray, exponent: np.ndarray, scale: np.ndarray,
        a: np.ndarray, b: np.ndarray, every: int, big: float, stop: Stop | None = None) -> int:
    """Run the compiled loop in place on the prepared arrays (:func:`.recurrence.stieltjes`).

    ``u`` holds the mantissas of ``r_0``, ``p`` zeros; ``a`` and ``b`` (length K+1)
    receive the coefficients.  Returns -1 when done, the first k whose ``b_k`` is
    not finite, or -2 when ``stop`` was set.  Releases the GIL while it runs; a
    pending Ctrl-C raises KeyboardInterrupt within 64 steps (main thread).
    """
    if _compiled is None:
        raise RuntimeError("the compiled Stieltjes loop is not built (pip install -e . builds it)")
    arrays = [np.ascontiguousarray(v, dtype=np.float64) for v in (x, u, p)]
    if arrays[1] is not u or arrays[2] is not p:
        raise ValueError("u and p must be contiguous float64 arrays (they are updated in place)")
    flag = (stop or Stop()).flag
    return int(_compiled.run(arrays[0], u, p, exponent, scale, a, b, flag, int(every), float(big)))
