"""External fields V: from text, from coefficient arrays, from Python callables.

A :class:`Field` is a small immutable object holding V and its first two
derivatives as vectorised callables.  Fields built from text or from
coefficients have exact derivatives (symbolic differentiation of the parsed
expression, or differentiation of the polynomial); fields built from
callables take the derivatives the caller supplies.

The solver only ever evaluates V and V' at real points of the set Σ; complex
evaluation (``V(z)`` for complex ``z``) is available for analytic fields and
is used by the g-function and the model problem.
"""

from __future__ import annotations

from dataclasses import dataclass, field as dataclass_field
from typing import Callable, Mapping, Sequence

import numpy as np
from numpy.polynomial import polynomial as P

from .errors import InputError

ArrayFunction = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class Field:
    """An external field V with derivatives.

    Attributes
    ----------
    V, dV, d2V :
        Vectorised callables (real or complex arrays in, arrays out).
    polynomial :
        Ascending coefficients when V is a polynomial, else ``None``.
    description :
        Human-readable text (the expression, or a name).
    analytic :
        Whether V is analytic near the real axis (``abs`` and fractional
        powers of sign-changing arguments make it only piecewise smooth).
    """

    V: ArrayFunction
    dV: ArrayFunction
    d2V: ArrayFunction | None
    polynomial: np.ndarray | None = None
    description: str = "V"
    analytic: bool = True
    parameters: Mapping[str, float] = dataclass_field(default_factory=dict)
    expression_text: str | None = None

    # -- constructors ---------------------------------------------------
    @classmethod
    def from_expression(cls, text: str, parameters: Mapping[str, float] | None = None) -> "Field":
        """Parse ``text`` (whitelisted syntax, never evaluated as code)."""
        from .expression import parse_expression

        expression = parse_expression(text, parameters or {})
        coefficients = expression.polynomial_coefficients()
        if coefficients is not None:  # differentiated from the coefficients (no sympy)
            return cls.from_coefficients(
                coefficients,
                description=text.strip(),
                parameters=dict(parameters or {}),
                expression_text=text,
            )
        first = expression.derivative(1)
        second = first.derivative(1)
        return cls(
            V=_real_guarded(expression),
            dV=_real_guarded(first),
            d2V=_real_guarded(second),
            polynomial=None,
            description=text.strip(),
            analytic=bool(getattr(expression, "analytic", True)),
            parameters=dict(parameters or {}),
            expression_text=text,
        )

    @classmethod
    def from_coefficients(
        cls,
        coefficients: Sequence[float],
        description: str | None = None,
        parameters: Mapping[str, float] | None = None,
        expression_text: str | None = None,
    ) -> "Field":
        """V(x) = Σ_j c_j x^j (ascending coefficients)."""
        c = np.asarray(coefficients, dtype=float).ravel()
        if c.size == 0 or not np.all(np.isfinite(c)):
            raise InputError("polynomial coefficients must be a non-empty list of finite numbers")
        c = np.trim_zeros(c, "b")
        if c.size == 0:
            c = np.zeros(1)
        dc = P.polyder(c) if c.size > 1 else np.zeros(1)
        d2c = P.polyder(dc) if dc.size > 1 else np.zeros(1)
        if description is None:
            description = " + ".join(f"{v:.17g}*x^{k}" for k, v in enumerate(c) if v != 0) or "0"
        return cls(
            V=lambda x, c=c: P.polyval(np.asarray(x), c),
            dV=lambda x, c=dc: P.polyval(np.asarray(x), c) + 0 * np.asarray(x),
            d2V=lambda x, c=d2c: P.polyval(np.asarray(x), c) + 0 * np.asarray(x),
            polynomial=c,
            description=description,
            analytic=True,
            parameters=dict(parameters or {}),
            expression_text=expression_text,
        )

    @classmethod
    def from_callables(
        cls,
        V: ArrayFunction,
        dV: ArrayFunction,
        d2V: ArrayFunction | None = None,
        name: str = "V (callable)",
        analytic: bool = True,
    ) -> "Field":
        """A field from Python callables (API only; never from text)."""
        if not callable(V) or not callable(dV):
            raise InputError("V and dV must be callables taking and returning numpy arrays")
        return cls(V=V, dV=dV, d2V=d2V, polynomial=None, description=name, analytic=analytic)

    @classmethod
    def zero(cls) -> "Field":
        """V = 0: the unweighted problem of a compact set."""
        return cls.from_coefficients([0.0], description="0")

    # -- properties and operations -------------------------------------
    @property
    def is_zero(self) -> bool:
        return self.polynomial is not None and not np.any(self.polynomial)

    @property
    def degree(self) -> int | None:
        return None if self.polynomial is None else len(self.polynomial) - 1

    def scaled(self, factor: float) -> "Field":
        """The field ``factor * V`` (weight exp(-n V) at degree k is the field (n/k) V)."""
        factor = float(factor)
        if not np.isfinite(factor) or factor <= 0:
            raise InputError(f"a field can only be scaled by a positive finite number, got {factor}")
        if self.polynomial is not None:
            return Field.from_coefficients(
                factor * self.polynomial,
                description=f"{factor:.17g}*({self.description})",
                parameters=self.parameters,
            )
        d2V = self.d2V
        return Field(
            V=lambda x: factor * self.V(x),
            dV=lambda x: factor * self.dV(x),
            d2V=None if d2V is None else (lambda x: factor * d2V(x)),
            polynomial=None,
            description=f"{factor:.17g}*({self.description})",
            analytic=self.analytic,
            parameters=self.parameters,
        )

    def __str__(self) -> str:
        return self.description


def _real_guarded(expression) -> ArrayFunction:
    """Evaluate an Expression with numpy warnings silenced (NaN/inf are checked by callers)."""

    def evaluate(x):
        with np.errstate(all="ignore"):
            return np.asarray(expression(np.asarray(x)))

    return evaluate
