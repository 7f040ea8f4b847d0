r"""Whitelisted arithmetic expressions for external fields and weight factors.

Text such as ``x**4/4 - t*x**2/2`` or ``(1-x)^0.5*(1+x)^-0.3`` is read by a
hand-written tokenizer and recursive-descent parser into a small immutable
syntax tree.  Nothing in the input is ever run as code: there is no
``eval``, ``exec``, ``compile`` or string-to-sympy conversion anywhere.  The
tree is evaluated with numpy, and turned into sympy by constructing sympy
objects node by node (for exact derivatives and polynomial detection).

Grammar (EBNF; whitespace is spaces and tabs)::

    expression = term , { ( "+" | "-" ) , term } ;
    term       = signed , { ( "*" | "/" ) , signed } ;
    signed     = { "+" | "-" } , power ;
    power      = primary , [ ( "**" | "^" ) , signed ] ;      (* right-assoc *)
    primary    = number | "pi" | variable | parameter
               | function , "(" , expression , ")"
               | "(" , expression , ")" ;
    function   = "exp" | "log" | "sqrt" | "sin" | "cos"
               | "sinh" | "cosh" | "tanh" | "abs" ;
    number     = ( digits , [ "." , [ digits ] ] | "." , digits ) ,
                 [ ( "e" | "E" ) , [ "+" | "-" ] , digits ] ;

So ``-x^2`` is ``-(x^2)``, ``2^3^2`` is ``2^9`` and ``x^-2`` is allowed, as
in Python.  Implicit multiplication (``2x``) is refused.  Further refusals,
each with a one-line :class:`ExpressionError`: unknown names, attribute
access, any other call, strings, brackets, keywords, ``=``, ``;``,
backslashes, non-ASCII text, unbalanced parentheses, a constant exponent
with ``|p| > 64`` on a base that depends on the variable, constant
subexpressions that are not finite in double precision (``10**400``,
``log(-1)``), division by a zero constant, more than 4000 characters, and
nesting deeper than 200 levels.

Evaluation semantics.  Real input is evaluated in real double arithmetic
(``log`` of a negative number is ``nan``); complex input uses numpy's
principal branches.  ``abs`` is not analytic: on complex input it returns
the modulus.  :attr:`Expression.analytic` says whether the principal-branch
formula is analytic near the real line (see :func:`_facts`).

Derivatives are sympy.diff of the tree's sympy form, walked back into a
tree (only the node types listed in :func:`_from_sympy` are accepted).
They are pointwise derivatives: ``d|u|/dx = sign(u) u'`` with
``sign(0) = 0``, Dirac masses dropped.  Their text may contain ``sign``,
which is not accepted as input.
"""

from __future__ import annotations

import keyword
import math
import re
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property
from types import MappingProxyType
from typing import Mapping, NamedTuple, Sequence, Union

import numpy as np
from numpy.typing import ArrayLike

from equilibrium.errors import InputError

__all__ = ["ALLOWED_FUNCTIONS", "Expression", "ExpressionError", "parse_expression"]

ALLOWED_FUNCTIONS: tuple[str, ...] = ("exp", "log", "sqrt", "sin", "cos", "sinh", "cosh", "tanh", "abs")

MAX_LENGTH = 4000
MAX_DEPTH = 200
MAX_EXPONENT = 64
MAX_POLYNOMIAL_DEGREE = 512


class ExpressionError(InputError):
    """An expression text (or parameter) that is refused; the message is one line."""


# --------------------------------------------------------------------------- syntax tree
@dataclass(frozen=True)
class Number:
    """A non-negative constant; ``exact`` is the literal's exact rational value."""
    value: float
    exact: Fraction | None = None


@dataclass(frozen=True)
class Pi:
    """The constant pi."""


@dataclass(frozen=True)
class Variable:
    name: str


@dataclass(frozen=True)
class Parameter:
    name: str
    value: float


@dataclass(frozen=True)
class Negate:
    operand: "Node"


@dataclass(frozen=True)
class Sum:
    """``terms[0] ± terms[1] ± ...`` evaluated left to right; ``negated[i]`` marks subtraction."""
    terms: tuple["Node", ...]
    negated: tuple[bool, ...]


@dataclass(frozen=True)
class Product:
    """``factors[0] */ factors[1] */ ...`` evaluated left to right; ``divided[i]`` marks division."""
    factors: tuple["Node", ...]
    divided: tuple[bool, ...]


@dataclass(frozen=True)
class Power:
    base: "Node"
    exponent: "Node"


@dataclass(frozen=True)
class Call:
    """A one-argument function; ``sign`` occurs only in derivatives (d|u|/du = sign u)."""
    function: str
    argument: "Node"


Node = Union[Number, Pi, Variable, Parameter, Negate, Sum, Product, Power, Call]

_NUMPY_FUNCTIONS = {"exp": np.exp, "log": np.log, "sqrt": np.sqrt, "sin": np.sin, "cos": np.cos,
                    "sinh": np.sinh, "cosh": np.cosh, "tanh": np.tanh, "abs": np.abs, "sign": np.sign}


def _children(node: Node) -> tuple[Node, ...]:
    if isinstance(node, Negate):
        return (node.operand,)
    if isinstance(node, Sum):
        return node.terms
    if isinstance(node, Product):
        return node.factors
    if isinstance(node, Power):
        return (node.base, node.exponent)
    if isinstance(node, Call):
        return (node.argument,)
    return ()


def _fold(first, rest, flags, inverse, forward, backward):
    """Left-to-right chain ``first op rest[0] op rest[1] ...`` (the order of the text)."""
    acc = inverse(first) if flags[0] else first
    for value, flag in zip(rest, flags[1:]):
        acc = (backward if flag else forward)(acc, value)
    return acc


