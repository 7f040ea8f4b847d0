"""Case files: one TOML file describes one numerical experiment.

A case names the weight ``w_n(x) = exp(-n V(x)) h(x)`` on a set ``Σ`` (the
external field ``V`` with its parameters, the set, the factor ``h``), the
values of ``n`` at which the direct polynomials are computed (degree equal to
the scaling, ``k = n``), the comparisons to make, the figures to draw, where
to write the results, and optionally a parameter grid for a sweep.  The
schema is our own; it is documented table by table in :data:`SCHEMA` and in
the README.

Validation is strict: malformed TOML, unknown keys, wrong types and values
out of range raise :class:`equilibrium.errors.InputError` with a message
that names the file, the line, the table and the key, e.g.::

    cases/x.toml line 7: unknown key 'degre' in [polynomials]; known keys: n, ...

``tomllib`` reports line numbers only for syntax errors, so the line of a
key is found by scanning the text for its table header and its ``key =``
line (:class:`_LineLocator`).

Every case may carry a ``[reduced]`` table whose sub-tables (same schema as
the top-level ones: ``[reduced.polynomials]``, ``[reduced.comparisons]``,
``[reduced.sweep]``) override the full size; tests run each shipped case at
its reduced size.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any, Mapping

from equilibrium.errors import InputError
from workbench import limits

__all__ = [
    "Case",
    "FieldSpec",
    "SetSpec",
    "FactorSpec",
    "PolynomialSpec",
    "ModelSpec",
    "ComparisonSpec",
    "FigureSpec",
    "OutputSpec",
    "SweepAxis",
    "SweepSpec",
    "SCHEMA",
    "FIGURE_NAMES",
    "SWEEP_QUANTITIES",
    "load_case",
    "parse_case",
    "shipped_cases_directory",
    "shipped_case",
]

#: figures a run can draw (see :mod:`workbench.figures`)
FIGURE_NAMES = ("density", "coefficients", "errors", "gap_zeros", "edge_zeros")
#: quantities a sweep records at each grid point
SWEEP_QUANTITIES = ("bands", "omega", "lagrange", "energy", "support")

_NUMBER = (int, float)


@dataclass(frozen=True)
class _Key:
    """One key of the schema: accepted Python types and a short description."""

    types: tuple[type, ...]
    doc: str
    item_types: tuple[type, ...] | None = None  # for lists: type of each item


#: table name -> key -> _Key.  Sub-tables of [reduced] reuse the same entries.
SCHEMA: dict[str, dict[str, _Key]] = {
    "case": {
        "name": _Key((str,), "short identifier, used for file names ([A-Za-z0-9_-]+)"),
        "title": _Key((str,), "one-line title for tables and figures"),
        "description": _Key((str,), "free text"),
    },
    "field": {
        "expression": _Key((str,), "V(x) as an expression in x and named parameters"),
        "parameters": _Key((dict,), "inline table of parameter values, e.g. { t = 1.5 }"),
        "coefficients": _Key((list,), "ascending power coefficients of a polynomial V", _NUMBER),
        "zero": _Key((bool,), "true for V = 0 (only on a compact set: a fixed weight)"),
    },
    "set": {
        "intervals": _Key((str, list), "\"a:b,c:d\" (the --on grammar: an empty end is infinite, \"0:\" is "
                          "[0, inf)) or [[a, b], [c, d]] with numbers or end texts such as \"inf\""),
        "signed": _Key((bool,), "solve the signed problem on the whole set instead"),
    },
    "factor": {
        "expression": _Key((str,), "h(x) in the --factor grammar, e.g. \"x^0.7\" or \"(1-x)^0.5*abs(x-0.2)^0.6\" "
                           "(names from [field] parameters)"),
        "kind": _Key((str,), "\"none\", \"jacobi\" ((b-x)^alpha (x-a)^beta at the ends of Σ) or "
                     "\"fisher_hartwig\" (|x-c|^(2 gamma))"),
        "alpha": _Key(_NUMBER, "Jacobi exponent at the right end b of Σ (> -1)"),
        "beta": _Key(_NUMBER, "Jacobi exponent at the left end a of Σ (> -1)"),
        "c": _Key(_NUMBER, "location of the Fisher-Hartwig singularity"),
        "gamma": _Key(_NUMBER, "Fisher-Hartwig exponent (> -1/2)"),
    },
    "polynomials": {
        "n": _Key((list, dict), "list of n, or { start, stop, num, spacing = \"geometric\"|\"linear\" }"),
        "extra_degrees": _Key((int,), "coefficients are computed up to degree n + extra_degrees"),
        "value_points": _Key((int,), "number of points in the bulk where p_n is compared"),
    },
    "model": {
        "order": _Key((int,), "corrections of the predictions through c_K/n^K: 0 (leading order), 1 or 2; "
                      "every order 0..K is compared"),
        "method": _Key((str,), "\"series\" (the correction series) or \"residual\" (also a_n, b_n from the "
                       "residual problem solved numerically)"),
    },
    "comparisons": {
        "coefficients": _Key((bool,), "compare a_n, b_n with the model problem"),
        "values": _Key((bool,), "compare p_n(x) with the outer parametrix in the bulk"),
        "zeros": _Key((bool,), "compare zeros (bulk quantile rule, Airy edges, gaps)"),
        "band_counts": _Key((bool,), "count zeros per band against n mu(band)"),
        "small_norm": _Key((bool,), "Y(z) against the global parametrix on contours"),
        "log_hankel": _Key((bool,), "the Hankel determinant log D_n of the direct side against its large-n "
                          "expansion (gfunction.hankel)"),
        "rates": _Key((bool,), "fit log error = c + s log n with the standard error of s"),
        "contour_points": _Key((int,), "points on each contour of the small-norm check"),
        "contour_radius": _Key(_NUMBER, "radius of the circle around the support, relative to its half-width"),
    },
    "figures": {
        "enabled": _Key((bool,), "draw figures after the run"),
        "formats": _Key((list,), "subset of [\"pdf\", \"png\"]", (str,)),
        "which": _Key((list,), "subset of " + ", ".join(FIGURE_NAMES), (str,)),
        "dpi": _Key((int,), "resolution of PNG files"),
    },
    "output": {
        "directory": _Key((str,), "folder of the results (relative to the working directory)"),
        "file": _Key((str,), "name of the HDF5 file of a run"),
    },
    "sweep": {
        "axis": _Key((list,), "array of tables [[sweep.axis]] with name, start, stop, num"),
        "quantities": _Key((list,), "subset of " + ", ".join(SWEEP_QUANTITIES), (str,)),
        "num": _Key((list,), "grid sizes per axis (only in [reduced.sweep])", (int,)),
    },
    "sweep.axis": {
        "name": _Key((str,), "a parameter of the field"),
        "start": _Key(_NUMBER, "first grid value"),
        "stop": _Key(_NUMBER, "last grid value"),
        "num": _Key((int,), "number of grid values (>= 1)"),
    },
    "formulas": {
        "name": _Key((str,), "identifier of the formula (letters, digits, '_'), shown in tables and figures"),
        "quantity": _Key((str,), "what it predicts: \"a\", \"b\", \"gap_zero\", \"edge_zero\" or \"log_hankel\""),
        "expression": _Key((str,), "the formula in the expression grammar, in n and the names of "
                           "workbench.formulas (a_model, Omega_1, ell, ...)"),
        "parameters": _Key((dict,), "inline table of the formula's own constants, e.g. { alpha = 0.7 }"),
        "gap": _Key((int,), "gap_zero: the gap j (from 1, left to right)"),
        "edge": _Key((str,), "edge_zero: \"right\" (largest zeros) or \"left\""),
        "zero": _Key((int,), "edge_zero: which zero, counted inward from the edge (from 1)"),
        "expected_slope": _Key(_NUMBER, "claimed rate: the error is O(n^expected_slope); the formula is "
                               "rejected when the fitted slope exceeds it by more than 0.5"),
    },
    "reduced": {
        "polynomials": _Key((dict,), "overrides of [polynomials] for tests"),
        "comparisons": _Key((dict,), "overrides of [comparisons] for tests"),
        "sweep": _Key((dict,), "overrides of [sweep] for tests (num = [..])"),
    },
}

_TOP_LEVEL = ("case", "field", "set", "factor", "model", "polynomials", "comparisons", "figures",
              "output", "sweep", "formulas", "reduced")


# --------------------------------------------------------------------------- specs
@dataclass(frozen=True)
class FieldSpec:
    """External field V: an expression with parameters, polynomial coefficients, or zero."""

    expression: str | None = None
    parameters: Mapping[str, float] = field(default_factory=dict)
    coefficients: tuple[float, ...] | None = None
    zero: bool = False

    def describe(self) -> str:
        if self.zero:
            return "V = 0"
        if self.coefficients is not None:
            return "V = " + " + ".join(f"{c:g} x^{j}" for j, c in enumerate(self.coefficients) if c)
        text = f"V = {self.expression}"
        if self.parameters:
            text += " with " + ", ".join(f"{k} = {v:g}" for k, v in self.parameters.items())
        return text

    def with_parameters(self, values: Mapping[str, float]) -> "FieldSpec":
        merged = dict(self.parameters)
        merged.update({k: float(v) for k, v in values.items()})
        return dataclasses.replace(self, parameters=merged)


@dataclass(frozen=True)
class SetSpec:
    """The set Σ as a tuple of (a, b) with a < b; ends may be ±inf."""

    intervals: tuple[tuple[float, float], ...] = ((-math.inf, math.inf),)
    signed: bool = False

    @property
    def is_compact(self) -> bool:
        return all(math.isfinite(a) and math.isfinite(b) for a, b in self.intervals)

    def text(self) -> str:
        """The set as every output writes it (:meth:`equilibrium.IntervalSet.describe`)."""
        from equilibrium.sets import IntervalSet

        return IntervalSet(self.intervals).describe()


@dataclass(frozen=True)
class FactorSpec:
    """The n-independent factor h of the weight.

    Either ``expression``, text in the grammar of the command line's ``--factor``
    (:func:`equilibrium.weight.parse_factor`), or a ``kind`` with its numbers:
    ``"jacobi"`` (``(b-x)^alpha (x-a)^beta`` at the ends a, b of Σ) and
    ``"fisher_hartwig"`` (``|x-c|^(2 gamma)``) are sugar that build the same
    factor objects (:class:`JacobiFactor`, :class:`PowerFactor`) as the
    expression ``(b-x)^alpha*(x-a)^beta`` or ``abs(x-c)^(2*gamma)`` would.
    """

    kind: str = "none"
    alpha: float = 0.0
    beta: float = 0.0
    c: float = 0.0
    gamma: float = 0.0
    expression: str = ""

    @property
    def is_one(self) -> bool:
        """h = 1 (no factor)."""
        return self.kind == "none" and not self.expression

    def build(self, on, parameters: Mapping[str, float] | None = None) -> tuple:
        """The factor objects of h on the set ``on`` (an :class:`equilibrium.IntervalSet`)."""
        from equilibrium.weight import JacobiFactor, PowerFactor, parse_factor

        if self.expression:
            return parse_factor(self.expression, dict(parameters or {}), on)
        if self.kind == "jacobi":
            lo, hi = on.hull
            return (JacobiFactor(a=lo, b=hi, alpha=self.alpha, beta=self.beta),)
        if self.kind == "fisher_hartwig":
            return (PowerFactor(c=self.c, gamma=self.gamma),)
        return ()

    def describe(self) -> str:
        if self.expression:
            return f"h = {self.expression}"
        if self.kind == "jacobi":
            return f"h = (b-x)^{self.alpha:g} (x-a)^{self.beta:g}"
        if self.kind == "fisher_hartwig":
            return f"h = |x - {self.c:g}|^(2*{self.gamma:g})"
        return "h = 1"


@dataclass(frozen=True)
class PolynomialSpec:
    """Values of n (degree = scaling) and the size of the direct computation."""

    n: tuple[int, ...] = (50, 100, 200)
    extra_degrees: int = 2
    value_points: int = 9


@dataclass(frozen=True)
class ModelSpec:
    """Which predictions: the orders 0 … ``order`` of the correction series, and with
    ``method = "residual"`` also the residual problem solved numerically."""

    order: int = 0
    method: str = "series"


@dataclass(frozen=True)
class ComparisonSpec:
    coefficients: bool = True
    values: bool = True
    zeros: bool = True
    band_counts: bool = True
    small_norm: bool = True
    log_hankel: bool = True
    rates: bool = True
    contour_points: int = 64
    contour_radius: float = 1.5


@dataclass(frozen=True)
class FigureSpec:
    enabled: bool = True
    formats: tuple[str, ...] = ("pdf", "png")
    which: tuple[str, ...] = FIGURE_NAMES
    dpi: int = 300


@dataclass(frozen=True)
class OutputSpec:
    directory: str | None = None
    file: str = "run.h5"


@dataclass(frozen=True)
class SweepAxis:
    name: str
    start: float
    stop: float
    num: int

    def values(self):
        import numpy as np

        return np.linspace(self.start, self.stop, self.num)


@dataclass(frozen=True)
class SweepSpec:
    axes: tuple[SweepAxis, ...]
    quantities: tuple[str, ...] = ("bands", "omega", "lagrange", "energy", "support")

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(axis.num for axis in self.axes)


@dataclass(frozen=True)
class Case:
    """A validated case file (frozen); ``text`` keeps the file verbatim for provenance."""

    name: str
    title: str
    description: str
    field: FieldSpec
    set: SetSpec
    factor: FactorSpec
    polynomials: PolynomialSpec
    comparisons: ComparisonSpec
    figures: FigureSpec
    output: OutputSpec
    sweep: SweepSpec | None
    source: str
    text: str
    reduced: bool = False
    model: ModelSpec = ModelSpec()
    formulas: tuple = ()    # workbench.formulas.FormulaSpec, one per [[formulas]] table
    #: what the computed results depend on: the parsed tables except [[formulas]], as canonical JSON
    computed_text: str = ""

    @property
    def digest(self) -> str:
        """SHA-256 of what the results depend on and the size flag: partial results are tied to it.

        The formulas are left out (they are evaluated on stored numbers, so adding or changing
        one reuses every finished n and the model stage), and so are comments and layout (the
        parsed tables are hashed, not the text).
        """
        basis = self.computed_text or self.text
        return hashlib.sha256((basis + f"\nreduced={self.reduced}").encode()).hexdigest()

    def output_directory(self, override: str | Path | None = None) -> Path:
        if override is not None:
            return Path(override)
        if self.output.directory:
            return Path(self.output.directory)
        return Path("out") / (self.name + ("-reduced" if self.reduced else ""))

    def parameters(self) -> dict[str, Any]:
        """Flat description for file attributes and summary tables."""
        return {
            "field": self.field.describe(),
            "field_parameters": dict(self.field.parameters),
            "set": self.set.text(),
            "signed": self.set.signed,
            "factor": self.factor.describe(),
            "n": list(self.polynomials.n),
            "reduced": self.reduced,
        }

    # The numerical objects are built lazily so that loading a case needs no solver.
    def build_field(self, parameters: Mapping[str, float] | None = None):
        """The :class:`equilibrium.Field` of the case (parameters overridden by ``parameters``)."""
        from equilibrium import Field

        spec = self.field if parameters is None else self.field.with_parameters(parameters)
        if spec.zero:
            return Field.zero()
        if spec.coefficients is not None:
            return Field.from_coefficients(list(spec.coefficients))
        return Field.from_expression(spec.expression, parameters=dict(spec.parameters))

    def build_set(self):
        from equilibrium import IntervalSet

        if self.set.intervals == ((-math.inf, math.inf),):
            return IntervalSet.real_line()
        return IntervalSet(list(self.set.intervals))


# ------------------------------------------------------------------- line locator
_HEADER = re.compile(r"^\s*(\[\[?)\s*([A-Za-z0-9_.\-\" ]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-]+|\"[^\"]*\")\s*=")


class _LineLocator:
    """Line numbers of table headers and keys, found by scanning the TOML text.

    Array-of-tables headers ``[[t]]`` are numbered by occurrence, so the key
    ``name`` of the second ``[[sweep.axis]]`` is found as ``("sweep.axis", 1, "name")``.
    Keys of inline tables map to the line of their parent key.
    """

    def __init__(self, text: str) -> None:
        self.headers: dict[tuple[str, int], int] = {}
        self.keys: dict[tuple[str, int, str], int] = {}
        table, index = "", 0
        counts: dict[str, int] = {}
        for number, line in enumerate(text.splitlines(), start=1):
            header = _HEADER.match(line)
            if header and not _KEY.match(line):
                table = header.group(2).replace('"', "").replace(" ", "")
                if header.group(1) == "[[":
                    index = counts.get(table, 0)
                    counts[table] = index + 1
                else:
                    index = 0
                self.headers.setdefault((table, index), number)
                continue
            key = _KEY.match(line)
            if key:
                name = key.group(1).strip('"')
                self.keys.setdefault((table, index, name), number)
                # dotted keys like polynomials.n = ... at top level
                if "." in name:
                    *parents, leaf = name.split(".")
                    self.keys.setdefault((".".join([table, *parents]).strip("."), 0, leaf), number)

    def line(self, table: str, key: str | None = None, index: int = 0) -> int | None:
        if key is not None:
            found = self.keys.get((table, index, key))
            if found is not None:
                return found
            # a key written as an inline table member: report the parent's line
            if "." in table:
                parent, leaf = table.rsplit(".", 1)
                found = self.keys.get((parent, 0, leaf))
                if found is not None:
                    return found
        found = self.headers.get((table, index))
        if found is None and "." in table:
            parent, leaf = table.rsplit(".", 1)
            found = self.keys.get((parent, 0, leaf)) or self.headers.get((parent, 0))
        return found


# ---------------------------------------------------------------------- validator
class _Validator:
    def __init__(self, text: str, source: str) -> None:
        self.text = text
        self.source = source
        self.locator = _LineLocator(text)

    def fail(self, message: str, table: str = "", key: str | None = None, index: int = 0) -> InputError:
        line = self.locator.line(table, key, index) if table else None
        where = f"{self.source} line {line}" if line else self.source
        return InputError(f"{where}: {message}")

    def check_table(self, data: Mapping[str, Any], table: str, schema_name: str | None = None,
                    index: int = 0) -> dict[str, Any]:
        schema = SCHEMA[schema_name or table]
        label = f"[[{table}]]" if table.startswith(("sweep.axis", "formulas")) else f"[{table}]"
        for key, value in data.items():
            if key not in schema:
                raise self.fail(f"unknown key '{key}' in {label}; known keys: {', '.join(schema)}",
                                table, key, index)
            spec = schema[key]
            if not _is_instance(value, spec.types):
                raise self.fail(
                    f"key '{key}' in {label} must be {_type_names(spec.types)}, got "
                    f"{_type_name(value)} ({spec.doc})", table, key, index)
            if spec.item_types is not None and isinstance(value, list):
                for item in value:
                    if not _is_instance(item, spec.item_types):
                        raise self.fail(
                            f"key '{key}' in {label} must be a list of {_type_names(spec.item_types)}, "
                            f"got an item {item!r} ({spec.doc})", table, key, index)
        return dict(data)

    def require_table(self, data: Mapping[str, Any], name: str) -> dict[str, Any]:
        value = data.get(name, {})
        if not isinstance(value, dict):
            raise self.fail(f"'{name}' must be a table [{name}], got {_type_name(value)}", "", None)
        return value


def _is_instance(value: Any, types: tuple[type, ...]) -> bool:
    if isinstance(value, bool) and bool not in types:
        return False  # true/false is not a number here
    return isinstance(value, types)


def _type_name(value: Any) -> str:
    return {bool: "a boolean", int: "an integer", float: "a number", str: "a string",
            list: "a list", dict: "a table"}.get(type(value), type(value).__name__)


def _type_names(types: tuple[type, ...]) -> str:
    names = {bool: "a boolean", int: "an integer", float: "a number", str: "a string",
             list: "a list", dict: "a table"}
    if set(types) == {int, float}:
        return "a number"
    return " or ".join(dict.fromkeys(names.get(t, t.__name__) for t in types))


# ------------------------------------------------------------------------ parsing
def shipped_cases_directory() -> Path:
    """The folder of the shipped case files (``cases/`` of the source tree, or packaged)."""
    here = Path(__file__).resolve().parent
    for candidate in (here / "cases", here.parent / "cases"):
        if candidate.is_dir() and any(candidate.glob("*.toml")):
            return candidate
    raise InputError("the shipped cases/ folder was not found beside the package; "
                     "give the path of a case file instead")


def shipped_case(name: str) -> Path:
    """Path of the shipped case ``name`` (without ``.toml``)."""
    path = shipped_cases_directory() / f"{name}.toml"
    if not path.exists():
        known = ", ".join(sorted(p.stem for p in shipped_cases_directory().glob("*.toml")))
        raise InputError(f"no shipped case named {name!r}; shipped: {known}")
    return path


def load_case(path: str | Path, *, reduced: bool = False) -> Case:
    """Read and validate a case file; ``reduced=True`` applies its ``[reduced]`` overrides."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"case file {path} not found; give the path of a .toml case "
                         f"(see the cases/ folder)") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read case file {path}: {exc}") from None
    return parse_case(text, source=str(path), reduced=reduced)


