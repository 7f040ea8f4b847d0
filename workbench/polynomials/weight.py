"""The weight and its factors live in :mod:`equilibrium.weight` (beside Field and IntervalSet).

These names stay importable from here for code written against the old place; the
project itself imports them from :mod:`equilibrium.weight`.
"""

from equilibrium.weight import (  # noqa: F401  (re-exported)
    ConstantFactor,
    Factor,
    JacobiFactor,
    PowerFactor,
    SmoothFactor,
    Weight,
    parse_factor,
)

__all__ = ["Factor", "JacobiFactor", "PowerFactor", "SmoothFactor", "ConstantFactor", "Weight", "parse_factor"]
