"""Closed subsets Σ of the real line: finite unions of closed intervals.

The ends of the two outer intervals may be infinite (``-inf``/``inf``), so
Σ can be the whole line, a half-line, an interval or a union of intervals.

Text form
---------
One grammar, parsed here and nowhere else (the command line's ``--on`` and the
case file's ``[set] intervals`` both call :meth:`IntervalSet.parse`; the case
file's list form ``[[a, "inf"], …]`` reads its string ends with
:func:`parse_end`)::

    set    := piece ("," piece)*
    piece  := end ":" end
    end    := ""  |  number  |  "inf" | "+inf" | "-inf" | "infinity" | "+infinity" | "-infinity"
    number := [+-] digits ["." digits] [("e"|"E") [+-] digits]      (ASCII digits 0-9 only)

Spaces around ends are ignored; letters are case-insensitive.  An empty end is
infinite on its side: ``:0`` is (-∞, 0], ``0:`` is [0, ∞) and ``-1:`` is
[-1, ∞) (on the command line write ``--on=-1:`` with the equals sign, or the
shell hands ``-1:`` to the option parser as an option).  Refused, with one line
naming the piece: numbers that are not finite in double precision (``1e400``)
or that underflow to 0 (``1e-400``), ``_`` digit separators (``1_0``), non-ASCII
digits (full-width ``１``), a piece without exactly one ``:``, reversed, empty,
overlapping or touching intervals, and an infinite end that is not an outer
end.  The pieces may come in any order (Σ is a set); they are sorted.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np

from .errors import InputError

__all__ = ["IntervalSet", "parse_end"]

_NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?", re.ASCII)


def parse_end(text: str, default: float, where: str = "end") -> float:
    """One end of an interval in the text form (module docstring); ``default`` for an empty end.

    ``where`` names the place in error messages (e.g. ``"piece 2"``).
    """
    token = text.strip()
    if token == "":
        return default
    lowered = token.lower()
    if lowered in ("inf", "+inf", "infinity", "+infinity"):
        return math.inf
    if lowered in ("-inf", "-infinity"):
        return -math.inf
    if not _NUMBER.fullmatch(token):
        raise InputError(f"set {where}: {token!r} is not a number; write intervals as a:b,c:d "
                         "with plain decimal numbers (e.g. -1:1,2:3)", about="set")
    value = float(token)
    if not math.isfinite(value):
        raise InputError(f"set {where}: {token!r} is not finite in double precision; "
                         "use an empty end or inf for an unbounded side", about="set")
    if value == 0.0 and any(c in "123456789" for c in token.lower().partition("e")[0]):
        raise InputError(f"set {where}: {token!r} underflows to 0 in double precision; "
                         "use numbers above 2.3e-308 in magnitude", about="set")
    return value


@dataclass(frozen=True)
class IntervalSet:
    """A closed set Σ = [α_1, β_1] ∪ … ∪ [α_m, β_m] with α_1 < β_1 < α_2 < … .

    Only α_1 may be ``-inf`` and only β_m may be ``+inf``.
    """

    intervals: tuple[tuple[float, float], ...]

    def __init__(self, intervals: Iterable[Sequence[float]]):
        cleaned: list[tuple[float, float]] = []
        for item in intervals:
            if len(item) != 2:
                raise InputError(f"an interval needs two ends, got {tuple(item)!r}", about="set")
            a, b = float(item[0]), float(item[1])
            if math.isnan(a) or math.isnan(b):
                raise InputError("an interval end is NaN; give finite numbers or inf", about="set")
            if not a < b:
                raise InputError(
                    f"interval {_fmt(a)}:{_fmt(b)} is reversed or empty; write the smaller end first (e.g. {_fmt(min(a, b))}:{_fmt(max(a, b))})"
                    if a != b
                    else f"interval {_fmt(a)}:{_fmt(b)} is a single point; give a < b",
                    about="set",
                )
            cleaned.append((a, b))
        if not cleaned:
            raise InputError("the set is empty; give at least one interval a:b", about="set")
        cleaned.sort()
        for (a0, b0), (a1, b1) in zip(cleaned, cleaned[1:]):
            if a1 <= b0:
                raise InputError(
                    f"intervals {_fmt(a0)}:{_fmt(b0)} and {_fmt(a1)}:{_fmt(b1)} overlap or touch; merge them into one interval",
                    about="set",
                )
        for k, (a, b) in enumerate(cleaned):
            if (a == -math.inf and k != 0) or (b == math.inf and k != len(cleaned) - 1):
                raise InputError("only the outer ends of the set may be infinite", about="set")
            if a == math.inf or b == -math.inf:
                raise InputError("an interval cannot start at +inf or end at -inf", about="set")
        object.__setattr__(self, "intervals", tuple(cleaned))

    # -- constructors ---------------------------------------------------
    @classmethod
    def real_line(cls) -> "IntervalSet":
        return cls([(-math.inf, math.inf)])

    @classmethod
    def parse(cls, text: str) -> "IntervalSet":
        """Parse ``a:b,c:d`` (see the module docstring)."""
        if not isinstance(text, str) or text.strip() == "":
            raise InputError("empty set; write intervals as a:b,c:d (e.g. -1:1 or 0: for [0, inf))", about="set")
        if len(text) > 2000:
            raise InputError("the set text is longer than 2000 characters", about="set")
        for column, char in enumerate(text, start=1):
            if not char.isascii() or (not char.isprintable() and char not in " \t"):
                raise InputError(f"character {char!r} (U+{ord(char):04X}) at column {column} of the set is "
                                 "not allowed; write the set in ASCII as a:b,c:d (e.g. -1:1,2:3)", about="set")
        pieces = [p for p in text.split(",")]
        intervals = []
        for k, piece in enumerate(pieces, start=1):
            if piece.count(":") != 1:
                raise InputError(
                    f"set piece {k} {piece.strip()!r} must look like a:b (an empty end means infinity, e.g. 0:)",
                    about="set",
                )
            left, right = piece.split(":")
            a = parse_end(left, -math.inf, f"piece {k}")
            b = parse_end(right, math.inf, f"piece {k}")
            intervals.append((a, b))
        return cls(intervals)

    # -- properties -----------------------------------------------------
    @property
    def is_compact(self) -> bool:
        return math.isfinite(self.intervals[0][0]) and math.isfinite(self.intervals[-1][1])

    @property
    def is_real_line(self) -> bool:
        return len(self.intervals) == 1 and self.intervals[0] == (-math.inf, math.inf)

    @property
    def hull(self) -> tuple[float, float]:
        return (self.intervals[0][0], self.intervals[-1][1])

    @property
    def finite_endpoints(self) -> tuple[float, ...]:
        """Every finite endpoint of Σ: where hard edges may occur."""
        return tuple(e for ab in self.intervals for e in ab if math.isfinite(e))

    def contains(self, x: np.ndarray | float) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        inside = np.zeros(x.shape, dtype=bool)
        for a, b in self.intervals:
            inside |= (x >= a) & (x <= b)
        return inside

    def clipped(self, lower: float, upper: float) -> "IntervalSet":
        """Σ ∩ [lower, upper]."""
        pieces = []
        for a, b in self.intervals:
            a2, b2 = max(a, lower), min(b, upper)
            if a2 < b2:
                pieces.append((a2, b2))
        return IntervalSet(pieces)

    def describe(self) -> str:
        """The text form ``a:b,c:d`` with infinite ends written ``-inf``/``inf``.

        Every output (tables, JSON, HDF5 attributes, weight descriptions) writes a set
        this one way, so the real line is always ``-inf:inf``; :meth:`parse` reads it back.
        """
        return ",".join(f"{_fmt(a)}:{_fmt(b)}" for a, b in self.intervals)

    def __str__(self) -> str:
        return self.describe()


def _fmt(value: float) -> str:
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return repr(float(value)) if value != int(value) or abs(value) >= 1e16 else str(int(value))