def _apply(node: Node, args: list):
    """One evaluation step: the value of ``node`` (not a Variable) from its children's values."""
    if isinstance(node, Number):
        return np.float64(node.value)
    if isinstance(node, Pi):
        return np.float64(np.pi)
    if isinstance(node, Parameter):
        return np.float64(node.value)
    if isinstance(node, Negate):
        return np.negative(args[0])
    if isinstance(node, Sum):
        return _fold(args[0], args[1:], node.negated, np.negative, np.add, np.subtract)
    if isinstance(node, Product):
        return _fold(args[0], args[1:], node.divided, lambda v: np.divide(1.0, v), np.multiply, np.divide)
    if isinstance(node, Power):
        return np.power(args[0], args[1])
    return _NUMPY_FUNCTIONS[node.function](args[0])


def _evaluate(node: Node, x):
    """Walk the tree with numpy (call inside ``np.errstate``); ``x`` is the variable's value, or a
    dict name -> value for an expression in several variables (:meth:`Expression.evaluate`)."""
    if isinstance(node, Variable):
        return x[node.name] if isinstance(x, dict) else x
    return _apply(node, [_evaluate(c, x) for c in _children(node)])


# --------------------------------------------------------------------------- analysis
_UNKNOWN, _NONNEGATIVE, _POSITIVE = 0, 1, 2


class _Facts(NamedTuple):
    value: float | None     # the value of a constant subtree, None if it depends on the variable
    sign: int               # proven lower bound of the sign on the whole real line (where defined)
    analytic: bool          # see Expression.analytic
    degree: int | None      # degree if the subtree is built as a polynomial, else None


def _facts(node: Node) -> _Facts:
    """Bottom-up analysis in one pass.

    ``analytic`` is False for ``abs``/``sign`` of a non-constant, and for
    ``log``, ``sqrt`` or a non-integer (or variable) power of an argument not
    proven positive on the real line: ``log(1 + x^2)`` and ``cosh(x)^0.5``
    are analytic near the real line, ``sqrt(x)`` and ``(1-x)^0.5`` are not.
    Poles (``1/x``) are allowed.
    """
    if isinstance(node, Variable):
        return _Facts(None, _UNKNOWN, True, 1)
    kids = [_facts(c) for c in _children(node)]
    if all(k.value is not None for k in kids):
        with np.errstate(all="ignore"):
            value = float(_apply(node, [k.value for k in kids]))
        return _Facts(value, _POSITIVE if value > 0 else _NONNEGATIVE if value == 0 else _UNKNOWN, True, 0)
    analytic, sign, degree = all(k.analytic for k in kids), _UNKNOWN, None
    degrees, signs = [k.degree for k in kids], [k.sign for k in kids]
    if isinstance(node, Negate):
        degree = degrees[0]
    elif isinstance(node, Sum):
        degree = None if None in degrees else max(degrees)
        if not any(node.negated) and min(signs) > _UNKNOWN:
            sign = max(signs)
    elif isinstance(node, Product):
        if None not in degrees and not any(d and g for d, g in zip(node.divided, degrees)):
            degree = sum(degrees)
        if min(signs) == _POSITIVE:
            sign = _POSITIVE
        elif all(s == _POSITIVE or (s == _NONNEGATIVE and not d) for s, d in zip(signs, node.divided)):
            sign = _NONNEGATIVE
    elif isinstance(node, Power):
        base, p = kids[0], kids[1].value
        integer = p is not None and p.is_integer()
        analytic = analytic and (integer or base.sign == _POSITIVE)
        if base.sign == _POSITIVE:
            sign = _POSITIVE
        elif p is not None and p > 0 and (base.sign == _NONNEGATIVE or (integer and int(p) % 2 == 0)):
            sign = _NONNEGATIVE
        if integer and p >= 0 and base.degree is not None:
            degree = base.degree * int(p)
    else:   # Call
        function, argument = node.function, kids[0]
        if function in ("abs", "sign") or (function in ("log", "sqrt") and argument.sign != _POSITIVE):
            analytic = False
        if function in ("exp", "cosh"):
            sign = _POSITIVE
        elif function in ("sqrt", "abs"):
            sign = max(argument.sign, _NONNEGATIVE)
    return _Facts(None, sign, analytic, degree)


# --------------------------------------------------------------------------- canonical text
_SUM, _PRODUCT, _NEGATE, _POWER, _ATOM = 1, 2, 3, 4, 5


def _precedence(node: Node) -> int:
    return {Sum: _SUM, Product: _PRODUCT, Negate: _NEGATE, Power: _POWER}.get(type(node), _ATOM)


def _format_number(node: Number) -> str:
    if node.exact is not None and node.exact.denominator == 1 and abs(node.exact) < 10**16:
        return str(node.exact.numerator)
    return repr(float(node.value))