class _FloatOutOfRange(Exception):
    """A TOML float literal that is not representable (1e400, 1e-400)."""


def _toml_float(literal: str) -> float:
    """TOML floats, refusing literals that overflow to inf or underflow to 0 in double precision
    (TOML's ``inf`` and ``nan`` literals stay what they are)."""
    value = float(literal)
    plain = literal.lower().lstrip("+-")
    if plain in ("inf", "nan"):
        return value
    if not math.isfinite(value):
        raise _FloatOutOfRange(f"number {literal} is not finite in double precision; use numbers below "
                               "1.8e308 in magnitude (or inf)")
    if value == 0.0 and any(c in "123456789" for c in plain.partition("e")[0]):
        raise _FloatOutOfRange(f"number {literal} underflows to 0 in double precision; use numbers above "
                               "2.3e-308 in magnitude")
    return value


def parse_case(text: str, *, source: str = "<case>", reduced: bool = False) -> Case:
    """Validate the TOML ``text`` of a case; errors name ``source``, the line and the key."""
    check = _Validator(text, source)
    try:
        data = tomllib.loads(text, parse_float=_toml_float)
    except _FloatOutOfRange as exc:
        literal = str(exc).split()[1]
        line = next((k for k, row in enumerate(text.splitlines(), start=1) if literal in row), None)
        raise InputError(f"{source}{f' line {line}' if line else ''}: {exc}") from None
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        match = re.search(r"\(at line (\d+), column (\d+)\)", message)
        if match:
            message = message[: match.start()].strip()
            raise InputError(f"{source} line {match.group(1)}: malformed TOML: {message} "
                             f"(column {match.group(2)})") from None
        raise InputError(f"{source}: malformed TOML: {message}") from None
    except RecursionError:
        raise InputError(f"{source}: malformed TOML: arrays or tables nested too deep for a case file "
                         "(a case nests at most three levels)") from None

    for key in data:
        if key not in _TOP_LEVEL:
            if isinstance(data[key], dict):
                raise check.fail(f"unknown table [{key}]; known tables: {', '.join(_TOP_LEVEL)}", key)
            raise _top_key_error(check, key)

    tables = {name: check.require_table(data, name) for name in _TOP_LEVEL if name not in ("sweep", "formulas")}
    for name in ("case", "field", "set", "factor", "model", "polynomials", "comparisons", "figures", "output"):
        check.check_table(tables[name], name)
    check.check_table(tables["reduced"], "reduced")

    overrides = {}
    if reduced:
        for name in ("polynomials", "comparisons", "sweep"):
            sub = tables["reduced"].get(name, {})
            check.check_table(sub, f"reduced.{name}", name)
            overrides[name] = sub
    else:
        for name in ("polynomials", "comparisons", "sweep"):
            sub = tables["reduced"].get(name, {})
            check.check_table(sub, f"reduced.{name}", name)

    meta = tables["case"]
    name = meta.get("name")
    if name is None:
        name = Path(source).stem if source and not source.startswith("<") else "case"
    if not re.fullmatch(r"[A-Za-z0-9_\-]+", name):
        raise check.fail(f"case name {name!r} may hold only letters, digits, '_' and '-'", "case", "name")
    if len(name) > 200:  # the output folder out/NAME-reduced must stay within a file system's 255 bytes
        raise check.fail(f"case name {name[:20]}... has {len(name)} characters; use at most 200", "case", "name")

    field_spec = _field(check, tables["field"], tables["factor"].get("expression"))
    set_spec = _set(check, tables["set"])
    factor_spec = _factor(check, tables["factor"], set_spec, field_spec)
    if field_spec.zero and not set_spec.is_compact:
        raise check.fail("V = 0 needs a compact set; give [set] intervals = \"a:b\" with finite ends",
                         "field", "zero")

    poly_table = dict(tables["polynomials"])
    poly_table.update(overrides.get("polynomials", {}))
    polynomials = _polynomials(check, poly_table, "reduced.polynomials" if "n" in overrides.get(
        "polynomials", {}) else "polynomials")

    comp_table = dict(tables["comparisons"])
    comp_table.update(overrides.get("comparisons", {}))
    comparisons = _comparisons(check, comp_table)

    figures = _figures(check, tables["figures"])
    output = _output(check, tables["output"])
    model = _model(check, tables["model"])

    formulas = _formulas(check, data.get("formulas", []), field_spec, model, comparisons)

    sweep = None
    if "sweep" in data:
        if not isinstance(data["sweep"], dict):
            raise check.fail("'sweep' must be a table [sweep]")
        sweep = _sweep(check, data["sweep"], overrides.get("sweep", {}), field_spec)

    return Case(
        name=name,
        title=meta.get("title", name),
        description=meta.get("description", ""),
        field=field_spec,
        set=set_spec,
        factor=factor_spec,
        polynomials=polynomials,
        comparisons=comparisons,
        figures=figures,
        output=output,
        sweep=sweep,
        source=source,
        text=text,
        reduced=reduced,
        model=model,
        formulas=formulas,
        computed_text=json.dumps({key: value for key, value in data.items() if key != "formulas"},
                                 sort_keys=True, default=str, ensure_ascii=False),
    )


