"""A high-precision referee: the Stieltjes procedure in mpmath on a tanh–sinh discretisation.

For moderate degrees (K ≈ 30–60) this computes the recurrence coefficients
with an independent quadrature family and arithmetic: composite tanh–sinh
rules (Takahasi & Mori, Publ. RIMS 9 (1974) 721–741) computed in ``mpmath``
at ``dps`` digits, with the Stieltjes procedure (Gautschi, *Orthogonal
Polynomials: Computation and Approximation*, OUP 2004, §2.2.3.1) run on the
vectors ``p_k(x_i) λ_i^{1/2}`` in exact-integer binary fixed point with
``≈ 3.3 (2 dps + 10)`` bits (fixed point loses relative precision in the
smallest values, which the recurrence later amplifies: they need the
extra ``dps + 10`` digits).  Tanh–sinh clusters its nodes doubly
exponentially at the panel ends, so algebraic endpoint factors
``|x - c|^p`` need no special rule; the distances to the panel ends are
formed from the tanh–sinh variable, never by subtraction.

The referee estimates its own error by halving the step: ``error_estimate``
is the difference between the rules with steps ``2^-(level-1)`` and
``2^-level``, a bound for the *coarse* rule; since tanh–sinh roughly doubles
the number of correct digits per halving (Bailey, Jeyabalan & Li, Experiment.
Math. 14 (2005) 317–329), the fine rule's error is about its square
(``checks["fine_rule_error_heuristic"]``).  ``verified`` asks the coarse
difference itself to be below 1e-15, so the reported figure is a bound, not
a heuristic.  Only polynomial fields and the
factors :class:`JacobiFactor`, :class:`PowerFactor`, :class:`ConstantFactor`
are supported (a smooth factor is a double-precision expression).
"""

from __future__ import annotations

import math

import mpmath
import numpy as np

from equilibrium.errors import InputError
from equilibrium.verification import failure_message, failure_policy, settle
from equilibrium.weight import ConstantFactor, JacobiFactor, PowerFactor, Weight

from .recurrence import RecurrenceCoefficients


def _truncated_intervals(weight: Weight, count: int, dps: int) -> list[tuple[float, float]]:
    """Σ cut where ``e^{-nV} (1+|x|)^{2K+2}`` is below ``10^-(dps+5) 8^-(2K+2)`` of its maximum.

    The extra ``8^{-(2K+2)}`` is generous room for the growth of unit-normalised
    polynomials of degree K away from where the weight is concentrated
    (Bernstein–Walsh: ``|P(x)| ≤ ‖P‖ |φ(x)|^K``, φ the exterior conformal map,
    of modulus ``≈ 4|x - c|/width`` far out).
    """
    c = weight.field.polynomial

    def log_size(x):
        return -weight.n * np.polynomial.polynomial.polyval(x, c) + (2 * count + 2) * np.log1p(np.abs(x))

    out = []
    drop = math.log(10.0) * (dps + 5) + (2 * count + 2) * math.log(8.0)
    for lo, hi in weight.on.intervals:
        finite = [e for e in (lo, hi) if math.isfinite(e)]
        centre = 0.5 * (lo + hi) if len(finite) == 2 else (finite[0] if finite else 0.0)
        grid = np.concatenate([centre - np.geomspace(1e-3, 1e4, 4000)[::-1], [centre], centre + np.geomspace(1e-3, 1e4, 4000)])
        grid = grid[(grid >= lo) & (grid <= hi)]
        with np.errstate(all="ignore"):
            values = log_size(grid)
        top = np.nanmax(values)
        keep = grid[values >= top - drop]
        a = lo if math.isfinite(lo) else float(keep.min())
        b = hi if math.isfinite(hi) else float(keep.max())
        out.append((a, b))
    return out


def _tanh_sinh(level: int, dps: int):
    """Nodes of the tanh–sinh rule on [-1, 1] with step 2^-level: (1+u, 1-u, weight) lists."""
    h = mpmath.mpf(2) ** (-level)
    half_pi = mpmath.pi / 2
    out = []
    tiny = mpmath.mpf(10) ** (-(dps + 8))
    j = 0
    while True:
        t = j * h
        s = half_pi * mpmath.sinh(t)
        e = mpmath.exp(2 * s)
        one_minus = 2 / (1 + e)          # 1 - tanh(s)
        one_plus = 2 * e / (1 + e)       # 1 + tanh(s)
        w = h * half_pi * mpmath.cosh(t) / mpmath.cosh(s) ** 2
        if w < tiny:
            break
        out.append((one_plus, one_minus, w))
        if j > 0:
            out.append((one_minus, one_plus, w))
        j += 1
    return out