def _describe(node: Node) -> str:
    """Canonical text: ``^`` for powers, minimal parentheses; it parses back to the same values."""
    def wrap(child: Node, lowest: int) -> str:
        text = _describe(child)
        return text if _precedence(child) >= lowest else f"({text})"

    if isinstance(node, Number):
        return _format_number(node)
    if isinstance(node, Pi):
        return "pi"
    if isinstance(node, (Variable, Parameter)):
        return node.name
    if isinstance(node, Negate):
        return "-" + wrap(node.operand, _NEGATE)
    if isinstance(node, Sum):
        first = node.terms[0]
        pieces = ["-" + wrap(first, _NEGATE) if node.negated[0] else wrap(first, _PRODUCT)]
        for term, minus in zip(node.terms[1:], node.negated[1:]):
            if isinstance(term, Negate):   # a - (-b) is a + b exactly in IEEE arithmetic
                minus, term = not minus, term.operand
            pieces.append((" - " if minus else " + ") + wrap(term, _PRODUCT))
        return "".join(pieces)
    if isinstance(node, Product):
        first = node.factors[0]
        pieces = ["1/" + wrap(first, _POWER) if node.divided[0] else wrap(first, _NEGATE)]
        for factor, divide in zip(node.factors[1:], node.divided[1:]):
            pieces.append(("/" if divide else "*") + wrap(factor, _POWER))
        return "".join(pieces)
    if isinstance(node, Power):
        return wrap(node.base, _ATOM) + "^" + wrap(node.exponent, _NEGATE)
    return f"{node.function}({_describe(node.argument)})"


# --------------------------------------------------------------------------- tokenizer
class _Token(NamedTuple):
    kind: str      # "number" | "name" | "op" | "end" | "error" (then ``text`` is the message)
    text: str
    start: int
    end: int

    @property
    def column(self) -> int:
        return self.start + 1


_DIGITS = "0123456789"
_NAME_START = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ_"
_NAME_CHARS = _NAME_START + _DIGITS
_NUMBER = re.compile(r"(\d+\.\d*|\.\d+|\d+)([eE][+-]?\d+)?", re.ASCII)
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*", re.ASCII)
_ALLOWED_TEXT = "numbers, the variable, parameters, pi, " + ", ".join(ALLOWED_FUNCTIONS) + \
    ", + - * / ** ^ and parentheses"
_REFUSED = {
    "'": "quotes are not allowed (no strings)", '"': "quotes are not allowed (no strings)",
    "[": "brackets '[ ]' are not allowed (no lists or subscripts); use ( ) for grouping",
    "]": "brackets '[ ]' are not allowed (no lists or subscripts); use ( ) for grouping",
    "{": "braces '{ }' are not allowed; use ( ) for grouping",
    "}": "braces '{ }' are not allowed; use ( ) for grouping",
    "=": "'=' is not allowed: give only the expression (e.g. x**2/2); parameter values are given apart from it",
    ";": "';' is not allowed: give a single expression",
    "\\": "backslashes are not allowed",
    "%": "'%' is not allowed; the operators are + - * / ** ^",
    "@": "'@' is not allowed; the operators are + - * / ** ^",
    ":": "':' is not allowed (no lambdas, slices or annotations)",
    "<": "comparisons are not allowed", ">": "comparisons are not allowed", "!": "'!' is not allowed",
    "&": "bitwise operators are not allowed", "|": "bitwise operators are not allowed",
    "~": "bitwise operators are not allowed", "#": "comments are not allowed",
}


def _character_problem(text: str, i: int, previous: _Token | None) -> str:
    c, column = text[i], i + 1
    if c == ".":
        if previous is not None and previous.end == i and (previous.kind == "name" or previous.text == ")"):
            after = _NAME.match(text, i + 1)
            target = text[previous.start:i + 1] + (after.group() if after else "")
            return (f"attribute access '{target}' at column {column} is not allowed; use only {_ALLOWED_TEXT}")
        return f"stray '.' at column {column}; numbers look like 2, 0.5, .5 or 1e-3"
    if ord(c) > 127:
        return (f"non-ASCII character {c!r} (U+{ord(c):04X}) at column {column} is not allowed; "
                "write the expression in ASCII (e.g. pi, not the Greek letter)")
    if not c.isprintable():
        return f"control character U+{ord(c):04X} at column {column} is not allowed; write the expression on one line"
    reason = _REFUSED.get(c, f"character {c!r} is not allowed")
    return f"{reason} (column {column}); an expression may use {_ALLOWED_TEXT}"


def _number_problem(text: str, i: int, j: int) -> str | None:
    """Refuse what directly follows a number literal (``2x``, ``1e``, ``2j``, ``1.2.3``)."""
    literal, nxt, column = text[i:j], text[j:j + 1], i + 1
    if nxt == "" or nxt not in _NAME_CHARS + ".":
        return None
    after = text[j + 1:j + 2]
    if nxt == ".":
        return f"malformed number '{literal}.' at column {column}; numbers look like 2, 0.5, .5 or 1e-3"
    if nxt == "_":
        return f"'_' in the number at column {column} is not allowed; write digits only, e.g. 1000"
    if nxt in "eE" and "e" not in literal.lower() and (after == "" or after not in _NAME_CHARS):
        return f"malformed exponent in '{text[i:j + 2]}' at column {column}; write e.g. 1e-3 or 2.5E+4"
    name = _NAME.match(text, j).group()
    if nxt in "jJ" and name in "jJ":
        return f"complex literal '{literal}{name}' at column {column} is not allowed; fields are real"
    return (f"'{literal}{name}' at column {column}: implicit multiplication is not allowed; "
            f"write {literal}*{name}")


def _tokenize(text: str) -> list[_Token]:
    """Split ``text`` into tokens; the first problem becomes an ``error`` token."""
    tokens: list[_Token] = []
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if c in " \t":
            i += 1
        elif c in _DIGITS or (c == "." and i + 1 < n and text[i + 1] in _DIGITS):
            j = _NUMBER.match(text, i).end()
            problem = _number_problem(text, i, j)
            tokens.append(_Token("error", problem, i, j) if problem else _Token("number", text[i:j], i, j))
            i = j
        elif c in _NAME_START:
            j = _NAME.match(text, i).end()
            tokens.append(_Token("name", text[i:j], i, j))
            i = j
        elif text.startswith("**", i):
            tokens.append(_Token("op", "^", i, i + 2))
            i += 2
        elif text.startswith("//", i):
            tokens.append(_Token("error", f"floor division '//' at column {i + 1} is not allowed; use '/'", i, i + 2))
        elif c in "+-*/^(),":
            tokens.append(_Token("op", c, i, i + 1))
            i += 1
        else:
            tokens.append(_Token("error", _character_problem(text, i, tokens[-1] if tokens else None), i, i + 1))
        if tokens and tokens[-1].kind == "error":
            break
    tokens.append(_Token("end", "", n, n))
    return tokens


