"""The weight ``w_n(x) = exp(-n V(x)) h(x)`` on a closed set Σ, and the factors of ``h``.

The weight sits beside :class:`equilibrium.Field` (V) and
:class:`equilibrium.IntervalSet` (Σ): it is the whole input of the problem.
The direct engine (``workbench.polynomials``) computes orthogonal polynomials
of it; the Szegő function (``gfunction.szego``) takes its factors through the
:class:`Factor` protocol.

The weight is never formed as a number: at large ``n`` the factor
``exp(-n V)`` overflows or underflows double precision long before the
polynomials stop being computable.  Everything downstream works with

    log w_n(x) = -n V(x) + Σ_j log h_j(x),

evaluated factor by factor.

Factors
-------
The n-independent factor ``h`` is a product of

* :class:`JacobiFactor` ``(b - x)^α (x - a)^β`` -- endpoint (Jacobi-type)
  factors, exponents ``> -1``;
* :class:`PowerFactor` ``|x - c|^{2γ}`` -- a Fisher–Hartwig-type root or pole,
  ``2γ > -1``;
* :class:`SmoothFactor` -- a positive smooth function given as an expression;
* :class:`ConstantFactor` -- a positive constant (it changes ``∫ w`` but not the
  recurrence coefficients).

Each factor lists its *singular points* ``(c, p)``: near ``c`` it behaves like
``|x - c|^p`` times a smooth positive function.  The discretisation puts a
panel break at every singular point inside Σ and integrates the adjacent
panels with Gauss–Jacobi rules for that exponent, so an algebraic endpoint
singularity costs no accuracy.  For that it needs the weight *without* the
singular part on a given panel: :meth:`Weight.log_weight` takes ``omit``, the
set of singular points whose ``|x - c|^p`` is carried by the quadrature rule.

Text form (``--factor`` and the case file's ``[factor] expression``)
--------------------------------------------------------------------
One parser for both.  The whole text must first be an expression of the field
grammar (:func:`equilibrium.expression.parse_expression`: its errors name the
column); then :func:`parse_factor` accepts products and quotients of
``(P)^E``, ``(P)**E``, ``x^E``, ``sqrt(P)``, ``abs(P)^E`` with ``P`` a
polynomial of degree one or two in ``x`` with real roots and ``E`` a constant
expression, and any other positive smooth expression (kept as a
:class:`SmoothFactor`).  Sub-expressions are parsed by
:func:`equilibrium.expression.parse_expression`; the recogniser here only
splits the text at top-level ``*`` and ``/`` and at the power operator.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field as dataclass_field
from typing import Callable, Iterable, Mapping, Protocol, Sequence, runtime_checkable

import numpy as np

from .errors import InputError
from .field import Field
from .sets import IntervalSet

__all__ = ["Factor", "JacobiFactor", "PowerFactor", "SmoothFactor", "ConstantFactor", "Weight", "parse_factor"]

#: two singular points closer than this (relative to max(1, |c|)) are one point
_SAME_POINT = 1e-14

_EXPONENT_RULE = "exponents must exceed -1"


def _check_exponent(p: float, where: str) -> float:
    p = float(p)
    if not math.isfinite(p):
        raise InputError(f"the exponent {p} of {where} is not finite; {_EXPONENT_RULE}")
    if p <= -1.0:
        raise InputError(
            f"the exponent {p:g} of {where} makes the weight non-integrable; {_EXPONENT_RULE}"
        )
    return p


# --------------------------------------------------------------------------- factors
@runtime_checkable
class Factor(Protocol):
    """What a factor of ``h`` provides (a :class:`typing.Protocol`; any object with these works).

    Attributes and methods
    ----------------------
    description : text of the factor (for tables and files).
    singular_points : pairs ``(c, p)``: near ``c`` the factor is ``|x - c|^p`` times a
        smooth positive function.
    log_value(x, omit) : ``log`` of the factor at real ``x``, without the ``|x - c|^p`` of
        the singular points listed in ``omit`` (carried by a quadrature rule instead).
    domain() : the closed interval on which the factor is defined and positive.

    The factors of this module subclass the protocol and inherit its defaults
    (no singular points, defined on the whole line).
    """

    description: str

    @property
    def singular_points(self) -> tuple[tuple[float, float], ...]:
        return ()

    def log_value(self, x: np.ndarray, omit: Iterable[float] = ()) -> np.ndarray:  # pragma: no cover
        raise NotImplementedError

    def domain(self) -> tuple[float, float]:
        """The closed interval on which the factor is defined (and positive)."""
        return (-math.inf, math.inf)


def _omitted(c: float, omit: Iterable[float]) -> bool:
    return any(abs(c - o) <= _SAME_POINT * max(1.0, abs(c)) for o in omit)


@dataclass(frozen=True)
class JacobiFactor(Factor):
    """``(b - x)^α (x - a)^β`` with α, β > -1.

    Use ``a = -inf`` (with β = 0) or ``b = +inf`` (with α = 0) for a single
    endpoint factor; the factor is defined on ``[a, b]``.
    """

    a: float
    b: float
    alpha: float
    beta: float

    def __post_init__(self) -> None:
        _check_exponent(self.alpha, f"(b-x) at b = {self.b:g}")
        _check_exponent(self.beta, f"(x-a) at a = {self.a:g}")
        if self.alpha != 0 and not math.isfinite(self.b):
            raise InputError("a Jacobi factor (b-x)^alpha needs a finite b")
        if self.beta != 0 and not math.isfinite(self.a):
            raise InputError("a Jacobi factor (x-a)^beta needs a finite a")
        if math.isfinite(self.a) and math.isfinite(self.b) and not self.a < self.b:
            raise InputError(f"a Jacobi factor needs a < b, got a = {self.a:g}, b = {self.b:g}")

    @property
    def description(self) -> str:  # type: ignore[override]
        parts = []
        if self.alpha != 0:
            parts.append(f"({self.b:.17g}-x)^{self.alpha:.17g}")
        if self.beta != 0:
            parts.append(f"(x-{self.a:.17g})^{self.beta:.17g}")
        return "*".join(parts) or "1"

    @property
    def singular_points(self) -> tuple[tuple[float, float], ...]:
        points = []
        if self.beta != 0:
            points.append((float(self.a), float(self.beta)))
        if self.alpha != 0:
            points.append((float(self.b), float(self.alpha)))
        return tuple(points)

    def domain(self) -> tuple[float, float]:
        lo = self.a if self.beta != 0 else -math.inf
        hi = self.b if self.alpha != 0 else math.inf
        return (lo, hi)

    def log_value(self, x: np.ndarray, omit: Iterable[float] = ()) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        out = np.zeros_like(x)
        omit = tuple(omit)
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.alpha != 0 and not _omitted(self.b, omit):
                out = out + self.alpha * np.log(self.b - x)
            if self.beta != 0 and not _omitted(self.a, omit):
                out = out + self.beta * np.log(x - self.a)
        return out


@dataclass(frozen=True)
class PowerFactor(Factor):
    """``|x - c|^{2γ}`` with 2γ > -1 (a Fisher–Hartwig root or integrable pole)."""

    c: float
    gamma: float

    def __post_init__(self) -> None:
        _check_exponent(2.0 * self.gamma, f"abs(x-{self.c:g}) (2*gamma)")

    @property
    def description(self) -> str:  # type: ignore[override]
        return f"abs(x-{self.c:.17g})^{2.0 * self.gamma:.17g}"

    @property
    def singular_points(self) -> tuple[tuple[float, float], ...]:
        return ((float(self.c), 2.0 * float(self.gamma)),) if self.gamma != 0 else ()

    def log_value(self, x: np.ndarray, omit: Iterable[float] = ()) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        if self.gamma == 0 or _omitted(self.c, tuple(omit)):
            return np.zeros_like(x)
        with np.errstate(divide="ignore"):
            return 2.0 * self.gamma * np.log(np.abs(x - self.c))


@dataclass(frozen=True)
class ConstantFactor(Factor):
    """A positive constant."""

    value: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.value) and self.value > 0):
            raise InputError(f"a constant factor must be positive and finite, got {self.value}")

    @property
    def description(self) -> str:  # type: ignore[override]
        return f"{self.value:.17g}"

    def log_value(self, x: np.ndarray, omit: Iterable[float] = ()) -> np.ndarray:
        return np.full(np.shape(x), math.log(self.value))


@dataclass(frozen=True)
class SmoothFactor(Factor):
    """A smooth factor ``f(x) > 0`` on Σ given by a vectorised callable.

    ``text`` describes it.  Positivity is checked wherever it is evaluated:
    a non-positive or non-finite value raises :class:`InputError`.
    """

    function: Callable[[np.ndarray], np.ndarray]
    text: str

    @property
    def description(self) -> str:  # type: ignore[override]
        return self.text

    def log_value(self, x: np.ndarray, omit: Iterable[float] = ()) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        with np.errstate(all="ignore"):
            values = np.asarray(self.function(x), dtype=float) + np.zeros_like(x)
        bad = ~(np.isfinite(values) & (values > 0))
        if np.any(bad):
            where = float(x[bad].ravel()[0])
            raise InputError(
                f"the factor '{self.text}' is not positive and finite at x = {where:.6g}; "
                "a smooth factor must be positive on the set (write abs(...)^p for a root)"
            )
        return np.log(values)


# --------------------------------------------------------------------------- the weight
@dataclass(frozen=True)
class Weight:
    """``w_n(x) = exp(-n V(x)) h(x)`` on Σ, ``h = ∏ factors``.

    Parameters
    ----------
    field : the external field V.
    n : the scaling, ``n > 0`` (``n = 1`` for a fixed weight).
    on : the set Σ.
    factors : the factors of ``h``.
    """

    field: Field
    n: float
    on: IntervalSet = dataclass_field(default_factory=IntervalSet.real_line)
    factors: tuple[Factor, ...] = ()

    def __post_init__(self) -> None:
        n = float(self.n)
        if not (math.isfinite(n) and n > 0):
            raise InputError(f"n = {self.n} must be a positive finite number")
        object.__setattr__(self, "n", n)
        object.__setattr__(self, "factors", tuple(self.factors))
        if getattr(self.field, "is_zero", False) and not self.on.is_compact:
            raise InputError("V = 0 needs a compact set; give a bounded set a:b (e.g. -1:1)", about="set")
        lo, hi = self.on.hull
        for factor in self.factors:
            d_lo, d_hi = factor.domain()
            if lo < d_lo or hi > d_hi:
                raise InputError(
                    f"the factor {factor.description} is defined on [{d_lo:g}, {d_hi:g}] but the set "
                    f"is {self.on}; restrict the set (e.g. to {max(lo, d_lo):g}:{min(hi, d_hi):g})", about="set"
                )

    # -- singular structure ---------------------------------------------------
    @property
    def singular_points(self) -> tuple[tuple[float, float], ...]:
        """Merged ``(c, p)``: near ``c`` the weight behaves like ``|x - c|^p``."""
        merged: list[list[float]] = []
        for factor in self.factors:
            for c, p in factor.singular_points:
                for item in merged:
                    if abs(item[0] - c) <= _SAME_POINT * max(1.0, abs(c)):
                        item[1] += p
                        break
                else:
                    merged.append([c, p])
        for c, p in merged:
            _check_exponent(p, f"the weight at x = {c:g} (combined factors)")
        return tuple(sorted((float(c), float(p)) for c, p in merged if p != 0))

    def log_weight(self, x: np.ndarray, omit: Iterable[float] = ()) -> np.ndarray:
        """``-n V(x) + Σ log h_j(x)`` without the ``|x - c|^p`` of points in ``omit``."""
        x = np.asarray(x, dtype=float)
        omit = tuple(omit)
        with np.errstate(all="ignore"):
            out = -self.n * np.asarray(self.field.V(x), dtype=float) + np.zeros_like(x)
        for factor in self.factors:
            out = out + factor.log_value(x, omit)
        return out

    def log_weight_pair(self, x: np.ndarray, omit: Iterable[float] = ()) -> tuple[np.ndarray, np.ndarray]:
        """``(hi, lo)``: ``log w_n(x)`` as an unevaluated sum of two doubles (``hi`` the double nearest to it).

        For a polynomial field ``-n V(x)`` is evaluated by the compensated Horner scheme
        (:func:`equilibrium.compensated.scaled_polynomial`, Graillat–Langlois–Louvet 2005) to
        about ``eps²`` relative, so ``hi + lo`` carries ``log w_n`` at large ``n`` to far
        below the ``eps |n V|`` rounding of a plain double (``~10⁻¹¹`` at ``n = 10⁵``).  The
        factors of ``h`` are of order one and enter as doubles.  For any other field ``lo``
        is zero and ``hi`` is :meth:`log_weight` (plain double evaluation).
        """
        coefficients = getattr(self.field, "polynomial", None)
        if coefficients is None:
            value = self.log_weight(x, omit)
            return value, np.zeros_like(value)
        from .compensated import scaled_polynomial, two_sum

        x = np.asarray(x, dtype=float)
        omit = tuple(omit)
        with np.errstate(all="ignore"):
            hi, lo = scaled_polynomial(-self.n, coefficients, x)
        hi = hi + np.zeros_like(x)
        lo = lo + np.zeros_like(x)
        for factor in self.factors:
            value = np.asarray(factor.log_value(x, omit), dtype=float)
            with np.errstate(invalid="ignore"):
                hi, error = two_sum(hi, value)
            lo = lo + error
        # infinite values (a factor's zero at an end point) carry no low part
        lo = np.where(np.isfinite(hi), lo, 0.0)
        with np.errstate(invalid="ignore"):
            hi, lo = two_sum(hi, lo)
        return hi, np.where(np.isfinite(hi), lo, 0.0)

    # -- text -------------------------------------------------------------------
    @property
    def factor_description(self) -> str:
        return "*".join(f.description for f in self.factors) or "1"

    @property
    def description(self) -> str:
        return f"exp(-{self.n:.17g}*({self.field.description})) * {self.factor_description} on {self.on}"


# --------------------------------------------------------------------------- parsing
_TOKEN = re.compile(r"\s*(?:(\*\*)|([0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)|([A-Za-z_][A-Za-z_0-9]*)|(.))")


def _tokens(text: str) -> list[str]:
    out = []
    for match in _TOKEN.finditer(text):
        token = next((g for g in match.groups() if g is not None), None)
        if token is None or token.strip() == "":
            continue
        out.append(token)
    return out


def _split_top(tokens: Sequence[str], separators: set[str]) -> list[tuple[str | None, list[str]]]:
    """Split at top-level separators; returns (separator before piece, piece tokens)."""
    depth = 0
    pieces: list[tuple[str | None, list[str]]] = [(None, [])]
    for token in tokens:
        if token == "(":
            depth += 1
        elif token == ")":
            depth -= 1
            if depth < 0:
                raise InputError("unbalanced ')' in the factor")
        if depth == 0 and token in separators:
            pieces.append((token, []))
        else:
            pieces[-1][1].append(token)
    if depth != 0:
        raise InputError("unbalanced '(' in the factor")
    return pieces


def _join(tokens: Sequence[str]) -> str:
    return "".join(tokens)


def _is_wrapped(tokens: Sequence[str], head: str | None) -> bool:
    """Is the token list ``head(...)`` (or ``(...)`` for head None) as one group?"""
    start = 0 if head is None else 1
    if head is not None and (len(tokens) < 3 or tokens[0] != head):
        return False
    if len(tokens) < start + 2 or tokens[start] != "(" or tokens[-1] != ")":
        return False
    depth = 0
    for k, token in enumerate(tokens[start:], start=start):
        depth += token == "("
        depth -= token == ")"
        if depth == 0 and k != len(tokens) - 1:
            return False
    return True


def _constant(expression_text: str, parameters: Mapping[str, float], what: str) -> float:
    from .expression import parse_expression

    expression = parse_expression(expression_text, dict(parameters), variable="x")
    probe = np.array([0.3, 1.7])
    with np.errstate(all="ignore"):
        values = np.asarray(expression(probe), dtype=float) + np.zeros(2)
    if not np.all(np.isfinite(values)) or abs(values[0] - values[1]) > 1e-14 * max(1.0, abs(values[0])):
        raise InputError(f"the {what} {expression_text!r} must be a finite constant (no x)")
    return float(values[0])


def _polynomial_base(tokens: Sequence[str], parameters: Mapping[str, float]) -> np.ndarray | None:
    """Ascending coefficients if the tokens are a polynomial of degree <= 2 in x."""
    if "x" not in tokens:
        return None
    from .expression import parse_expression

    expression = parse_expression(_join(tokens), dict(parameters), variable="x")
    probe = np.array([-1.0, 0.0, 1.0, 0.37, -2.9, 4.1])
    with np.errstate(all="ignore"):
        values = np.asarray(expression(probe), dtype=float) + np.zeros(probe.size)
    if not np.all(np.isfinite(values)):
        return None
    # coefficients from the values at -1, 0, 1 (exact for the usual short decimal coefficients)
    m1, p0, p1 = values[:3]
    fit = np.array([p0, 0.5 * (p1 - m1), 0.5 * (p1 + m1) - p0])
    check = np.polynomial.polynomial.polyval(probe[3:], fit)
    if np.max(np.abs(check - values[3:])) > 1e-12 * max(1.0, np.max(np.abs(values))):
        return None
    fit[np.abs(fit) < 1e-15 * np.max(np.abs(fit))] = 0.0
    return np.trim_zeros(fit, "b")


def _real_roots(coefficients: np.ndarray) -> np.ndarray | None:
    """Real roots of c0 + c1 x (+ c2 x²), stable formulas; None for a complex pair."""
    if coefficients.size == 2:
        return np.array([-coefficients[0] / coefficients[1]])
    c0, c1, c2 = coefficients
    disc = c1 * c1 - 4.0 * c0 * c2
    if disc < -1e-14 * max(c1 * c1, abs(4.0 * c0 * c2)):
        return None
    if c1 == 0:
        r = math.sqrt(-c0 / c2) if c0 * c2 < 0 else 0.0
        return np.array([-r, r])
    q = -0.5 * (c1 + math.copysign(math.sqrt(max(disc, 0.0)), c1))  # no cancellation (Numerical Recipes §5.6)
    return np.sort(np.array([q / c2, c0 / q]))


def _snap(r: float, on: IntervalSet | None) -> float:
    """Put a root that is an end of Σ up to rounding exactly on that end."""
    if on is None:
        return r
    for e in on.finite_endpoints:
        if abs(r - e) <= 8e-16 * max(1.0, abs(e)):
            return float(e)
    return r


def _root_factors(coefficients: np.ndarray, exponent: float, absolute: bool, text: str,
                  on: IntervalSet | None) -> list[Factor] | None:
    """|P|^E for P = c ∏(x - r_j) as constant × point factors; None if roots are complex."""
    degree = coefficients.size - 1
    if degree < 1:
        return None
    roots = _real_roots(coefficients)
    if roots is None:
        return None
    roots = np.array([_snap(float(r), on) for r in roots])
    if degree == 2 and abs(roots[0] - roots[1]) <= 1e-12 * max(1.0, abs(roots[0])):
        roots = roots[:1]
        exponent_each = [2.0 * exponent]
        absolute = True  # (x - r)^2 keeps its sign
    else:
        exponent_each = [exponent] * roots.size
    leading = float(coefficients[-1])
    factors: list[Factor] = []
    if abs(leading) ** exponent != 1.0:
        factors.append(ConstantFactor(abs(leading) ** exponent))
    for r, p in zip(roots, exponent_each):
        r = float(r)
        if absolute:
            factors.append(PowerFactor(r, p / 2.0))
            continue
        # without abs, P must keep one sign on Σ: every root lies outside the interior of Σ
        if on is not None:
            inside = any(a < r < b for a, b in on.intervals)
            if inside:
                raise InputError(
                    f"the base of {text!r} changes sign at x = {r:g} inside the set; "
                    f"write abs(...)^p for a root inside the set"
                )
            lo, hi = on.hull
            if r >= hi:
                factors.append(JacobiFactor(-math.inf, r, p, 0.0))
            else:
                factors.append(JacobiFactor(r, math.inf, 0.0, p))
        else:
            factors.append(PowerFactor(r, p / 2.0))
    # the sign of P on Σ must be positive when abs is absent
    if not absolute and on is not None:
        probe = _interior_probe(on)
        sign = np.polynomial.polynomial.polyval(probe, coefficients)
        if sign <= 0:
            raise InputError(f"the base of {text!r} is negative on the set; a factor must be positive")
    return factors


def _interior_probe(on: IntervalSet) -> float:
    a, b = on.intervals[0]
    if math.isfinite(a) and math.isfinite(b):
        return 0.5 * (a + b)
    if math.isfinite(a):
        return a + 1.0
    if math.isfinite(b):
        return b - 1.0
    return 0.0


def parse_factor(text: str, parameters: Mapping[str, float] | None = None,
                 on: IntervalSet | None = None) -> tuple[Factor, ...]:
    """Parse the text of ``h`` into factors (see the module docstring).

    Parameters
    ----------
    text : e.g. ``"(1-x)^0.5*(1+x)^-0.25"``, ``"x^alpha"``, ``"abs(x-0.3)^(2*g)"``,
        ``"(1-x^2)^a*exp(x)"``.
    parameters : values of names used in the text.
    on : the set Σ; needed to decide the side of an endpoint factor ``(P)^E``
        without ``abs`` (the root of P must be an end of Σ or outside it).

    Raises
    ------
    InputError : exponents ≤ -1 ("exponents must exceed -1"), a base that
        changes sign on Σ, unparsable text.
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty factor; give an expression such as (1-x)^0.5*(1+x)^0.5")
    if len(text) > 2000:
        raise InputError("the factor text is longer than 2000 characters")
    parameters = dict(parameters or {})
    from .expression import parse_expression

    # the whole text is first an expression of the field grammar: its errors name the column
    parse_expression(text, parameters, variable="x")
    tokens = _tokens(text)
    factors: list[Factor] = []
    smooth_parts: list[tuple[str, int]] = []  # (text, +1 multiply / -1 divide)
    for separator, piece in _split_top(tokens, {"*", "/"}):
        if not piece:
            raise InputError(f"the factor {text!r} has an empty product term")
        sign = -1.0 if separator == "/" else 1.0
        recognised = _recognise_power(piece, parameters, on, sign)
        if recognised is None:
            smooth_parts.append((_join(piece), -1 if sign < 0 else 1))
        else:
            factors.extend(recognised)
    if smooth_parts:
        from .expression import parse_expression

        numerator = [parse_expression(t, parameters, variable="x") for t, s in smooth_parts if s > 0]
        denominator = [parse_expression(t, parameters, variable="x") for t, s in smooth_parts if s < 0]
        description = "*".join(f"({t})" for t, s in smooth_parts if s > 0) or "1"
        if denominator:
            description += "/" + "/".join(f"({t})" for t, s in smooth_parts if s < 0)

        def smooth(x, numerator=tuple(numerator), denominator=tuple(denominator)):
            value = np.ones_like(np.asarray(x, dtype=float))
            for e in numerator:
                value = value * np.asarray(e(x), dtype=float)
            for e in denominator:
                value = value / np.asarray(e(x), dtype=float)
            return value

        factors.append(SmoothFactor(smooth, description))
    return tuple(factors)


