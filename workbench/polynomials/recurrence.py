"""Recurrence coefficients ``a_k^{(n)}, b_k^{(n)}`` by the discretised Stieltjes procedure.

Scaling
-------
On the discrete measure ``Σ λ_i δ_{x_i}`` (see :mod:`.discretisation`) the
Stieltjes procedure (Stieltjes 1884; Gautschi, *Orthogonal Polynomials:
Computation and Approximation*, OUP 2004, §2.2.3.1) runs on the vectors
``r_k(x_i) = p_k(x_i) λ_i^{1/2}``, which satisfy ``Σ_i r_k(x_i)² = 1`` and the
recurrence at every node separately:

    a_{k+1} r_{k+1} = (x - b_k) r_k - a_k r_{k-1},
    b_k = Σ x_i r_k(x_i)²,   a_{k+1} = ‖(x - b_k) r_k - a_k r_{k-1}‖.

Neither ``λ_i`` nor ``r_k(x_i)`` is representable at large ``n``
(``λ_i ∝ e^{-n V(x_i)}`` spans thousands of orders of magnitude between wells
of different depth), but the recurrence is *linear per node*: each node
carries a mantissa pair ``(m_{k-1}, m_k)`` and a binary exponent ``e_i`` with
``r = m · 2^{e_i}``.  Initially ``e_i = ⌊(log λ_i - log Σλ)/(2 log 2)⌋`` (from
the logarithms of the weights, never from the weights).  Every few steps the
pair is renormalised node by node with ``frexp``/``ldexp``, which is exact
(powers of two), so the rescaling adds no rounding.  The sums use
``2^{2 e_i}``, which underflows to zero precisely for the nodes whose
contribution is below ``2^{-1074}`` at that degree; such nodes keep
evolving and contribute again once their polynomials have grown (a band that
opens at higher degree).  Since ``Σ r_k² = 1`` no term can overflow.

Error estimate
--------------
The whole computation is repeated on a second discretisation
(:data:`.discretisation.SECONDARY`: other node counts, shifted panel breaks);
``error_estimate = max_k max(|Δa_k|, |Δb_k|)``.  The result is verified when
``|Δ_k| ≤ tolerance · max(1, |a_k|, |b_k|)`` for every k (order-one
coefficients: absolute; large coefficients of fixed weights: relative).
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field as dataclass_field
from typing import Any, Callable, Mapping

import numpy as np

from equilibrium.errors import InputError, NumericalFailure
from equilibrium.verification import failure_message, failure_policy, float_checks, settle
from equilibrium.weight import Weight

from .discretisation import PRIMARY, SECONDARY, Discretisation, discretise, estimate_size, measure_for

#: renormalise the per-node mantissas every this many steps
_RENORMALISE_EVERY = 8

@dataclass(frozen=True)
class RecurrenceCoefficients:
    """Recurrence coefficients of ``w_n`` for ``0 ≤ k ≤ K``.

    Attributes
    ----------
    a : ``a[0] = 0``, ``a[k] = a_k`` (``k = 1..K``).
    b : ``b[k] = b_k`` (``k = 0..K``).
    n : the scaling of the weight.
    error_estimate : ``max_k max(|Δa_k|, |Δb_k|)`` between two discretisations.
    method : how the numbers were computed.
    weight_description : text of the weight.
    checks : values of the checks (``relative_error_estimate``, ``log_mass_difference``,
        node counts, ...).
    log_mass : ``log ∫ w_n`` (so that ``p_0 = exp(-log_mass/2)``).
    verified : whether every check is within tolerance.
    a_secondary, log_mass_secondary : ``a`` and ``log_mass`` from the second
        discretisation (``None`` when it was not run); quantities built from the
        coefficients (Hankel determinants, norms) take their error estimates
        from the differences.
    message : empty when verified, else the failed checks (:mod:`equilibrium.verification`).
    """

    a: np.ndarray
    b: np.ndarray
    n: float
    error_estimate: float
    method: str
    weight_description: str
    checks: Mapping[str, float] = dataclass_field(default_factory=dict)
    log_mass: float = 0.0
    verified: bool = True
    a_secondary: np.ndarray | None = None
    log_mass_secondary: float | None = None
    message: str = ""

    @property
    def count(self) -> int:
        """K, the largest index."""
        return int(self.b.size - 1)

    def log_leading(self) -> np.ndarray:
        """``log γ_k`` for k = 0..K: ``γ_0 = (∫w)^{-1/2}``, ``γ_k = γ_{k-1}/a_k``."""
        out = np.empty(self.b.size)
        out[0] = -0.5 * self.log_mass
        if self.b.size > 1:
            out[1:] = out[0] - np.cumsum(np.log(self.a[1:]))
        return out

    def truncated(self, count: int) -> "RecurrenceCoefficients":
        """The coefficients for ``0 ≤ k ≤ count``."""
        if not 0 <= count <= self.count:
            raise InputError(f"count {count} must lie in 0..{self.count}")
        return RecurrenceCoefficients(
            self.a[: count + 1].copy(), self.b[: count + 1].copy(), self.n, self.error_estimate,
            self.method, self.weight_description, dict(self.checks), self.log_mass, self.verified,
            None if self.a_secondary is None else self.a_secondary[: count + 1].copy(),
            self.log_mass_secondary, self.message,
        )


#: log 2 as a pair of doubles (hi = fl(log 2); hi + lo = log 2 to 1e-33)
_LN2_HI, _LN2_LO = math.log(2.0), 2.319046813846299558e-17


def _initial(disc: Discretisation):
    """``x``, the mantissas ``(m_0, m_{-1})``, exponents ``e`` and ``2^{2e}`` of ``r_0 = sqrt(λ/Σλ)``.

    ``h = (log λ_i - log Σλ) / (2 log 2)`` is formed in double-double from the pair
    ``log_weights + log_weights_low`` (:class:`.discretisation.Discretisation`):
    ``e = ⌊h⌋`` and ``m = 2^{h - e}``.  In plain double ``h`` (up to ``~10⁵`` at
    ``n = 10⁵``) would carry an absolute rounding of ``~10⁻¹¹``, i.e. a relative error
    of every ``r_0`` of that size; in double-double the only rounding left is that of
    ``2^{h - e}`` (one ulp).  Error-free transformations: :mod:`equilibrium.compensated`.
    """
    from equilibrium.compensated import two_prod, two_sum

    x = disc.nodes
    low = disc.log_weights_low if disc.log_weights_low is not None else np.zeros_like(disc.log_weights)
    d, d_low = two_sum(disc.log_weights, -disc.log_mass)      # log λ - log Σλ = d + d_low
    d_low = d_low + low
    twice_hi, twice_lo = 2.0 * _LN2_HI, 2.0 * _LN2_LO          # 2 log 2 (exact doubling)
    h = d / twice_hi
    product, product_error = two_prod(h, twice_hi)
    remainder = ((d - product) - product_error) + d_low - h * twice_lo
    h_low = remainder / twice_hi                                 # h + h_low = (d + d_low) / (2 log 2)
    exponent = np.floor(h)
    m_cur = np.exp2((h - exponent) + h_low)    # r_0 = sqrt(λ/Σλ) = m_cur · 2^exponent (h - ⌊h⌋ is exact)
    exponent = exponent.astype(np.int64)
    m_prev = np.zeros_like(x)
    scale = np.ldexp(1.0, np.clip(2 * exponent, -2000, 2000))  # 2^(2e); 0 below 2^-1074
    return x, m_cur, m_prev, exponent, scale


def kernel_for(kernel: str = "auto") -> str:
    """``"compiled"`` or ``"numpy"``: the loop :func:`stieltjes` will run.

    ``kernel`` is ``"auto"`` (the compiled loop of :mod:`.stieltjes_kernel` when it is
    built, else numpy; the environment variable ``WORKBENCH_KERNEL=numpy`` turns the
    compiled loop off), ``"compiled"`` or ``"numpy"``.
    """
    from . import stieltjes_kernel

    if kernel not in ("auto", "compiled", "numpy"):
        raise InputError(f"kernel must be 'auto', 'compiled' or 'numpy', got {kernel!r}")
    if kernel == "auto":
        if os.environ.get("WORKBENCH_KERNEL", "").strip().lower() == "numpy":
            return "numpy"
        return "compiled" if stieltjes_kernel.available() else "numpy"
    if kernel == "compiled" and not stieltjes_kernel.available():
        raise InputError("the compiled Stieltjes loop is not built (pip install -e . builds it with a C "
                         "compiler); use kernel='numpy'")
    return kernel


def stieltjes(disc: Discretisation, count: int, kernel: str = "auto", stop=None) -> tuple[np.ndarray, np.ndarray]:
    """Discretised Stieltjes procedure in per-node binary scaling (module docstring).

    Returns ``a`` (``a[0] = 0``) and ``b`` for ``k = 0..count``.  Cost
    ``O(N · count)``.  ``kernel`` chooses the loop (:func:`kernel_for`): the
    compiled one (:mod:`.stieltjes_kernel`, one pass over the nodes per step) or
    the numpy one (:func:`stieltjes_numpy`); they agree to rounding (the same
    arithmetic at every node, the sums in another order).  ``stop``
    (:class:`.stieltjes_kernel.Stop`) lets another thread end the compiled loop early.
    """
    count = int(count)
    if count >= disc.size:
        raise NumericalFailure(f"{count + 1} coefficients need more than the {disc.size} nodes placed")
    if kernel_for(kernel) == "numpy":
        return stieltjes_numpy(disc, count)
    from . import stieltjes_kernel

    x, m_cur, m_prev, exponent, scale = _initial(disc)
    a = np.zeros(count + 1)
    b = np.zeros(count + 1)
    status = stieltjes_kernel.run(x, m_cur, m_prev, exponent, scale, a, b, _RENORMALISE_EVERY, _BIG, stop)
    if status == -2:
        raise NumericalFailure("the Stieltjes procedure was stopped")
    if status >= 0:
        raise NumericalFailure(f"the Stieltjes procedure overflowed at k = {status}")
    return a, b


def stieltjes_numpy(disc: Discretisation, count: int) -> tuple[np.ndarray, np.ndarray]:
    """The loop of :func:`stieltjes` in numpy (about ten vector operations per step).

    All temporaries are preallocated (large temporaries are expensive).  This is the
    reference form, used when the C loop is not built (or WORKBENCH_KERNEL=numpy).
    """
    count = int(count)
    if count >= disc.size:
        raise NumericalFailure(f"{count + 1} coefficients need more than the {disc.size} nodes placed")
    x, m_cur, m_prev, exponent, scale = _initial(disc)
    a = np.zeros(count + 1)
    b = np.zeros(count + 1)
    work = np.empty_like(x)
    spare = np.empty_like(x)
    for k in range(count + 1):
        np.multiply(m_cur, m_cur, out=work)
        work *= scale                            # r_k² (times a_k² for k > 0)
        norm2 = float(work.sum())
        if k > 0:
            a[k] = math.sqrt(norm2)
            m_cur *= 1.0 / a[k]                  # m_cur held a_k r_k
        b[k] = float(np.einsum("i,i->", work, x)) / norm2
        if not math.isfinite(b[k]):
            raise NumericalFailure(f"the Stieltjes procedure overflowed at k = {k}")
        if k == count:
            break
        # v = (x - b_k) r_k - a_k r_{k-1}  (= a_{k+1} r_{k+1}), written into the spare buffer
        np.subtract(x, b[k], out=spare)
        spare *= m_cur
        if k > 0:
            m_prev *= a[k]
            spare -= m_prev
        m_prev, m_cur, spare = m_cur, spare, m_prev
        if (k + 1) % _RENORMALISE_EVERY == 0:
            _renormalise(m_cur, m_prev, exponent, scale)
    return a, b


#: mantissas above this are moved into the exponents.  Between two renormalisations (8 steps)
#: a mantissa may grow by 2^361 before its square overflows: 2^45 per step, far above the growth
#: (|x - b_k| + a_k)/a_{k+1} of the recurrence at any node of a discretisation
_BIG = 2.0**150


def _renormalise(m_cur: np.ndarray, m_prev: np.ndarray, exponent: np.ndarray, scale: np.ndarray) -> None:
    """Move the growth of large mantissas into the binary exponents (exact, in place)."""
    big = np.flatnonzero(np.abs(m_cur) > _BIG)
    if big.size == 0:
        return
    size = np.maximum(np.abs(m_cur[big]), np.abs(m_prev[big]))
    _, shift = np.frexp(size)
    m_cur[big] = np.ldexp(m_cur[big], -shift)
    m_prev[big] = np.ldexp(m_prev[big], -shift)
    exponent[big] += shift
    scale[big] = np.ldexp(1.0, np.clip(2 * exponent[big], -2000, 2000))


def estimate_memory(weight: Weight, count: int) -> int:
    """Bytes the recurrence computation will hold at its peak (estimated before allocation)."""
    nodes = estimate_size(weight, count, PRIMARY, bands=4)
    return int(nodes * 8 * 14 + count * 8 * 8)


def check_memory(weight: Weight, count: int) -> None:
    """Refuse (InputError) when the estimated memory or time exceeds the budgets of :mod:`workbench.limits`."""
    from workbench import limits

    what = f"{count + 1} coefficients"
    instead = "ask for fewer coefficients"
    limits.check_memory(estimate_memory(weight, count), what, instead)
    nodes = estimate_size(weight, count, PRIMARY, bands=4)
    limits.check_time(limits.recurrence_seconds(nodes, count), what, instead)


def default_threads() -> int:
    """Threads for the two discretisations: ``WORKBENCH_THREADS`` if set, else min(2, usable cores).

    The two discretisations are independent, so at most two threads are ever used; on one
    usable core (or ``WORKBENCH_THREADS=1``, e.g. inside a pool of worker processes) they
    run one after the other.
    """
    text = os.environ.get("WORKBENCH_THREADS", "").strip()
    if text:
        if not text.isascii() or not text.isdigit() or int(text) < 1:
            raise InputError(f"WORKBENCH_THREADS must be a positive integer, got '{text}'")
        return min(int(text), 2)
    try:
        cores = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(2, cores))


def recurrence_coefficients(weight: Weight, count: int, *, tolerance: float = 1e-10, measure=None,
                            solver: Callable[..., Any] | None = None, on_failure: str = "raise",
                            verify: bool = True, threads: int | None = None,
                            kernel: str = "auto") -> RecurrenceCoefficients:
    """``a_k^{(n)}, b_k^{(n)}``, ``0 ≤ k ≤ count``, for ``w_n = e^{-nV} h`` on Σ.

    Parameters
    ----------
    weight : the weight.
    count : K ≥ 0.
    tolerance : allowed ``|Δ_k| / max(1, |a_k|, |b_k|)`` between the two discretisations.
    measure : the equilibrium measure of ``(n/K) V`` if already known (node placement only).
    solver : the equilibrium solver (default :func:`equilibrium.solve`).
    on_failure : ``"raise"`` (NumericalFailure) or ``"mark"`` (``verified = False``);
        see :mod:`equilibrium.verification`.
    verify : run the second discretisation (default True).
    threads : 1 runs the two discretisations one after the other, 2 side by side
        (default :func:`default_threads`); the numbers do not depend on it.
    kernel : the Stieltjes loop, ``"auto"``, ``"compiled"`` or ``"numpy"`` (:func:`kernel_for`).

    Returns
    -------
    RecurrenceCoefficients
    """
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)):
        raise InputError(f"count must be an integer, got {count!r}")
    count = int(count)
    if count < 0:
        raise InputError(f"count = {count} must be >= 0")
    failure_policy(on_failure)
    if threads is None:
        threads = default_threads()
    if isinstance(threads, bool) or not isinstance(threads, (int, np.integer)) or threads < 1:
        raise InputError(f"threads must be a positive integer, got {threads!r}")
    loop = kernel_for(kernel)
    check_memory(weight, count)
    degree = count + 1  # the layout covers p_0 .. p_{K+1}
    if measure is None:
        measure = measure_for(weight, degree, solver)
    layouts = (PRIMARY, SECONDARY) if verify else (PRIMARY,)
    runs = _run_layouts(weight, degree, count, measure, layouts, loop, threads)
    first, (a, b) = runs[0]
    checks: dict[str, float] = {"nodes_primary": float(first.size), "cut_level": first.level}
    error = float("nan")
    message = ""
    a2 = None
    log_mass2 = None
    if verify:
        second, (a2, b2) = runs[1]
        log_mass2 = second.log_mass
        delta = np.maximum(np.abs(a - a2), np.abs(b - b2))
        size = np.maximum(1.0, np.maximum(np.abs(a), np.abs(b)))
        error = float(np.max(delta))
        relative = float(np.max(delta / size))
        checks.update(
            nodes_secondary=float(second.size),
            relative_error_estimate=relative,
            log_mass_difference=abs(first.log_mass - second.log_mass),
        )
        message = failure_message(
            checks, {"relative_error_estimate": tolerance, "log_mass_difference": max(tolerance, 1e-9)},
            what="the recurrence coefficients")
        if message:
            worst = int(np.argmax(delta / size))
            message += f"; two discretisations of the weight disagree most at k = {worst}"
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(b)) and np.all(a[1:] > 0)):
        raise NumericalFailure("the Stieltjes procedure produced non-finite or non-positive a_k")
    return settle(RecurrenceCoefficients(
        a=a, b=b, n=weight.n, error_estimate=error,
        method=f"discretised Stieltjes ({loop} loop), per-node binary scaling, {first.size} nodes "
               f"({PRIMARY.name}), checked on {int(checks.get('nodes_secondary', 0))} ({SECONDARY.name})",
        weight_description=weight.description, checks=float_checks(checks), log_mass=first.log_mass,
        verified=not message, message=message, a_secondary=a2, log_mass_secondary=log_mass2,
    ), on_failure)


def _run_layouts(weight: Weight, degree: int, count: int, measure, layouts, loop: str, threads: int):
    """``[(discretisation, (a, b)), ...]`` per layout; the second on its own thread when ``threads ≥ 2``.

    The compiled loop releases the GIL, so the two layouts run side by side on two
    cores.  If either side fails, the other is stopped (:class:`.stieltjes_kernel.Stop`)
    and waited for: no thread outlives the call.
    """
    from .stieltjes_kernel import Stop

    stop = Stop()

    def one(layout):
        disc = discretise(weight, degree, layout, measure)
        return disc, stieltjes(disc, count, loop, stop)

    if threads < 2 or len(layouts) < 2:
        return [one(layout) for layout in layouts]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=1, thread_name_prefix="stieltjes") as pool:
        other = pool.submit(one, layouts[1])
        try:
            mine = one(layouts[0])
        except BaseException:
            stop.set()
            other.cancel()
            raise
        try:
            return [mine, other.result()]
        except BaseException:
            stop.set()
            raise