def _literal(token: _Token) -> tuple[float, Fraction]:
    """Float value and exact rational of a literal; no huge powers of ten are ever built."""
    mantissa, exponent = _NUMBER.fullmatch(token.text).groups()
    whole, _, fraction = mantissa.partition(".")
    digits = int((whole + fraction) or "0")
    value = float(token.text)
    if digits == 0:
        return 0.0, Fraction(0)
    if not math.isfinite(value):
        raise ExpressionError(f"number '{token.text}' at column {token.column} is not finite in double "
                              "precision; use numbers below 1.8e308 in magnitude")
    if value == 0.0:
        raise ExpressionError(f"number '{token.text}' at column {token.column} underflows to 0 in double "
                              "precision; use numbers above 2.3e-308 in magnitude")
    scale = int(exponent[1:] if exponent else "0") - len(fraction)
    return value, (Fraction(digits * 10**scale) if scale >= 0 else Fraction(digits, 10**-scale))


# --------------------------------------------------------------------------- parser
class _Part(NamedTuple):
    node: Node
    value: float | None    # np.float64 for a constant subexpression, None if it depends on x
    height: int
    start: int
    end: int


class _Parser:
    """Recursive descent over the grammar of the module docstring.

    ``term`` is folded into ``_expression`` and ``primary``/``power`` into
    ``_signed`` so that one level of parentheses costs two Python frames.
    """

    def __init__(self, text: str, variable: str, parameters: Mapping[str, float],
                 more_variables: tuple[str, ...] = ()):
        self.text, self.variable, self.parameters = text, variable, parameters
        self.more_variables = frozenset(more_variables)
        self.tokens, self.position, self.depth = _tokenize(text), 0, 0

    def parse(self) -> Node:
        with np.errstate(all="ignore"):
            part = self._expression()
            token = self._peek()
            if token.kind != "end":
                raise self._missing_operator(token)
        return part.node

    # token access ------------------------------------------------------
    def _peek(self) -> _Token:
        token = self.tokens[self.position]
        if token.kind == "error":
            raise ExpressionError(token.text)
        return token

    def _advance(self) -> _Token:
        token = self._peek()
        self.position += 1
        return token

    def _is_op(self, *texts: str) -> bool:
        token = self._peek()
        return token.kind == "op" and token.text in texts

    def _spelling(self, token: _Token) -> str:
        return self.text[token.start:token.end]

    def _enter(self, token: _Token) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise ExpressionError(f"expression nests deeper than {MAX_DEPTH} levels at column {token.column}; "
                                  "simplify it")

    def _checked(self, node: Node, value, height: int, start: int, end: int) -> _Part:
        if height > MAX_DEPTH:
            raise ExpressionError(f"expression nests deeper than {MAX_DEPTH} levels at column {start + 1}; "
                                  "simplify it")
        if value is not None and not np.isfinite(value):
            self._not_finite(value, start, end)
        return _Part(node, value, height, start, end)

    def _not_finite(self, value, start: int, end: int):
        snippet = self.text[start:end]
        snippet = snippet if len(snippet) <= 40 else snippet[:37] + "..."
        what = "is undefined in real arithmetic (nan)" if np.isnan(value) else "overflows double precision"
        raise ExpressionError(f"constant subexpression '{snippet}' at column {start + 1} {what}; "
                              "use finite real constants (|value| < 1.8e308)")

    # grammar -----------------------------------------------------------
    def _expression(self) -> _Part:
        terms: list[_Part] = []
        negated: list[bool] = []
        minus, running_sum = False, None
        while True:
            factors, divided = [self._signed()], [False]
            running_product = factors[0].value
            while self._is_op("*", "/"):
                operator = self._advance()
                factor = self._signed()
                divide = operator.text == "/"
                if divide and factor.value is not None and factor.value == 0:
                    raise ExpressionError(f"division by zero at column {operator.column}: the divisor "
                                          f"'{self.text[factor.start:factor.end]}' is zero")
                factors.append(factor)
                divided.append(divide)
                if running_product is not None and factor.value is not None:   # constant prefix a*b/c...
                    running_product = (np.divide if divide else np.multiply)(running_product, factor.value)
                    if not np.isfinite(running_product):
                        self._not_finite(running_product, factors[0].start, factor.end)
                else:
                    running_product = None
            term = self._chain(Product, factors, divided, running_product)
            if not terms:
                running_sum = term.value
            elif running_sum is not None and term.value is not None:
                running_sum = (np.subtract if minus else np.add)(running_sum, term.value)
                if not np.isfinite(running_sum):
                    self._not_finite(running_sum, terms[0].start, term.end)
            else:
                running_sum = None
            terms.append(term)
            negated.append(minus)
            if not self._is_op("+", "-"):
                return self._chain(Sum, terms, negated, running_sum)
            minus = self._advance().text == "-"

    def _chain(self, kind, parts: list[_Part], flags: list[bool], value) -> _Part:
        if len(parts) == 1:
            return parts[0]
        node = kind(tuple(p.node for p in parts), tuple(flags))
        return self._checked(node, value, 1 + max(p.height for p in parts), parts[0].start, parts[-1].end)

    def _signed(self) -> _Part:
        minus_signs = []
        while self._is_op("+", "-"):
            token = self._advance()
            if token.text == "-":
                minus_signs.append(token)
        token = self._advance()
        function, opener = None, None
        if token.kind == "number":
            value, exact = _literal(token)
            part = self._checked(Number(value, exact), np.float64(value), 1, token.start, token.end)
        elif token.kind == "name":
            if keyword.iskeyword(token.text):
                raise self._keyword(token)
            if self._is_op("("):
                function, opener = self._function(token), self._advance()
            else:
                part = self._name(token)
        elif token.kind == "op" and token.text == "(":
            opener = token
        else:
            raise self._no_operand(token)
        if opener is not None:   # a parenthesised group or a call: recurse
            self._enter(opener)
            inner = self._expression()
            closer = self._close(opener, function)
            self.depth -= 1
            if function is None:
                part = _Part(inner.node, inner.value, inner.height, opener.start, closer.end)
            else:
                value = None if inner.value is None else _NUMPY_FUNCTIONS[function](inner.value)
                part = self._checked(Call(function, inner.node), value, inner.height + 1, token.start, closer.end)
        if self._is_op("^"):
            operator = self._advance()
            self._enter(operator)
            exponent = self._signed()
            self.depth -= 1
            part = self._power(part, exponent, operator)
        for sign in reversed(minus_signs):
            value = None if part.value is None else np.negative(part.value)
            part = self._checked(Negate(part.node), value, part.height + 1, sign.start, part.end)
        return part

    def _power(self, base: _Part, exponent: _Part, operator: _Token) -> _Part:
        if base.value is None and exponent.value is not None and abs(exponent.value) > MAX_EXPONENT:
            raise ExpressionError(f"exponent '{self.text[exponent.start:exponent.end]}' at column "
                                  f"{exponent.start + 1} is too large: |p| <= {MAX_EXPONENT} is allowed "
                                  f"when the base depends on {self.variable}")
        value = None if None in (base.value, exponent.value) else np.power(base.value, exponent.value)
        height = 1 + max(base.height, exponent.height)
        return self._checked(Power(base.node, exponent.node), value, height, base.start, exponent.end)

    def _name(self, token: _Token) -> _Part:
        name = token.text
        if name == self.variable or name in self.more_variables:
            return _Part(Variable(name), None, 1, token.start, token.end)
        if name in self.parameters:
            value = self.parameters[name]
            return _Part(Parameter(name, value), np.float64(value), 1, token.start, token.end)
        if name == "pi":
            return _Part(Pi(), np.float64(np.pi), 1, token.start, token.end)
        where = f"at column {token.column}"
        if name in ALLOWED_FUNCTIONS:
            raise ExpressionError(f"function '{name}' {where} needs one argument in parentheses, e.g. {name}(x)")
        if name.lower() in ("inf", "infinity", "nan"):
            raise ExpressionError(f"'{name}' {where} is not allowed: constants must be finite real numbers")
        if name in ("e", "E"):
            raise ExpressionError(f"unknown name '{name}' {where}; write exp(1) for Euler's number, or give "
                                  f"a value for the parameter {name}", about="parameter", name=name)
        raise ExpressionError(f"unknown name '{name}' {where}; allowed are {self._allowed_names()}; if "
                              f"'{name}' is a parameter, give its value", about="parameter", name=name)

    def _function(self, token: _Token) -> str:
        name, where = token.text, f"at column {token.column}"
        if name in ALLOWED_FUNCTIONS:
            return name
        if name == self.variable or name in self.more_variables or name in self.parameters or name == "pi":
            raise ExpressionError(f"'{name}' {where} is not a function; implicit multiplication is not "
                                  f"allowed, write {name}*(...)")
        raise ExpressionError(f"unknown function '{name}' {where}; the allowed functions are "
                              + ", ".join(ALLOWED_FUNCTIONS) + " (one argument each)")

    def _close(self, opener: _Token, function: str | None) -> _Token:
        token = self._peek()
        if token.kind == "op" and token.text == ")":
            return self._advance()
        if token.kind == "end":
            raise ExpressionError(f"unbalanced parentheses: '(' at column {opener.column} is never closed; "
                                  "add ')'")
        if token.kind == "op" and token.text == "," and function is not None:
            raise ExpressionError(f"function '{function}' takes exactly one argument (',' at column "
                                  f"{token.column})")
        raise self._missing_operator(token)

    def _allowed_names(self) -> str:
        parameters = ", ".join(sorted(self.parameters))
        variables = ", ".join([self.variable] + sorted(self.more_variables))
        return (f"the variable{'s' if self.more_variables else ''} {variables}, "
                + (f"the parameters {parameters}, " if parameters else "")
                + "pi and the functions " + ", ".join(ALLOWED_FUNCTIONS))

    # error messages ----------------------------------------------------
    def _keyword(self, token: _Token) -> ExpressionError:
        return ExpressionError(f"Python keyword '{token.text}' at column {token.column} is not allowed; "
                               f"an expression may use {_ALLOWED_TEXT}")

    def _comma(self, token: _Token) -> ExpressionError:
        return ExpressionError(f"',' at column {token.column} is not allowed: there are no tuples and every "
                               "function takes one argument")

    def _no_operand(self, token: _Token) -> ExpressionError:
        previous = self.tokens[self.position - 2] if self.position >= 2 else None
        if token.kind == "end":
            after = f" after '{self._spelling(previous)}' at column {previous.column}" if previous else ""
            return ExpressionError(f"incomplete expression: it ends{after}; complete it, e.g. x**2/2")
        if token.text == ")" and previous is not None and previous.text == "(":
            return ExpressionError(f"empty parentheses at column {previous.column}; put an expression "
                                   "inside, e.g. sin(x)")
        if token.text == ",":
            return self._comma(token)
        return ExpressionError(f"unexpected '{self._spelling(token)}' at column {token.column}: a number, "
                               "name or '(' must come first (powers are written x**2 or x^2)")

    def _missing_operator(self, token: _Token) -> ExpressionError:
        if token.kind == "name" and keyword.iskeyword(token.text):
            return self._keyword(token)
        if token.text == ")":
            return ExpressionError(f"unbalanced parentheses: ')' at column {token.column} has no "
                                   "matching '('")
        if token.text == ",":
            return self._comma(token)
        return ExpressionError(f"missing operator before '{self._spelling(token)}' at column {token.column}:"
                               " implicit multiplication is not allowed; write 2*x or a*(b), not 2x or a(b)")