def _top_key_error(check: _Validator, key: str) -> InputError:
    line = check.locator.keys.get(("", 0, key))
    where = f"{check.source} line {line}" if line else check.source
    return InputError(f"{where}: unknown top-level key '{key}'; keys belong in a table, one of "
                      f"{', '.join(_TOP_LEVEL)}")


def _field(check: _Validator, table: dict[str, Any], factor_text: Any = None) -> FieldSpec:
    given = [k for k in ("expression", "coefficients", "zero") if k in table and table[k] is not False]
    if len(given) != 1:
        what = "none" if not given else " and ".join(given)
        raise check.fail(f"[field] needs exactly one of expression, coefficients or zero = true "
                         f"(found {what})", "field", given[1] if len(given) > 1 else None)
    parameters = table.get("parameters", {})
    for pname, value in parameters.items():
        if not _is_instance(value, _NUMBER):
            raise check.fail(f"parameter '{pname}' in [field] parameters must be a number, got "
                             f"{_type_name(value)}", "field", "parameters")
        if not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", pname):
            raise check.fail(f"parameter name {pname!r} is not an identifier", "field", "parameters")
    if parameters and "expression" not in table:
        raise check.fail("[field] parameters only make sense with an expression", "field", "parameters")
    spec = FieldSpec(
        expression=table.get("expression"),
        parameters={k: float(v) for k, v in parameters.items()},
        coefficients=tuple(float(c) for c in table["coefficients"]) if "coefficients" in table else None,
        zero=bool(table.get("zero", False)),
    )
    if spec.expression is not None:
        _check_expression(check, spec, factor_text)
    if spec.coefficients is not None and not spec.coefficients:
        raise check.fail("[field] coefficients must not be empty", "field", "coefficients")
    return spec