def _nodes(weight: Weight, intervals, panels_per_unit: float, level: int, dps: int):
    """Composite rule: lists of x, log λ (mpf)."""
    n = mpmath.mpf(weight.n)
    coefficients = [mpmath.mpf(float(c)) for c in weight.field.polynomial]
    singular = []
    constant = mpmath.mpf(0)
    for f in weight.factors:
        if isinstance(f, ConstantFactor):
            constant += mpmath.log(mpmath.mpf(f.value))
        elif isinstance(f, (JacobiFactor, PowerFactor)):
            singular.extend((mpmath.mpf(c), mpmath.mpf(p)) for c, p in f.singular_points)
        else:
            raise InputError(f"the high-precision referee supports Jacobi, power and constant factors, not {f.description}")
    rule = _tanh_sinh(level, dps)
    xs, logs = [], []
    for lo, hi in intervals:
        cuts = sorted({lo, hi} | {float(c) for c, _ in singular if lo < float(c) < hi})
        for a, b in zip(cuts[:-1], cuts[1:]):
            pieces = max(2, int(math.ceil((b - a) * panels_per_unit)))
            edges = [mpmath.mpf(a) + (mpmath.mpf(b) - mpmath.mpf(a)) * i / pieces for i in range(pieces + 1)]
            for left, right in zip(edges[:-1], edges[1:]):
                half = (right - left) / 2
                for one_plus, one_minus, w in rule:
                    from_left = half * one_plus
                    to_right = half * one_minus
                    x = left + from_left
                    log_w = -n * mpmath.polyval(coefficients[::-1], x) + constant
                    for c, p in singular:
                        if c == left:
                            d = from_left
                        elif c == right:
                            d = to_right
                        else:
                            d = abs(x - c)
                        log_w += p * mpmath.log(d)
                    xs.append(x)
                    logs.append(log_w + mpmath.log(w * half))
    return xs, logs


def _stieltjes_fixed(xs, logs, count: int, bits: int):
    """Stieltjes procedure in binary fixed point: every number is an integer times 2^-bits.

    Python integers make the products and sums exact; each division or shift
    truncates by at most 2^-bits, so the absolute error of the inner products
    is about N 2^-bits.  (Much faster than mpf arithmetic for the same digits.)
    """
    one = 1 << bits
    top = max(logs)
    lam = [mpmath.exp(l - top) for l in logs]
    mass = mpmath.fsum(lam)
    r_cur = [int(mpmath.nint(mpmath.sqrt(l / mass) * one)) for l in lam]
    r_prev = [0] * len(xs)
    X = [int(mpmath.nint(x * one)) for x in xs]
    a = [0] * (count + 1)
    b = [0] * (count + 1)
    for k in range(count + 1):
        b[k] = sum(x * r * r for x, r in zip(X, r_cur)) >> (2 * bits)
        if k == count:
            break
        bk, ak = b[k], a[k]
        v = [((x - bk) * r - ak * q) >> bits for x, r, q in zip(X, r_cur, r_prev)]
        a2 = sum(t * t for t in v)                     # scaled by 2^(2 bits)
        a[k + 1] = math.isqrt(a2)                      # scaled by 2^bits
        r_prev, r_cur = r_cur, [(t << bits) // a[k + 1] for t in v]
    scale = mpmath.mpf(2) ** (-bits)
    return [mpmath.mpf(v) * scale for v in a], [mpmath.mpf(v) * scale for v in b], top + mpmath.log(mass)


def recurrence_coefficients_mp(weight: Weight, count: int, *, dps: int = 34, level: int = 5,
                               panels_per_unit: float | None = None,
                               on_failure: str = "raise") -> RecurrenceCoefficients:
    """Referee values of ``a_k, b_k`` (k ≤ count) with their own error estimate.

    Parameters
    ----------
    weight : a weight with a polynomial field.
    count : K (30–60 is the intended range).
    dps : decimal digits of the arithmetic.
    level : tanh–sinh step ``2^-level`` of the fine rule (the coarse rule uses ``2^-(level-1)``).
    panels_per_unit : panels per unit length (default from the support width and K).
    on_failure : ``"raise"`` (NumericalFailure when the step-halving difference exceeds
        1e-15) or ``"mark"`` (``verified = False``); see :mod:`equilibrium.verification`.
    """
    failure_policy(on_failure)
    if weight.field.polynomial is None:
        raise InputError("the high-precision referee needs a polynomial field")
    if count < 0 or count > 200:
        raise InputError("the high-precision referee is meant for 0 <= count <= 200")
    # the smallest kept weights are 10^-(dps+5) of the largest and grow later: keep their digits too
    bits = int(3.33 * (2 * dps + 10))
    with mpmath.workdps(dps):
        intervals = _truncated_intervals(weight, count, dps)
        length = sum(b - a for a, b in intervals)
        if panels_per_unit is None:
            panels_per_unit = max(2.0, (count + 8) / 2.0 / length)
        results = []
        for lev in (level - 1, level):
            xs, logs = _nodes(weight, intervals, panels_per_unit, lev, dps)
            results.append(_stieltjes_fixed(xs, logs, count, bits))
        (a0, b0, _), (a1, b1, log_mass) = results
        diff = max(max(abs(x - y) for x, y in zip(a0, a1)), max(abs(x - y) for x, y in zip(b0, b1)))
        a = np.array([float(v) for v in a1])
        b = np.array([float(v) for v in b1])
        checks = {"nodes": float(len(xs)), "step_halving_difference": float(diff),
                  "fine_rule_error_heuristic": float(diff) ** 2}
        message = failure_message(checks, {"step_halving_difference": 1e-15},
                                  what="the high-precision recurrence coefficients")
        return settle(RecurrenceCoefficients(
            a=a, b=b, n=weight.n, error_estimate=float(diff),
            method=f"mpmath {dps} digits, composite tanh-sinh (step 2^-{level}), fixed-point Stieltjes",
            weight_description=weight.description,
            checks=checks, log_mass=float(log_mass), verified=not message, message=message,
        ), on_failure)