# --------------------------------------------------------------------------- exact polynomials
#: a constant power is taken exactly only below this many bits (numerator and denominator
#: bits times the exponent): the same rule as the sympy side (symbolic._exact_power_too_large)
_EXACT_POWER_BITS = 2**16


class _NotRational(Exception):
    """A constant that is not a rational number (pi, a function value, a non-integer power)."""


def _exact(value: float | Fraction) -> Fraction:
    """Literals keep their decimal value, floats their shortest repr (0.3 -> 3/10), as on the sympy side."""
    return value if isinstance(value, Fraction) else Fraction(repr(float(value)))


def _rational_polynomial(node: Node) -> list[Fraction] | None:
    """Ascending exact coefficients of a tree built as a polynomial (``_facts(node).degree``
    not None) whose constants are all rational; None when a constant is not rational or
    is a power too large to form exactly (sympy then decides, :meth:`Expression.polynomial_coefficients`).

    Rational arithmetic on coefficient lists gives the numbers sympy.Poly gives over the
    rationals (both exact; one rounding to float at the end), without importing sympy.
    """
    def add(p, q, sign=1):
        out = [Fraction(0)] * max(len(p), len(q))
        for i, c in enumerate(p):
            out[i] += c
        for i, c in enumerate(q):
            out[i] += sign * c
        return out

    def multiply(p, q):
        out = [Fraction(0)] * (len(p) + len(q) - 1)
        for i, c in enumerate(p):
            if c:
                for j, d in enumerate(q):
                    out[i + j] += c * d
        return out

    def power(p, k):
        bits = max(c.numerator.bit_length() + c.denominator.bit_length() for c in p)
        if bits * k > _EXACT_POWER_BITS:
            raise _NotRational  # huge exact numbers: the sympy side decides, as it always has
        out = [Fraction(1)]
        while k:
            if k & 1:
                out = multiply(out, p)
            k >>= 1
            if k:
                p = multiply(p, p)
        return out

    def constant(p):
        if any(p[1:]):
            raise _NotRational  # divided by something that depends on x (not built as a polynomial)
        return p[0]

    def walk(n):
        if isinstance(n, Variable):
            return [Fraction(0), Fraction(1)]
        if isinstance(n, Number):
            return [_exact(n.exact if n.exact is not None else n.value)]
        if isinstance(n, Parameter):
            return [_exact(n.value)]
        if isinstance(n, Negate):
            return [-c for c in walk(n.operand)]
        if isinstance(n, Sum):
            out = [Fraction(0)]
            for term, minus in zip(n.terms, n.negated):
                out = add(out, walk(term), -1 if minus else 1)
            return out
        if isinstance(n, Product):
            out = [Fraction(1)]
            for factor, divided in zip(n.factors, n.divided):
                value = walk(factor)
                out = [c / constant(value) for c in out] if divided else multiply(out, value)
            return out
        if isinstance(n, Power):
            with np.errstate(all="ignore"):
                p = float(_evaluate(n.exponent, None))
            if _facts(n.base).value is None:   # x-dependent base: sympy sees the integer int(p)
                return power(walk(n.base), int(p))
            base, exponent = constant(walk(n.base)), constant(walk(n.exponent))
            if exponent.denominator != 1 or abs(p) > MAX_EXPONENT:
                raise _NotRational
            bits = base.numerator.bit_length() + base.denominator.bit_length()
            if bits * abs(p) > _EXACT_POWER_BITS:
                raise _NotRational
            return [base ** int(exponent)]
        raise _NotRational  # Pi, Call

    try:
        out = walk(node)
    except (_NotRational, ZeroDivisionError, RecursionError):
        return None
    while len(out) > 1 and out[-1] == 0:
        out.pop()
    return out