def _check_expression(check: _Validator, spec: FieldSpec, factor_text: Any = None) -> None:
    """Parse the expression now (if the parser is installed) so errors carry the line.

    A parameter is used when the field's expression or the [factor] expression (whose
    names take the field's parameters) names it."""
    try:
        from equilibrium import Field
    except ImportError:  # the parser is not there yet: the error surfaces at run time
        return
    try:
        limits.check_expression(spec.expression, dict(spec.parameters), "[field] expression")
        Field.from_expression(spec.expression, parameters=dict(spec.parameters))
    except InputError as exc:
        hint = ""
        if getattr(exc, "about", None) == "parameter":
            name = exc.name or "t"
            hint = f" (give it in [field], e.g. parameters = {{ {name} = 1.0 }})"
        raise check.fail(f"in [field] expression: {exc}{hint}", "field", "expression") from None
    from equilibrium.expression import parse_expression

    # a value for a name the expression does not use is a misspelling, not a choice
    used = set(parse_expression(spec.expression, dict(spec.parameters)).parameter_names)
    if isinstance(factor_text, str):
        try:
            used |= set(parse_expression(factor_text, dict(spec.parameters)).parameter_names)
        except InputError:
            pass  # reported with its own line when [factor] is read
    unused = [name for name in spec.parameters if name not in used]
    if unused:
        raise check.fail(f"[field] parameters {', '.join(unused)} not used by the expression "
                         f"(it uses {', '.join(sorted(used)) or 'no parameter'}); remove or rename them",
                         "field", "parameters")


