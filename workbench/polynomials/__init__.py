"""Orthogonal polynomials computed directly from the weight.

For the varying weight ``w_n(x) = exp(-n V(x)) h(x)`` on a set Σ this
subpackage computes the recurrence coefficients ``a_k^{(n)}, b_k^{(n)}``
(discretised Stieltjes procedure on nodes placed from the equilibrium
measure, in per-node logarithmic scaling), the zeros and Gauss rules, scaled
values of ``p_k`` and ``π_k``, the Christoffel–Darboux kernel, the Cauchy
transforms ``C(π_k w)`` and the matrix ``Y(z)`` of the orthogonality problem.

Modules
-------
weight          (compatibility) the weight exp(-nV) h and its factors: equilibrium.weight
discretisation  node placement from the equilibrium measure of (n/K) V
recurrence      recurrence coefficients with an error estimate
highprecision   an mpmath referee for moderate degrees
zeros           zeros of p_K and Gauss rules
values          scaled values of p_k, π_k; Christoffel–Darboux kernel
cauchy          second-kind functions, Cauchy transforms, Y(z)
hankel          Hankel determinants log D_n and partition functions log Z_n from the norms
"""

from equilibrium.weight import (  # the weight lives beside Field (re-exported here)
    Factor,
    JacobiFactor,
    PowerFactor,
    SmoothFactor,
    ConstantFactor,
    Weight,
    parse_factor,
)
from .recurrence import RecurrenceCoefficients, recurrence_coefficients, estimate_memory
from .zeros import GaussRule, gauss_rule, zeros
from .values import ScaledValues, orthonormal_values, monic_values, weighted_values, christoffel_darboux
from .hankel import HankelDeterminant, hankel_determinant
from .cauchy import OrthogonalityMatrix, SecondKindValues, second_kind_values, cauchy_transform, orthogonality_matrix

__all__ = [
    "Factor", "JacobiFactor", "PowerFactor", "SmoothFactor", "ConstantFactor", "Weight", "parse_factor",
    "RecurrenceCoefficients", "recurrence_coefficients", "estimate_memory",
    "GaussRule", "gauss_rule", "zeros",
    "ScaledValues", "orthonormal_values", "monic_values", "weighted_values", "christoffel_darboux",
    "HankelDeterminant", "hankel_determinant",
    "OrthogonalityMatrix", "SecondKindValues", "second_kind_values", "cauchy_transform", "orthogonality_matrix",
]