# --------------------------------------------------------------------------- public objects
@dataclass(frozen=True)
class Expression:
    """A parsed expression in one real variable; build it with :func:`parse_expression`.

    Attributes
    ----------
    text : str
        The original text (for a derivative: its canonical text).
    variable : str
        Name of the variable.
    parameters : Mapping[str, float]
        Parameter values substituted into the expression (read-only).
    analytic : bool
        True when the principal-branch formula is analytic in a neighbourhood
        of every real point (poles allowed); False when ``abs`` occurs, or
        ``log``, ``sqrt`` or a non-integer power acts on something not
        provably positive on the real line.  Complex evaluation of a
        non-analytic expression is still defined (principal branches, the
        modulus for ``abs``) but is not an analytic continuation.
    tree : Node
        The syntax tree.
    more_variables : tuple of str
        Further variables besides ``variable`` (``parse_expression(..., more_variables=...)``);
        such an expression is evaluated by :meth:`evaluate` with a value for each name.
    """

    text: str
    variable: str
    parameters: Mapping[str, float] = field(hash=False)
    analytic: bool
    tree: Node = field(repr=False)
    more_variables: tuple[str, ...] = ()

    def _one_variable(self, what: str) -> None:
        if self.more_variables:
            raise ExpressionError(f"{what} needs an expression in one variable; '{self.text[:40]}' has the "
                                  f"variables {', '.join((self.variable,) + self.more_variables)}: use evaluate")

    def evaluate(self, values: Mapping[str, ArrayLike]) -> np.ndarray:
        """Evaluate an expression in several variables: ``values`` maps each variable name
        (``variable`` and ``more_variables``) to an array; the arrays broadcast together.

        Real arithmetic (float64) as in :meth:`__call__`: ``nan`` outside the domain.

        Examples
        --------
        >>> e = parse_expression("sqrt(1 + alpha/n) - a_model", {"alpha": 0.7}, "n", more_variables=["a_model"])
        >>> e.evaluate({"n": [10.0, 100.0], "a_model": 1.0}).round(6).tolist()
        [0.034408, 0.003494]
        """
        names = (self.variable,) + tuple(self.more_variables)
        missing = [name for name in names if name not in values]
        if missing:
            raise ExpressionError(f"no value given for the variable{'s' if len(missing) > 1 else ''} "
                                  f"{', '.join(missing)} of '{self.text[:40]}'")
        arrays = np.broadcast_arrays(*(np.asarray(values[name], dtype=float) for name in names))
        with np.errstate(all="ignore"):
            value = _evaluate(self.tree, dict(zip(names, arrays)))
        shape = arrays[0].shape
        return np.array(np.broadcast_to(np.asarray(value, dtype=float), shape))

    def __call__(self, x: ArrayLike) -> np.ndarray:
        """Evaluate elementwise.

        Parameters
        ----------
        x : array_like
            Real or complex points.  Real input is evaluated in real double
            arithmetic (``nan`` outside the domain, e.g. ``log`` of a negative
            number); complex input with numpy's principal branches.

        Returns
        -------
        numpy.ndarray
            float64 (real input) or complex128 (complex input), shape of ``x``.
        """
        self._one_variable("evaluation at x")
        z = np.asarray(x)
        if z.dtype.kind not in "biufc":
            raise TypeError(f"expression values need numeric input, got dtype {z.dtype}")
        dtype = np.complex128 if z.dtype.kind == "c" else np.float64
        z = z.astype(dtype, copy=False)
        with np.errstate(all="ignore"):
            value = _evaluate(self.tree, z)
        return np.array(np.broadcast_to(np.asarray(value).astype(dtype, copy=False), z.shape))

    @cached_property
    def _symbol(self):
        from .symbolic import sympy

        return sympy.Symbol(self.variable, real=True)

    @cached_property
    def _sympy(self):
        from .symbolic import _to_sympy

        self._one_variable("the symbolic form")
        return self._sympy_call(_to_sympy, self.tree, self._symbol, False)

    def _sympy_call(self, function, *arguments):
        try:
            return function(*arguments)
        except RecursionError:
            raise ExpressionError(f"expression '{self.text[:40]}' is nested too deeply for symbolic "
                                  "manipulation; simplify it") from None

    def to_sympy(self):
        """The expression as a sympy object, built node by node (never from a string).

        The variable is a real symbol; literals and parameter values are exact
        rationals (``0.3`` -> 3/10).  Three exceptions keep sympy from building
        huge exact numbers: a constant base under a power that depends on the
        variable (``2^x`` -> ``2.0**x``), an exponent rational with denominator
        above 1000 on a variable base, and a constant power whose exact value
        would exceed 2**16 bits are sympy Floats (double precision).
        """
        return self._sympy

    def derivative(self, order: int = 1) -> "Expression":
        """Exact derivative of the given order (sympy.diff of :meth:`to_sympy`).

        The derivative is the pointwise one: ``d|u|/dx = sign(u) u'`` with
        sympy's convention ``sign(0) = 0``, and the Dirac masses that the
        distributional derivative of ``sign`` would bring are dropped, so at
        a zero of an ``abs`` argument the value follows these conventions.
        The result's text may contain ``sign``, which is not accepted as input.
        (A polynomial field never gets here: :class:`equilibrium.Field`
        differentiates its coefficients.)
        """
        if isinstance(order, bool) or not isinstance(order, (int, np.integer)) or order < 0:
            raise ExpressionError(f"derivative order must be a non-negative integer, got {order!r}")
        if order == 0:
            return self
        self._one_variable("a derivative")
        from .symbolic import _from_sympy, _to_sympy, sympy

        def differentiate():
            calculus = _to_sympy(self.tree, self._symbol, True)
            result = sympy.diff(calculus, self._symbol, int(order))
            result = result.replace(sympy.DiracDelta, lambda *arguments: sympy.S.Zero)
            return _from_sympy(result, self.variable)

        tree = self._sympy_call(differentiate)
        return Expression(_describe(tree), self.variable, self.parameters, _facts(tree).analytic, tree)

    def polynomial_coefficients(self) -> np.ndarray | None:
        """Ascending float coefficients if the expression is built as a polynomial in the variable.

        Built as a polynomial means: sums, products, division by constants and
        non-negative integer constant powers of such, over the variable and
        constants (``x/x`` or ``sqrt(x)^2`` are not).  The coefficients are
        exact before rounding to float: in rational arithmetic
        (:func:`_rational_polynomial`) when every constant is rational, else
        sympy.Poly of :meth:`to_sympy`; trailing zeros are trimmed, the zero
        polynomial gives ``[0.0]``.

        Raises
        ------
        ExpressionError
            If the degree exceeds ``MAX_POLYNOMIAL_DEGREE`` (512).
        """
        self._one_variable("polynomial coefficients")
        degree = _facts(self.tree).degree
        if degree is None:
            return None
        if degree > MAX_POLYNOMIAL_DEGREE:
            raise ExpressionError(f"polynomial degree {degree} of '{self.text[:40]}' exceeds "
                                  f"{MAX_POLYNOMIAL_DEGREE}; use a lower degree")
        exact = _rational_polynomial(self.tree)
        if exact is not None:
            values = []
            for c in exact:
                try:
                    values.append(complex(float(c)))
                except OverflowError:
                    values.append(complex("nan"))
        else:
            from .symbolic import sympy

            try:
                poly = self._sympy_call(sympy.Poly, self.to_sympy(), self._symbol)
            except sympy.PolynomialError:
                raise ExpressionError(f"'{self.text[:40]}' is not a polynomial in exact arithmetic; "
                                      "rewrite its constants") from None
            exact = reversed(poly.all_coeffs())
            values = [complex(c) if c.is_number and c.is_finite is not False else complex("nan") for c in exact]
        if not all(math.isfinite(v.real) and v.imag == 0 for v in values):
            raise ExpressionError(f"a polynomial coefficient of '{self.text[:40]}' is not a finite real "
                                  "double (it overflows, or is undefined in exact arithmetic such as "
                                  "log(sin(pi)) = log(0)); rewrite the constants")
        coefficients = np.array([v.real for v in values], dtype=float)
        nonzero = np.flatnonzero(coefficients)
        return coefficients[:nonzero[-1] + 1] if nonzero.size else np.zeros(1)

    def is_constant(self) -> bool:
        """True when the variable does not occur, or the polynomial form is a constant (``0*x``)."""
        facts = _facts(self.tree)
        if facts.value is not None:
            return True
        return facts.degree is not None and facts.degree <= MAX_POLYNOMIAL_DEGREE and \
            len(self.polynomial_coefficients()) == 1

    def describe(self) -> str:
        """Canonical text (``^`` for powers, parameter names kept); parsing it gives the same values."""
        return _describe(self.tree)

    @property
    def parameter_names(self) -> frozenset[str]:
        """Names of the parameters that occur in the text (a value given for any other name is unused)."""
        names, stack = set(), [self.tree]
        while stack:
            node = stack.pop()
            if isinstance(node, Parameter):
                names.add(node.name)
            stack.extend(_children(node))
        return frozenset(names)