def _formulas(check: _Validator, raw: Any, field_spec: FieldSpec, model: ModelSpec,
              comparisons: ComparisonSpec) -> tuple:
    """[[formulas]]: each table checked now (names, quantity, grammar), so a bad formula stops
    the run before anything is computed (workbench.formulas.check_formula)."""
    from workbench.formulas import FormulaSpec, check_formula

    if not isinstance(raw, list) or not all(isinstance(t, dict) for t in raw):
        raise check.fail("formulas must be written as [[formulas]] tables", "formulas")
    specs, seen = [], set()
    for index, table in enumerate(raw):
        check.check_table(table, "formulas", index=index)
        label = f"[[formulas]] number {index + 1}" + (f" '{table['name']}'" if "name" in table else "")
        for key in ("name", "quantity", "expression"):
            if key not in table:
                raise check.fail(f"{label} lacks key '{key}'", "formulas", None, index)
        parameters = table.get("parameters", {})
        for pname, value in parameters.items():
            if not _is_instance(value, _NUMBER):
                raise check.fail(f"{label}: parameter '{pname}' must be a number, got {_type_name(value)}",
                                 "formulas", "parameters", index)
        slope = table.get("expected_slope")
        spec = FormulaSpec(name=table["name"], quantity=table["quantity"], expression=table["expression"],
                           parameters={k: float(v) for k, v in parameters.items()}, gap=table.get("gap", 1),
                           edge=table.get("edge", "right"), zero=table.get("zero", 1),
                           expected_slope=None if slope is None else float(slope))
        for key, allowed in (("gap", "gap_zero"), ("edge", "edge_zero"), ("zero", "edge_zero")):
            if key in table and spec.quantity != allowed:
                raise check.fail(f"{label}: key '{key}' belongs to quantity = \"{allowed}\"", "formulas", key, index)
        try:
            check_formula(spec, field_spec.parameters, order=model.order, method=model.method,
                          log_hankel=comparisons.log_hankel)
        except InputError as exc:
            key = "quantity" if "quantity" in str(exc)[:9] else ("name" if str(exc).startswith("name") else
                                                                 "expression")
            raise check.fail(f"{label}: {exc}", "formulas", key, index) from None
        if spec.name in seen:
            raise check.fail(f"{label}: the name '{spec.name}' is taken by another formula", "formulas", "name",
                             index)
        seen.add(spec.name)
        specs.append(spec)
    return tuple(specs)


