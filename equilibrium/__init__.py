"""Equilibrium measures of external fields on the line and on unions of intervals.

Front door::

    from equilibrium import Field, IntervalSet, solve, solve_signed
    mu = solve(Field.from_expression("x**4/4 - t*x**2/2", {"t": 3}))
    mu.support, mu.masses, mu.omega, mu.lagrange, mu.energy, mu.checks

Conventions of the whole project: :mod:`equilibrium.conventions`.
"""

from .errors import InputError, NumericalFailure
from .field import Field
from .measure import Classification, EquilibriumMeasure, Singularity
from .search import solve, solve_signed
from .sets import IntervalSet

__all__ = [
    "Classification",
    "EquilibriumMeasure",
    "Field",
    "InputError",
    "IntervalSet",
    "NumericalFailure",
    "Singularity",
    "solve",
    "solve_signed",
]
