"""The sympy side of :mod:`equilibrium.expression`: syntax trees to sympy and back.

Only derivatives of non-polynomial fields, :meth:`Expression.to_sympy` and the
polynomial coefficients of expressions with irrational constants need sympy,
so this module (and sympy, ~0.3 s to import) is loaded only then.  sympy objects
are built node by node, never from a string; the walk back accepts only the
node types listed in :func:`_from_sympy`.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import sympy

from .expression import (ALLOWED_FUNCTIONS, MAX_EXPONENT, Call, ExpressionError, Negate, Node, Number, Pi,
                         Power, Product, Sum, Variable, Parameter, _evaluate, _facts)

class _RealAbs(sympy.Function):
    """|u| for a u that sympy cannot prove real (``log(x)``, ``x**0.3``).

    The field is real wherever it is defined, so d|u|/dx = sign(u) u'(x); sympy's
    own ``Abs`` would bring in re/im/atan2 for such arguments.
    """

    @classmethod
    def eval(cls, argument):
        if argument.is_extended_real or argument.is_Number:
            return sympy.Abs(argument)
        return None

    def fdiff(self, argindex=1):
        return _RealSign(self.args[0])


class _RealSign(sympy.Function):
    """sign(u) for a real-where-defined u, with d sign(u)/du = 2 delta(u)."""

    @classmethod
    def eval(cls, argument):
        if argument.is_extended_real or argument.is_Number:
            return sympy.sign(argument)
        return None

    def fdiff(self, argindex=1):
        return 2 * sympy.DiracDelta(self.args[0])


_SYMPY_FUNCTIONS = {"exp": sympy.exp, "log": sympy.log, "sqrt": sympy.sqrt, "sin": sympy.sin,
                    "cos": sympy.cos, "sinh": sympy.sinh, "cosh": sympy.cosh, "tanh": sympy.tanh,
                    "abs": sympy.Abs, "sign": sympy.sign}
_FROM_SYMPY = {sympy.exp: "exp", sympy.log: "log", sympy.sin: "sin", sympy.cos: "cos", sympy.sinh: "sinh",
               sympy.cosh: "cosh", sympy.tanh: "tanh", sympy.Abs: "abs", _RealAbs: "abs",
               sympy.sign: "sign", _RealSign: "sign"}


def _sympy_number(value: float | Fraction) -> sympy.Rational:
    """Exact rational: literals keep their decimal value, floats their shortest repr (0.3 -> 3/10)."""
    exact = value if isinstance(value, Fraction) else Fraction(repr(float(value)))
    return sympy.Rational(exact.numerator, exact.denominator)


def _exact_power_too_large(base: sympy.Expr, exponent: sympy.Expr, p: float) -> bool:
    """Would sympy build huge exact numbers for this constant power ``base^p``?

    sympy raises rationals to integer (parts of) powers exactly and factors
    the results, so ``0.001^1e10`` or ``(19.768^19.768)^-18.356`` would never
    finish.  Exact forms are kept only for integer ``|p| <= 64`` with a result
    below 2**16 bits, and for ``r^(a/b)`` with small rational ``r`` (below
    2**32), ``b <= 1000``, ``|p| <= 64`` (``2^0.5`` -> sqrt(2)); other constant
    powers are taken at their double-precision value.
    """
    if abs(p) > MAX_EXPONENT:
        return True
    if p.is_integer():
        return sum(r.p.bit_length() + r.q.bit_length() for r in base.atoms(sympy.Rational)) * abs(p) > 2**16
    small = base.is_Rational and max(abs(base.p), base.q) < 2**32
    return not (small and exponent.is_Rational and exponent.q <= 1000)


def _to_sympy(node: Node, symbol: sympy.Symbol, calculus: bool) -> sympy.Expr:
    """Build sympy objects node by node (``calculus`` swaps in the real-argument |u| for differentiation)."""
    def power(n: Power, base: sympy.Expr, exponent: sympy.Expr) -> sympy.Expr:
        """base^exponent, with floats where sympy would build huge exact numbers."""
        base_value, p = _facts(n.base).value, _facts(n.exponent).value
        if base_value is not None and p is not None:
            if _exact_power_too_large(base, exponent, p):
                with np.errstate(all="ignore"):
                    return _sympy_number(float(_evaluate(n, None)))
        elif p is not None:
            if p.is_integer():      # x^tanh(19): numpy computes x^1.0, so sympy must see x^1
                exponent = sympy.Integer(int(p))
            elif exponent.is_Rational and exponent.q > 1000:
                # x^24.754423046738832 = x^(1547151440421177/62500000000000): sympy's assumption
                # queries would build polynomials of that degree; a float exponent avoids them
                exponent = sympy.Float(p)
        elif base_value is not None:
            # c^f(x): a float base keeps sympy from splitting off c^k exactly for a large
            # constant part k of f (0.001^(x - 1e10) would build a 3e10-digit rational)
            base = sympy.Float(base_value)
        return sympy.Pow(base, exponent)

    def walk(n: Node) -> sympy.Expr:
        if isinstance(n, Number):
            return _sympy_number(n.exact if n.exact is not None else n.value)
        if isinstance(n, Pi):
            return sympy.pi
        if isinstance(n, Variable):
            return symbol
        if isinstance(n, Parameter):
            return _sympy_number(n.value)
        if isinstance(n, Negate):
            return -walk(n.operand)
        if isinstance(n, Sum):
            return sympy.Add(*[-walk(t) if m else walk(t) for t, m in zip(n.terms, n.negated)])
        if isinstance(n, Product):
            return sympy.Mul(*[sympy.Pow(walk(f), -1) if d else walk(f) for f, d in zip(n.factors, n.divided)])
        if isinstance(n, Power):
            return power(n, walk(n.base), walk(n.exponent))
        if calculus and n.function in ("abs", "sign"):
            return (_RealAbs if n.function == "abs" else _RealSign)(walk(n.argument))
        return _SYMPY_FUNCTIONS[n.function](walk(n.argument))
    return walk(node)


def _from_sympy(expr: sympy.Expr, variable: str) -> Node:
    """Convert a sympy tree back into the evaluator's tree; unknown node types are refused."""
    def number(value: Fraction) -> Node:
        magnitude = abs(value)
        if max(magnitude.numerator, magnitude.denominator) > 2**53:   # not p/q in doubles: one number
            try:
                node: Node = Number(float(magnitude), magnitude)
            except OverflowError:
                raise ExpressionError("the symbolic form has a coefficient beyond double precision "
                                      "(|c| > 1.8e308); rescale the expression") from None
            return Negate(node) if value < 0 else node
        node = Number(float(magnitude.numerator), Fraction(magnitude.numerator))
        if magnitude.denominator != 1:
            node = Product((node, Number(float(magnitude.denominator), Fraction(magnitude.denominator))),
                           (False, True))
        return Negate(node) if value < 0 else node

    def power(base: sympy.Expr, exponent: sympy.Expr) -> sympy.Expr:
        return base if exponent == 1 else sympy.Pow(base, exponent, evaluate=False)

    def walk(e: sympy.Expr) -> Node:
        if e.is_Symbol and e.name == variable:
            return Variable(variable)
        if e.is_Rational:
            return number(Fraction(int(e.p), int(e.q)))
        if e.is_Float and math.isfinite(float(e)):     # from a float base: one number, its repr
            value = float(e)
            return Negate(Number(-value)) if value < 0 else Number(value)
        if e is sympy.pi:
            return Pi()
        if e is sympy.E:
            return Call("exp", Number(1.0, Fraction(1)))
        if e.is_Add:
            first, *rest = e.as_ordered_terms()
            terms, negated = [walk(first)], [False]
            for term in rest:
                minus = term.could_extract_minus_sign()
                terms.append(walk(-term if minus else term))
                negated.append(minus)
            return Sum(tuple(terms), tuple(negated))
        if e.is_Mul:
            if e.could_extract_minus_sign():   # -a*b reads better than -(a*b); equal in IEEE arithmetic
                positive = walk(-e)
                if isinstance(positive, Product) and not positive.divided[0]:
                    return Product((Negate(positive.factors[0]),) + positive.factors[1:], positive.divided)
                return Negate(positive)
            numerator, denominator = [], []
            for factor in e.as_ordered_factors():
                if factor.is_Rational:
                    numerator.append(sympy.Integer(factor.p))
                    denominator.append(sympy.Integer(factor.q))
                elif factor.is_Pow and factor.exp.is_Number and factor.exp.is_negative:
                    denominator.append(power(factor.base, -factor.exp))
                else:
                    numerator.append(factor)
            numerator = [f for f in numerator if f != 1] or [sympy.Integer(1)]
            denominator = [f for f in denominator if f != 1]
            factors = [walk(f) for f in numerator]
            if len(denominator) > 1:     # a/(b*c) reads better than a/b/c
                factors.append(Product(tuple(walk(f) for f in denominator), (False,) * len(denominator)))
            elif denominator:
                factors.append(walk(denominator[0]))
            if len(factors) == 1:
                return factors[0]
            return Product(tuple(factors), (False,) * len(numerator) + (True,) * (len(factors) - len(numerator)))
        if e.is_Pow:
            base, exponent = e.args
            if exponent == sympy.Rational(1, 2):
                return Call("sqrt", walk(base))
            if exponent.is_Number and exponent.is_negative:
                return Product((Number(1.0, Fraction(1)), walk(power(base, -exponent))),
                               (False, True))
            return Power(walk(base), walk(exponent))
        if e.func in _FROM_SYMPY and len(e.args) == 1:
            return Call(_FROM_SYMPY[e.func], walk(e.args[0]))
        if e in (sympy.nan, sympy.zoo, sympy.oo, -sympy.oo):
            raise ExpressionError("the symbolic form is undefined or infinite (e.g. log(0) from 0^x), which "
                                  "cannot be evaluated here; rewrite the expression")
        if e is sympy.I:
            raise ExpressionError("the symbolic form is complex-valued (e.g. a negative constant raised to a "
                                  "power that depends on x), which cannot be evaluated here; use a positive base")
        raise ExpressionError(f"the symbolic form contains {type(e).__name__}, which cannot be evaluated "
                              "here; use the functions " + ", ".join(ALLOWED_FUNCTIONS))
    return walk(expr)