def _set(check: _Validator, table: dict[str, Any]) -> SetSpec:
    """[set]: the text form goes through the one parser of the --on option
    (:meth:`equilibrium.IntervalSet.parse`), the list form through its end parser and
    the same constructor, so both accept and refuse exactly what the command line does."""
    from equilibrium.sets import IntervalSet, parse_end

    raw = table.get("intervals", "-inf:inf")
    try:
        if isinstance(raw, str):
            sigma = IntervalSet.parse(raw)
        else:
            pairs = []
            for k, item in enumerate(raw, start=1):
                if not isinstance(item, list) or len(item) != 2:
                    raise InputError(f"item {k} {item!r} is not a pair [a, b]")
                ends = []
                for default, end in zip((-math.inf, math.inf), item):
                    if isinstance(end, str):
                        ends.append(parse_end(end, default, f"pair {k}"))
                    elif isinstance(end, float):
                        ends.append(end)       # TOML's own number grammar (its inf included)
                    elif isinstance(end, int) and not isinstance(end, bool):
                        try:
                            ends.append(float(end))
                        except OverflowError:
                            raise InputError(f"set pair {k}: {end} is not finite in double precision") from None
                    else:
                        raise InputError(f"set pair {k}: {end!r} is not a number")
                pairs.append(tuple(ends))
            sigma = IntervalSet(pairs)
        limits.check_intervals(len(sigma.intervals))
    except InputError as exc:
        raise check.fail(f"[set] intervals {raw!r}: {exc}", "set", "intervals") from None
    spec = SetSpec(intervals=sigma.intervals, signed=bool(table.get("signed", False)))
    if spec.signed and not spec.is_compact:
        raise check.fail("[set] signed = true needs a compact set", "set", "signed")
    return spec