def _check_name(name, role: str, variable: str | None = None) -> str:
    if not isinstance(name, str) or not name.isascii() or not name.isidentifier() or keyword.iskeyword(name):
        shown = repr(name)[:40] if isinstance(name, str) else f"of type {type(name).__name__}"
        raise ExpressionError(f"{role} name {shown} is not allowed; use an ASCII identifier such as t or a1")
    taken = set(ALLOWED_FUNCTIONS) | {"pi", "sign"} | ({variable} if variable else set())
    if name in taken:
        raise ExpressionError(f"{role} name '{name}' collides with the variable, pi or a function name; "
                              "choose another name")
    return name


def parse_expression(text: str, parameters: Mapping[str, float] | None = None,
                     variable: str = "x", *, more_variables: Sequence[str] = ()) -> Expression:
    """Parse whitelisted arithmetic text into an :class:`Expression` (never runs it as code).

    Parameters
    ----------
    text : str
        Expression in the grammar of the module docstring, at most 4000 characters.
    parameters : Mapping[str, float], optional
        Values of named parameters (finite reals), e.g. ``{"t": 3.0}``.
    variable : str
        Name of the variable, default ``"x"``.
    more_variables : sequence of str, optional
        Further variable names (e.g. the n-dependent names of a formula compared in a run,
        ``workbench.formulas``); the result is evaluated by :meth:`Expression.evaluate`.

    Returns
    -------
    Expression

    Raises
    ------
    ExpressionError
        With one line naming the problem, the column, and what would work.
    """
    variable = _check_name(variable, "variable")
    more = tuple(dict.fromkeys(_check_name(name, "variable") for name in more_variables if name != variable))
    if parameters is not None and not isinstance(parameters, Mapping):
        raise ExpressionError(f"parameters must be a mapping NAME -> value, got {type(parameters).__name__}")
    values: dict[str, float] = {}
    for name, value in (parameters or {}).items():
        _check_name(name, "parameter", variable)
        real = isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, (bool, np.bool_))
        if not real or not math.isfinite(float(value)):
            shown = repr(float(value)) if real else f"a {type(value).__name__}"
            raise ExpressionError(f"parameter {name} is {shown}; give a finite real number, e.g. {name} = 1.5",
                                  about="parameter", name=name)
        values[name] = float(value)
    if not isinstance(text, str):
        raise ExpressionError(f"an expression must be text, got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise ExpressionError(f"expression has {len(text)} characters, more than the {MAX_LENGTH} allowed; "
                              "shorten it")
    if not text.strip(" \t"):
        raise ExpressionError("empty expression; give one such as x**2/2")
    clash = sorted(set(more) & set(values))
    if clash:
        raise ExpressionError(f"{', '.join(clash)} named both as a parameter and as a variable; give each name once")
    tree = _Parser(text, variable, values, more).parse()
    return Expression(text, variable, MappingProxyType(values), _facts(tree).analytic, tree, more)
