"""Exceptions shared by the three packages.

Two kinds of failure are kept apart because the command line treats them
differently:

* :class:`InputError` -- the input is wrong (an unknown name in a field, a
  reversed interval, a non-confining field on an unbounded set).  The
  message names the problem and what would work.  Exit code 2.
* :class:`NumericalFailure` -- the input is acceptable but a computation
  could not certify its answer (a search that did not converge, two
  discretisations that disagree).  Exit code 3.

The messages speak of the mathematical objects (the set, a parameter, the
factor), never of the options of a front end: the same library is driven by
the command line, by case files and from Python.  ``InputError.about`` names
the kind of input the message is about (``"set"``, ``"parameter"`` with
``InputError.name``, ...), so that a front end can add how that input is
written there (the CLI: ``--on=a:b``, ``--param t=VALUE``).
"""

from __future__ import annotations


class InputError(ValueError):
    """Bad input: the message is one line naming the problem and a remedy.

    ``about`` -- the kind of input at fault, when it is one a front end spells
    in its own way: ``"set"`` (the set Σ), ``"parameter"`` (the value of the
    parameter ``name``); ``None`` otherwise.
    """

    def __init__(self, message: str = "", *, about: str | None = None, name: str | None = None):
        super().__init__(message)
        self.about = about
        self.name = name

    def __reduce__(self):
        # keep ``about`` and ``name`` through pickling (errors cross process pools in sweeps)
        return _rebuild_input_error, (type(self), str(self), self.about, self.name)


def _rebuild_input_error(cls, message, about, name):
    return cls(message, about=about, name=name)


class NumericalFailure(RuntimeError):
    """A computation that could not be certified; the message names the failed checks."""