def _factor(check: _Validator, table: dict[str, Any], set_spec: SetSpec, field_spec: FieldSpec) -> FactorSpec:
    if "expression" in table:
        for key in ("kind", "alpha", "beta", "c", "gamma"):
            if key in table and not (key == "kind" and table[key] == "none"):
                raise check.fail(f"key '{key}' in [factor] does not go with expression; give either "
                                 f"expression = \"...\" or kind with its numbers", "factor", key)
        spec = FactorSpec(expression=table["expression"])
        from equilibrium.sets import IntervalSet

        try:
            spec.build(IntervalSet(list(set_spec.intervals)), field_spec.parameters)
        except InputError as exc:
            raise check.fail(f"in [factor] expression: {exc}", "factor", "expression") from None
        return spec
    kind = table.get("kind", "none")
    allowed = {"none": (), "jacobi": ("alpha", "beta"), "fisher_hartwig": ("c", "gamma")}
    if kind not in allowed:
        raise check.fail(f"[factor] kind {kind!r} unknown; use one of {', '.join(allowed)} "
                         f"or expression = \"...\"", "factor", "kind")
    for key in ("alpha", "beta", "c", "gamma"):
        if key in table and key not in allowed[kind]:
            raise check.fail(f"key '{key}' in [factor] does not apply to kind = {kind!r}",
                             "factor", key)
    spec = FactorSpec(kind=kind, **{k: float(table[k]) for k in allowed[kind] if k in table})
    for key in allowed[kind]:
        if not math.isfinite(getattr(spec, key)):
            raise check.fail(f"[factor] {key} = {getattr(spec, key)} must be a finite number", "factor", key)
    if kind == "jacobi":
        for key in ("alpha", "beta"):
            if not getattr(spec, key) > -1:
                raise check.fail(f"[factor] {key} = {getattr(spec, key)} must be > -1 "
                                 f"(integrability)", "factor", key)
        if not set_spec.is_compact:
            raise check.fail("[factor] kind = \"jacobi\" needs a compact set with finite ends",
                             "factor", "kind")
    if kind == "fisher_hartwig" and not spec.gamma > -0.5:
        raise check.fail(f"[factor] gamma = {spec.gamma} must be > -1/2 (integrability)",
                         "factor", "gamma")
    return spec


def _polynomials(check: _Validator, table: dict[str, Any], where_n: str) -> PolynomialSpec:
    values = table.get("n", [50, 100, 200])
    if isinstance(values, dict):
        known = {"start", "stop", "num", "spacing"}
        for key in values:
            if key not in known:
                raise check.fail(f"unknown key '{key}' in n = {{...}}; known keys: "
                                 f"{', '.join(sorted(known))}", where_n, "n")
        if not all(key in values and _is_instance(values[key], (int,)) for key in ("start", "stop", "num")):
            found = {key: values.get(key) for key in ("start", "stop", "num")}
            raise check.fail(f"n = {{ start, stop, num }} needs three integers (found {found}), "
                             "e.g. n = { start = 40, stop = 640, num = 5 }", where_n, "n")
        start, stop, num = int(values["start"]), int(values["stop"]), int(values["num"])
        spacing = values.get("spacing", "geometric")
        if spacing not in ("geometric", "linear") or start < 1 or stop < start or num < 1:
            raise check.fail("n = { start >= 1, stop >= start, num >= 1, spacing = \"geometric\" or "
                             "\"linear\" }", where_n, "n")
        if stop > limits.MAX_N or num > limits.MAX_N:
            raise check.fail(f"n = {{ start = {start}, stop = {stop}, num = {num} }}: stop and num must be at most "
                             f"the supported {limits.MAX_N}", where_n, "n")
        import numpy as np

        grid = (np.geomspace(start, stop, num) if spacing == "geometric"
                else np.linspace(start, stop, num))
        ns = tuple(sorted({int(round(v)) for v in grid}))
    else:
        if not values or not all(_is_instance(v, (int,)) for v in values):
            raise check.fail("n must be a non-empty list of integers or { start, stop, num }",
                             where_n, "n")
        ns = tuple(sorted(set(values)))
    if ns[0] < 2:
        raise check.fail(f"n must be >= 2, got {ns[0]}", where_n, "n")
    if ns[-1] > limits.MAX_N:
        raise check.fail(f"n = {ns[-1]} is larger than the supported {limits.MAX_N}", where_n, "n")
    extra = table.get("extra_degrees", 2)
    points = table.get("value_points", 9)
    if extra < 1:
        raise check.fail("extra_degrees must be >= 1", "polynomials", "extra_degrees")
    if points < 1:
        raise check.fail("value_points must be >= 1", "polynomials", "value_points")
    try:
        limits.check_points(points, "value_points", 9)
    except InputError as exc:
        raise check.fail(str(exc), "polynomials", "value_points") from None
    return PolynomialSpec(n=ns, extra_degrees=extra, value_points=points)


def _model(check: _Validator, table: dict[str, Any]) -> ModelSpec:
    spec = ModelSpec(**table)
    if spec.order not in (0, 1, 2):
        raise check.fail(f"order = {spec.order} must be 0, 1 or 2", "model", "order")
    if spec.method not in ("series", "residual"):
        raise check.fail(f"method = {spec.method!r} must be \"series\" or \"residual\"", "model", "method")
    return spec


