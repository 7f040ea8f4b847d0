"""The failure policy shared by the three packages.

Every result object carries

* ``verified`` -- ``True`` when every check is within its
  tolerance;
* ``checks`` -- the values of the checks, a ``dict[str, float]`` of plain floats (an
  array-valued check is reduced to its worst entry, :func:`worst`);
* ``message`` -- empty when verified, otherwise the failed checks with their
  values and tolerances (:func:`failure_message`).

Every front door that can fail numerically takes ``on_failure``:

* ``"raise"`` -- a result whose checks fail is not returned:
  :class:`~equilibrium.errors.NumericalFailure` is raised with the message;
* ``"mark"`` -- the result is returned with ``verified = False`` and the
  message.

In both modes a computation that produces no numbers at all (a search that
finds no support, a theta series beyond its point budget, a recurrence that
overflows) raises ``NumericalFailure``: there is nothing to mark.

A check that is NaN never passes: ``NaN <= tolerance`` is false, and every
comparison here is written so that a NaN fails it.  A check without a
tolerance is informative and fails only when it is not finite.
"""

from __future__ import annotations

import math
from typing import Any, Collection, Mapping, TypeVar

import numpy as np

from .errors import InputError, NumericalFailure

__all__ = ["ON_FAILURE", "failure_policy", "worst", "float_checks", "failed_checks", "failure_message", "settle"]

#: the two values of ``on_failure``
ON_FAILURE = ("raise", "mark")

T = TypeVar("T")


def failure_policy(on_failure: str) -> str:
    """``on_failure`` checked: ``"raise"`` or ``"mark"`` (anything else is an InputError)."""
    if on_failure not in ON_FAILURE:
        raise InputError(f"on_failure must be 'raise' or 'mark', not {on_failure!r}")
    return on_failure


def worst(value: Any, *, lower: bool = False) -> float:
    """One float for a check.

    An array (or a complex number) is reduced to its worst entry: the largest
    modulus for a check bounded above, the smallest real value for one bounded
    below (``lower=True``, a margin).  A NaN anywhere makes the check NaN; an
    empty array checks nothing and gives 0.0 (``+inf`` for a margin).

    Examples
    --------
    >>> worst([1e-16, -3e-15])
    3e-15
    >>> worst([0.2, 0.05], lower=True)
    0.05
    >>> worst([1e-16, float("nan")])
    nan
    """
    a = np.asarray(value)
    if a.size == 0:
        return math.inf if lower else 0.0
    if np.iscomplexobj(a):
        if lower:
            raise InputError("a lower-bounded check must be real")
        a = np.abs(a)
    a = a.astype(float)
    if np.isnan(a).any():
        return math.nan
    return float(np.min(a)) if lower else float(np.max(np.abs(a)))


def float_checks(checks: Mapping[str, Any], lower: Collection[str] = ()) -> dict[str, float]:
    """``checks`` with every value reduced to one float (:func:`worst`); ``lower`` names the margins."""
    return {str(name): worst(value, lower=name in lower) for name, value in checks.items()}


def failed_checks(checks: Mapping[str, float], tolerances: Mapping[str, float],
                  lower: Collection[str] = ()) -> list[str]:
    """Names of the checks that fail: above their tolerance, or below it for ``lower`` ones, or NaN.

    A check without a tolerance is informative; it fails only when it is not
    finite (NaN or an overflow to ±inf).
    """
    out = []
    for name, value in checks.items():
        value = float(value)
        if name not in tolerances:
            ok = math.isfinite(value)
        elif name in lower:
            ok = value >= tolerances[name]
        else:
            ok = value <= tolerances[name]
        if not ok:
            out.append(name)
    return out


def failure_message(checks: Mapping[str, float], tolerances: Mapping[str, float],
                    lower: Collection[str] = (), *, what: str = "") -> str:
    """Empty when every check passes; otherwise ``"<what> not verified: name = v (tolerance t), ..."``.

    Examples
    --------
    >>> failure_message({"residual": 3e-7, "spread": 1e-15}, {"residual": 1e-10, "spread": 1e-12},
    ...                 what="the fit")
    'the fit not verified: residual = 3e-07 (tolerance 1e-10)'
    """
    failed = failed_checks(checks, tolerances, lower)
    if not failed:
        return ""
    parts = []
    for name in failed:
        value = float(checks[name])
        if name in tolerances:
            relation = "at least" if name in lower else "tolerance"
            parts.append(f"{name} = {value:.3g} ({relation} {tolerances[name]:.0e})")
        else:
            parts.append(f"{name} = {value:.3g}")
    head = f"{what} not verified" if what else "not verified"
    return f"{head}: " + ", ".join(parts)


def settle(result: T, on_failure: str, *, what: str = "") -> T:
    """Return ``result``, or raise NumericalFailure with its message when it is not verified and
    ``on_failure == "raise"`` (``what`` names the object at the head of the message)."""
    if failure_policy(on_failure) == "raise" and not getattr(result, "verified"):
        message = getattr(result, "message", "") or "not verified"
        raise NumericalFailure(f"{what}: {message}" if what else message)
    return result