def _recognise_power(piece: list[str], parameters: Mapping[str, float], on: IntervalSet | None,
                     sign: float) -> list[Factor] | None:
    """``BASE ^ E`` with a polynomial base of degree ≤ 2 → point factors, else None."""
    parts = _split_top(piece, {"^", "**"})
    base = parts[0][1]
    if len(parts) == 1:
        exponent_text = None
    else:
        # the exponent is everything after the first power operator (right associative)
        exponent_text = _join(piece[len(base) + 1:])
    exponent = 1.0 if exponent_text is None else _constant(exponent_text, parameters, "exponent")
    absolute = False
    if _is_wrapped(base, "abs"):
        absolute = True
        inner = base[2:-1]
    elif _is_wrapped(base, "sqrt"):
        inner = base[2:-1]
        exponent *= 0.5
        if _is_wrapped(inner, "abs"):
            absolute = True
            inner = inner[2:-1]
    elif _is_wrapped(base, None):
        inner = base[1:-1]
    elif base == ["x"]:
        inner = base
    else:
        return None
    coefficients = _polynomial_base(inner, parameters)
    if coefficients is None:
        return None
    exponent *= sign
    where = f"'{_join(piece)}'"
    roots_degree = coefficients.size - 1
    if roots_degree < 1:
        return None
    _check_exponent(exponent, where)
    return _root_factors(coefficients, exponent, absolute, _join(piece), on)