def _comparisons(check: _Validator, table: dict[str, Any]) -> ComparisonSpec:
    spec = ComparisonSpec(**{k: (float(v) if k == "contour_radius" else v) for k, v in table.items()})
    if spec.contour_points < 8:
        raise check.fail("contour_points must be >= 8", "comparisons", "contour_points")
    try:
        limits.check_points(spec.contour_points, "contour_points", 64)
    except InputError as exc:
        raise check.fail(str(exc), "comparisons", "contour_points") from None
    if not spec.contour_radius > 1.0:
        raise check.fail("contour_radius must be > 1 (the circle must enclose the support)",
                         "comparisons", "contour_radius")
    if not spec.contour_radius <= 1e3:  # inf made every small-norm value NaN
        raise check.fail(f"contour_radius = {spec.contour_radius:g} must be finite, at most 1000 half-widths "
                         "(e.g. 1.5; the second circle is twice as large)", "comparisons", "contour_radius")
    return spec


def _figures(check: _Validator, table: dict[str, Any]) -> FigureSpec:
    formats = tuple(table.get("formats", ("pdf", "png")))
    for fmt in formats:
        if fmt not in ("pdf", "png"):
            raise check.fail(f"[figures] format {fmt!r} unknown; use \"pdf\" and/or \"png\"",
                             "figures", "formats")
    which = tuple(table.get("which", FIGURE_NAMES))
    for name in which:
        if name not in FIGURE_NAMES:
            raise check.fail(f"[figures] figure {name!r} unknown; known: {', '.join(FIGURE_NAMES)}",
                             "figures", "which")
    dpi = table.get("dpi", 300)
    if not 50 <= dpi <= 1200:
        raise check.fail("[figures] dpi must lie in 50..1200", "figures", "dpi")
    return FigureSpec(enabled=table.get("enabled", True), formats=formats, which=which, dpi=dpi)


def _output(check: _Validator, table: dict[str, Any]) -> OutputSpec:
    name = table.get("file", "run.h5")
    if "/" in name or "\x00" in name or len(name.encode()) > 200 or not name.endswith(".h5"):
        raise check.fail(f"[output] file {name[:60]!r} must be a plain file name (at most 200 bytes) ending in .h5",
                         "output", "file")
    directory = table.get("directory")
    if directory is not None:
        # a case file is data from anywhere: it may name a folder under the working folder and no
        # other (an absolute path or a climb with .. would let a shared case write over files
        # elsewhere); --out on the command line is the user's own choice and may go anywhere
        parts = PurePosixPath(directory).parts
        if (not directory.strip() or "\x00" in directory or "\\" in directory or directory.startswith(("/", "~"))
                or ".." in parts or len(directory.encode()) > 1000):
            raise check.fail(f"[output] directory {directory[:60]!r} must be a relative folder inside the working "
                             "folder (no leading / or ~, no .., no backslash); give --out to write elsewhere",
                             "output", "directory")
    return OutputSpec(directory=directory, file=name)


def _sweep(check: _Validator, table: dict[str, Any], override: dict[str, Any],
           field_spec: FieldSpec) -> SweepSpec:
    check.check_table(table, "sweep")
    if "num" in table:
        raise check.fail("key 'num' belongs in [reduced.sweep] (grid sizes for tests); in "
                         "[sweep] give num in each [[sweep.axis]]", "sweep", "num")
    raw_axes = table.get("axis", [])
    if not 1 <= len(raw_axes) <= 2:
        raise check.fail(f"[sweep] needs one or two [[sweep.axis]] tables, found {len(raw_axes)}",
                         "sweep")
    if field_spec.expression is None:
        raise check.fail("[sweep] needs a field given by an expression with parameters", "sweep")
    axes = []
    for index, raw in enumerate(raw_axes):
        if not isinstance(raw, dict):
            raise check.fail("[sweep] axis must be written as [[sweep.axis]] tables", "sweep", "axis")
        check.check_table(raw, "sweep.axis", index=index)
        for key in ("name", "start", "stop", "num"):
            if key not in raw:
                raise check.fail(f"[[sweep.axis]] number {index + 1} lacks key '{key}'",
                                 "sweep.axis", None, index)
        if raw["name"] not in field_spec.parameters:
            raise check.fail(f"sweep axis '{raw['name']}' is not a parameter of the field; "
                             f"parameters: {', '.join(field_spec.parameters) or 'none'}",
                             "sweep.axis", "name", index)
        if raw["num"] < 1 or raw["num"] > 2000:
            raise check.fail("sweep axis num must lie in 1..2000", "sweep.axis", "num", index)
        axes.append(SweepAxis(raw["name"], float(raw["start"]), float(raw["stop"]), int(raw["num"])))
    if len({a.name for a in axes}) != len(axes):
        raise check.fail("the two sweep axes must be different parameters", "sweep.axis", "name", 1)
    if "num" in override:
        nums = override["num"]
        if len(nums) != len(axes) or any(v < 1 for v in nums):
            raise check.fail(f"[reduced.sweep] num must list {len(axes)} positive integers",
                             "reduced.sweep", "num")
        axes = [dataclasses.replace(a, num=int(v)) for a, v in zip(axes, nums)]
    quantities = tuple(table.get("quantities", SWEEP_QUANTITIES))
    for q in quantities:
        if q not in SWEEP_QUANTITIES:
            raise check.fail(f"[sweep] quantity {q!r} unknown; known: {', '.join(SWEEP_QUANTITIES)}",
                             "sweep", "quantities")
    return SweepSpec(axes=tuple(axes), quantities=quantities)
