"""Exceptions shared by the three packages.

Two kinds of failure are kept apart because the command line treats them
differently:

* :class:`InputError` -- the input is wrong (an unknown name in a field, a
  reversed interval, a non-confining field on an unbounded set).  The
  message names the problem and what would work.  Exit code 2.
* :class:`NumericalFailure` -- the input is acceptable but a computation
  could not certify its answer (a search that did not converge, two
  discretisations that disagree).  Exit code 3.
"""

from __future__ import annotations


class InputError(ValueError):
    """Bad input: the message is one line naming the problem and a remedy."""


class NumericalFailure(RuntimeError):
    """A computation that could not be certified; the message names the failed checks."""
