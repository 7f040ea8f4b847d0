r"""The researcher's own formulas, compared with the direct numbers of a run.

A *formula* predicts one quantity at every n of a run: ``a_n^{(n)}``, ``b_n^{(n)}``, the
zero of ``p_n`` in a gap, a zero next to an outer edge, or ``log D_n`` (the Hankel
determinant).  It is given either as text in the whitelisted grammar of
:mod:`equilibrium.expression` (a case file's ``[[formulas]]`` table; nothing in it ever
runs as code) or, from Python, as a callable.  Either way it is evaluated on arrays over
the run's n and compared with the direct numbers: ``|direct - formula|`` at each n and the
rate ``error ~ C n^slope`` fitted by :func:`workbench.compare.fit_rate`.

Names a formula may use (each an array over the run's n, or a number):

=====================  =================================================================
``n``                  the degree (= the scaling of the weight ``e^{-nV}``)
the case's parameters  the ``[field] parameters`` (e.g. ``t``)
the formula's own      ``parameters = { alpha = 0.7 }`` of the table
``a_j``, ``b_j``       the ends of band j of the support, ``a_1 < b_1 < a_2 < ...``
``Omega_j``            the filling fraction of gap j, ``μ_V([a_{j+1}, b_k])``
``ell``, ``energy``    the Euler–Lagrange constant ℓ and the energy ``I_V(μ_V)``
``a_model``,           the model problem's own predictions of ``a_n``, ``b_n`` at leading
``b_model``            order; ``a_model_order1``, ``a_model_order2`` through ``c_k/n^k``
                       (``[model] order``), ``a_model_residual`` (``method = "residual"``),
                       and the same for ``b``
``gap_zero_model_j``   the predicted zero of ``p_n`` in gap j (NaN where none)
``edge_zero_model``    (``edge_zero`` formulas) the model's prediction of the same zero
``log_hankel_model``   (runs comparing the Hankel determinant) the large-n expansion of ``log D_n``
=====================  =================================================================

plus ``pi`` and the functions of the grammar.  A formula may claim its error rate with
``expected_slope`` (the error is ``O(n^expected_slope)``); it is *rejected* when the fitted
slope exceeds the claim by more than :data:`SLOPE_TOLERANCE` (0.5), e.g. a formula whose
1/n constant is wrong errs like ``n^{-1}`` and fails the claim ``-2``.

The arrays, the evaluation and the comparison need no case and no file
(:func:`compare_values`, :func:`evaluate_formula`); :func:`compare_run` does the same on a
run read back from its HDF5 file (:func:`workbench.results.read_run`).
"""

from __future__ import annotations

import inspect
import json
import math
import re
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping, Sequence

import numpy as np
from numpy.typing import ArrayLike

from equilibrium.errors import InputError, NumericalFailure
from workbench import compare

__all__ = ["FORMULA_QUANTITIES", "SLOPE_TOLERANCE", "FormulaSpec", "FormulaComparison", "check_formula",
           "formula_names", "direct_values", "evaluate_formula", "compare_values", "compare_run",
           "formulas_group"]

#: quantity -> what the direct side gives for it
FORMULA_QUANTITIES = {
    "a": "a_n^{(n)} (direct recurrence coefficient)",
    "b": "b_n^{(n)} (direct recurrence coefficient)",
    "gap_zero": "the zero of p_n in gap j (key gap, default 1; NaN where the gap holds none)",
    "edge_zero": "zero number `zero` of p_n counted inward from the `edge` (\"right\" or \"left\") end",
    "log_hankel": "log D_n, the Hankel determinant of the weight (from the direct norms)",
}
#: a formula claiming error O(n^s) is rejected when its fitted slope exceeds s by more than this
SLOPE_TOLERANCE = 0.5
#: names of the form NAME_j (j = 1, 2, ...) and what they index
_INDEXED = {"a": "bands", "b": "bands", "Omega": "gaps", "gap_zero_model": "gaps"}
_FIXED = ("n", "ell", "energy", "a_model", "b_model")
_IDENTIFIER = re.compile(r"(?<![\w.])[A-Za-z_][A-Za-z0-9_]*")
_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_]{0,39}")


@dataclass(frozen=True)
class FormulaSpec:
    """One ``[[formulas]]`` table: a name, the quantity, the expression and its parameters.

    ``gap`` (gap_zero), ``edge`` and ``zero`` (edge_zero) say which zero; ``expected_slope``
    is the claimed rate of the error (None: no claim).
    """

    name: str
    quantity: str
    expression: str
    parameters: Mapping[str, float] = field(default_factory=dict)
    gap: int = 1
    edge: str = "right"
    zero: int = 1
    expected_slope: float | None = None

    def target(self) -> str:
        """The compared quantity in words, e.g. ``a_n`` or ``zero 2 from the left edge``."""
        if self.quantity == "gap_zero":
            return f"the zero in gap {self.gap}"
        if self.quantity == "edge_zero":
            return f"zero {self.zero} from the {self.edge} edge"
        return {"a": "a_n", "b": "b_n", "log_hankel": "log D_n"}[self.quantity]


def _name_problem(name: str, spec: FormulaSpec, order: int, method: str, log_hankel: bool = True) -> str | None:
    """Why ``name`` is not a documented formula name (None when it is)."""
    if name in _FIXED:
        return None
    head, _, index = name.rpartition("_")
    if head in _INDEXED and index.isdigit() and index == str(int(index)):
        return None if int(index) >= 1 else f"'{name}': {_INDEXED[head]} are numbered from 1"
    for q in ("a", "b"):
        if name in (f"{q}_model_order1", f"{q}_model_order2"):
            k = int(name[-1])
            return None if order >= k else f"'{name}' needs [model] order >= {k} (the case has order {order})"
        if name == f"{q}_model_residual":
            return None if method == "residual" else f"'{name}' needs [model] method = \"residual\""
    if name == "edge_zero_model":
        return None if spec.quantity == "edge_zero" else "'edge_zero_model' belongs to edge_zero formulas"
    if name == "log_hankel_model":
        return None if log_hankel else "'log_hankel_model' needs [comparisons] log_hankel = true"
    return f"unknown name '{name}'"


def _allowed_text(spec: FormulaSpec, case_parameters: Mapping[str, float]) -> str:
    own = ", ".join(sorted(set(case_parameters) | set(spec.parameters)))
    return ("n, " + (f"the parameters {own}, " if own else "") + "band ends a_1, b_1, ..., Omega_j, ell, "
            "energy, a_model, b_model (a_model_order1, _order2, _residual with [model]), gap_zero_model_j, "
            "edge_zero_model, log_hankel_model, pi and the functions of the expression grammar")


def _variables(spec: FormulaSpec, case_parameters: Mapping[str, float]) -> list[str]:
    """The n-dependent and run-dependent names the text uses (parameters and functions excluded)."""
    from equilibrium.expression import ALLOWED_FUNCTIONS

    constants = set(case_parameters) | set(spec.parameters) | set(ALLOWED_FUNCTIONS) | {"pi"}
    return list(dict.fromkeys(m for m in _IDENTIFIER.findall(spec.expression) if m not in constants))


def check_formula(spec: FormulaSpec, case_parameters: Mapping[str, float] | None = None, *,
                  order: int = 0, method: str = "series", log_hankel: bool = True):
    """Validate a formula before anything runs; returns the parsed expression.

    Raises :class:`InputError` with one line naming the problem: a name that is not a
    documented formula name (or one the case cannot provide, e.g. ``a_model_order2`` at
    ``[model] order = 1``), an unknown quantity, a syntax error, a bad parameter.
    """
    from equilibrium.expression import parse_expression

    case_parameters = dict(case_parameters or {})
    if spec.quantity not in FORMULA_QUANTITIES:
        raise InputError(f"quantity {spec.quantity!r} unknown; use one of {', '.join(FORMULA_QUANTITIES)}")
    if not isinstance(spec.name, str) or not _NAME.fullmatch(spec.name):
        raise InputError(f"name {spec.name!r} must be a letter followed by letters, digits or '_' "
                         "(at most 40 characters)")
    clash = sorted(set(case_parameters) & set(spec.parameters))
    if clash:
        raise InputError(f"parameter {', '.join(clash)} is already a parameter of [field]; rename it")
    names = _variables(spec, case_parameters)
    for name in names:
        problem = _name_problem(name, spec, order, method, log_hankel)
        if problem is not None:
            raise InputError(f"expression {spec.expression!r}: {problem}; a formula may use "
                             f"{_allowed_text(spec, case_parameters)}")
    values = {**case_parameters, **spec.parameters}
    try:
        expression = parse_expression(spec.expression, values, "n", more_variables=[m for m in names if m != "n"])
    except InputError as exc:
        raise InputError(f"expression {spec.expression!r}: {exc}") from None
    if spec.quantity == "gap_zero" and spec.gap < 1:
        raise InputError(f"gap = {spec.gap}: gaps are numbered from 1")
    if spec.quantity == "edge_zero":
        if spec.edge not in ("left", "right"):
            raise InputError(f"edge = {spec.edge!r} must be \"left\" or \"right\"")
        if spec.zero < 1:
            raise InputError(f"zero = {spec.zero}: zeros are counted from 1 at the edge")
    if spec.expected_slope is not None and not math.isfinite(spec.expected_slope):
        raise InputError(f"expected_slope = {spec.expected_slope} must be a finite number such as -2")
    return expression


# ------------------------------------------------------------------ names of a run
def _column(array, j: int, rows: int) -> np.ndarray:
    a = np.asarray(array, dtype=float).reshape(rows, -1)
    return a[:, j] if j < a.shape[1] else np.full(rows, np.nan)


def formula_names(tree, spec: FormulaSpec | None = None) -> dict[str, Any]:
    """Every name a formula may use, from a run tree: arrays over ``/comparison/n`` or numbers.

    ``spec`` adds ``edge_zero_model`` for its edge and zero.  Names the run cannot provide
    (no residual method, no Hankel comparison) are absent.
    """
    comp, eq = tree.groups["comparison"], tree.groups["equilibrium"]
    model = tree.groups.get("model")
    ns = np.asarray(comp.get("n"), dtype=float)
    rows = ns.size
    names: dict[str, Any] = {"n": ns, "ell": float(eq.attrs["lagrange"]), "energy": float(eq.attrs["energy"])}
    support = np.asarray(eq.get("support"), dtype=float).reshape(-1, 2)
    for j, (a, b) in enumerate(support, start=1):
        names[f"a_{j}"], names[f"b_{j}"] = float(a), float(b)
    for j, omega in enumerate(np.atleast_1d(np.asarray(eq.get("omega"), dtype=float)), start=1):
        names[f"Omega_{j}"] = float(omega)
    for q in ("a", "b"):
        for suffix in ("", "_order1", "_order2", "_residual"):
            if comp.has(f"{q}_model{suffix}"):
                names[f"{q}_model{suffix}"] = np.asarray(comp.get(f"{q}_model{suffix}"), dtype=float)
    if comp.has("gap_zeros_model"):
        gaps = np.asarray(comp.get("gap_zeros_model"), dtype=float).reshape(rows, -1)
        for j in range(gaps.shape[1]):
            names[f"gap_zero_model_{j + 1}"] = gaps[:, j]
    elif model is not None and model.has("gap_zeros"):
        gaps = np.asarray(model.get("gap_zeros"), dtype=float).reshape(rows, -1)
        for j in range(gaps.shape[1]):
            names[f"gap_zero_model_{j + 1}"] = gaps[:, j]
    if comp.has("log_hankel_model"):
        names["log_hankel_model"] = np.asarray(comp.get("log_hankel_model"), dtype=float)
    elif comp.has("log_hankel_direct"):
        # the weight is outside the expansion's formulas (the model says why): nothing to compare
        names["log_hankel_model"] = np.full(rows, np.nan)
    if spec is not None and spec.quantity == "edge_zero" and model is not None:
        suffix = "" if spec.edge == "right" else "_left"
        if model.has(f"edge_zeros{suffix}"):
            names["edge_zero_model"] = _column(model.get(f"edge_zeros{suffix}"), spec.zero - 1, rows)
        else:
            names["edge_zero_model"] = np.full(rows, np.nan)
    return names


def _largest(values) -> float:
    v = np.asarray(values, dtype=float)
    return float(np.max(v[np.isfinite(v)])) if np.isfinite(v).any() else 0.0


def direct_values(tree, spec: FormulaSpec) -> tuple[np.ndarray, np.ndarray, float]:
    """``(n, direct, error_estimate)`` of the formula's quantity from a run tree.

    ``error_estimate`` is the largest error estimate of the direct numbers over n (the
    two discretisations of the direct computation; for ``log D_n`` its own estimate).
    """
    comp = tree.groups["comparison"]
    ns = np.asarray(comp.get("n"), dtype=np.int64)
    estimate = _largest(comp.get("direct_error_estimate")) if comp.has("direct_error_estimate") else 0.0
    if spec.quantity in ("a", "b"):
        return ns, np.asarray(comp.get(f"{spec.quantity}_direct"), dtype=float), estimate
    if spec.quantity == "gap_zero":
        return ns, _column(comp.get("gap_zeros_direct"), spec.gap - 1, ns.size), estimate
    if spec.quantity == "edge_zero":
        direct = tree.groups["direct"]
        zeros = [np.asarray(direct.get(f"n_{n:05d}/zeros"), dtype=float) for n in ns]
        return ns, np.array([compare.zeros_from_edge(x, spec.zero, spec.edge)[-1] for x in zeros]), estimate
    if not comp.has("log_hankel_direct"):
        raise InputError(f"formula '{spec.name}' compares log D_n, but the run holds no direct Hankel "
                         "determinant (/comparison/log_hankel_direct)")
    estimate = (_largest(comp.get("log_hankel_error_estimate"))
                if comp.has("log_hankel_error_estimate") else estimate)
    return ns, np.asarray(comp.get("log_hankel_direct"), dtype=float), estimate


def check_run_names(spec: FormulaSpec, bands: int) -> None:
    """Refuse (InputError) band and gap numbers a support of ``bands`` bands does not have."""
    gaps = bands - 1
    for name in _IDENTIFIER.findall(spec.expression):
        head, _, index = name.rpartition("_")
        if head in _INDEXED and index.isdigit():
            count = bands if _INDEXED[head] == "bands" else gaps
            if int(index) > count:
                raise InputError(f"formula '{spec.name}' uses {name}, but the support has {bands} band(s) "
                                 f"and {gaps} gap(s)")
    if spec.quantity == "gap_zero" and spec.gap > gaps:
        raise InputError(f"formula '{spec.name}' compares the zero in gap {spec.gap}, but the support has "
                         f"{gaps} gap(s)")


# ------------------------------------------------------------------ evaluation
def evaluate_formula(formula: str | Callable[..., Any], names: Mapping[str, Any], *,
                     parameters: Mapping[str, float] | None = None) -> np.ndarray:
    """The formula's values on the arrays of ``names`` (``names["n"]`` fixes the shape).

    ``formula`` is text in the grammar of :mod:`equilibrium.expression` (never run as code;
    every name it uses must be in ``names`` or ``parameters``), or a Python callable called
    with the keyword arguments its signature asks for, taken from ``names`` and
    ``parameters`` (``lambda n, alpha: numpy.sqrt(1 + alpha / n)``).

    Examples
    --------
    >>> evaluate_formula("1 + c/n", {"n": np.array([10.0, 20.0])}, parameters={"c": 0.5}).tolist()
    [1.05, 1.025]
    >>> evaluate_formula(lambda n, c: 1 + c / n, {"n": np.array([10.0, 20.0])}, parameters={"c": 0.5}).tolist()
    [1.05, 1.025]
    """
    ns = np.asarray(names["n"], dtype=float)
    values = {**dict(names), **dict(parameters or {})}
    if callable(formula):
        try:
            signature = inspect.signature(formula)
        except (TypeError, ValueError):
            raise InputError("the formula's signature cannot be read; give a function of named "
                             "arguments such as lambda n, a_model: ...") from None
        wanted = [p.name for p in signature.parameters.values()
                  if p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY) and p.default is p.empty]
        missing = [w for w in wanted if w not in values]
        if missing:
            raise InputError(f"the formula asks for {', '.join(missing)}, which this run does not provide; "
                             f"it provides {', '.join(sorted(values))}")
        with np.errstate(all="ignore"):
            result = formula(**{w: values[w] for w in wanted})
        try:
            out = np.asarray(result, dtype=float)
        except (TypeError, ValueError):
            raise InputError(f"the formula returned {type(result).__name__}, not real numbers") from None
        if out.shape not in ((), ns.shape):
            raise InputError(f"the formula returned shape {out.shape}; expected one value per n {ns.shape}")
        return np.array(np.broadcast_to(out, ns.shape))
    from equilibrium.expression import parse_expression

    used = [m for m in dict.fromkeys(_IDENTIFIER.findall(formula)) if m in names and m != "n"]
    constants = {k: float(v) for k, v in (parameters or {}).items()}
    expression = parse_expression(formula, constants, "n", more_variables=used)
    return expression.evaluate({"n": ns, **{m: names[m] for m in used}})


# ------------------------------------------------------------------ comparison
@dataclass(frozen=True)
class FormulaComparison:
    """A formula against the direct numbers at every n.

    ``error = |direct - value|``; ``fit`` the rate of the errors above ``floor`` (rounding
    and the direct error estimate); ``verdict`` one of ``"agrees to rounding"``,
    ``"consistent"`` (with ``expected_slope``), ``"rejected"``, ``"rate fitted"`` (no
    claim), ``"undetermined"`` (fewer than three usable errors), ``"not a number"``.
    ``verified`` when the verdict is determined; ``checks`` holds the fitted slope, its
    standard error and the largest error; ``message`` says what is undetermined.
    """

    name: str
    n: np.ndarray
    direct: np.ndarray
    value: np.ndarray
    error: np.ndarray
    fit: compare.RateFit
    floor: float
    expected_slope: float | None
    verdict: str
    verified: bool
    checks: dict[str, float]
    message: str = ""

    def summary(self) -> str:
        """One line: the verdict with the fitted slope."""
        s, se = self.fit.slope, self.fit.stderr
        rate = (f"slope {s:.3f}" + (f" +- {se:.2g}" if math.isfinite(se) else "")) if math.isfinite(s) else ""
        claim = f", expected {self.expected_slope:g}" if self.expected_slope is not None else ""
        if self.verdict == "agrees to rounding":
            return f"agrees to rounding (every error below {self.floor:.1e}){claim}"
        return f"{self.verdict}: {rate or 'no rate'}{claim}" + (f" ({self.message})" if self.message else "")


def compare_values(n: ArrayLike, direct: ArrayLike, value: ArrayLike, *, floor: float | None = None,
                   expected_slope: float | None = None, name: str = "formula",
                   on_failure: str = "raise") -> FormulaComparison:
    """Compare predicted ``value`` with ``direct`` at each ``n``: errors, rate and verdict.

    ``floor`` defaults to :func:`workbench.compare.rounding_floor` of the largest ``|direct|``.
    Errors at or below it are rounding and carry no rate.  With ``expected_slope`` s the
    formula is ``"rejected"`` when the fitted slope exceeds s by more than
    :data:`SLOPE_TOLERANCE`.  ``on_failure="raise"`` raises
    :class:`equilibrium.errors.NumericalFailure` when the verdict is undetermined;
    ``"mark"`` returns it with ``verified = False``.

    Examples
    --------
    ``a_n`` of the Laguerre weight ``x^α e^{-nx}`` is ``(1 + α/n)^{1/2}`` (DLMF 18.9.2,
    rescaled); the guess ``a = 1`` errs by ``α/(2n)``, slope -1:

    >>> n = np.array([40, 80, 160, 320])
    >>> c = compare_values(n, np.sqrt(1 + 0.7 / n), np.ones(4), expected_slope=-1)
    >>> round(c.fit.slope, 2), c.verdict
    (-1.0, 'consistent')
    """
    if on_failure not in ("raise", "mark"):
        raise InputError(f"on_failure must be 'raise' or 'mark', not {on_failure!r}")
    ns = np.asarray(n, dtype=float)
    direct = np.asarray(direct, dtype=float)
    value = np.array(np.broadcast_to(np.asarray(value, dtype=float), direct.shape))
    if ns.shape != direct.shape:
        raise InputError(f"n and direct must have the same shape; got {ns.shape} and {direct.shape}")
    error = compare.absolute_errors(direct, value)
    if floor is None:
        scale = float(np.nanmax(np.abs(direct))) if np.isfinite(direct).any() else 1.0
        floor = compare.rounding_floor(scale)
    fit = compare.fit_rate(ns, error, floor=floor)
    finite = np.isfinite(error)
    message = ""
    if not finite.any():
        verdict, message = "not a number", "no finite error at any n"
    elif not np.any(error[finite] > floor):
        verdict = "agrees to rounding"
    elif not fit.verified:
        verdict, message = "undetermined", fit.message
    elif expected_slope is None:
        verdict = "rate fitted"
    elif fit.slope <= float(expected_slope) + SLOPE_TOLERANCE:
        verdict = "consistent"
    else:
        verdict = "rejected"
    if finite.any() and not finite.all() and not message:
        message = f"not a number at {int((~finite).sum())} of {finite.size} n"
    verified = verdict not in ("undetermined", "not a number")
    checks = {"slope": float(fit.slope), "stderr": float(fit.stderr),
              "max_error": float(np.max(error[finite])) if finite.any() else math.nan}
    result = FormulaComparison(name, ns, direct, value, error, fit, float(floor),
                               None if expected_slope is None else float(expected_slope), verdict, verified,
                               checks, message)
    if not verified and on_failure == "raise":
        raise NumericalFailure(f"formula {name}: {verdict} ({message})")
    return result


def compare_run(run, formula: str | Callable[..., Any] | FormulaSpec, quantity: str = "a", *,
                parameters: Mapping[str, float] | None = None, gap: int = 1, edge: str = "right",
                zero: int = 1, expected_slope: float | None = None, name: str = "formula",
                on_failure: str = "raise") -> FormulaComparison:
    """A formula (text, callable, or :class:`FormulaSpec`) against a run's direct numbers.

    ``run`` is a run tree or the path of a run file.  Text formulas use the names of
    :func:`formula_names`; a callable gets the ones its signature names.
    """
    from workbench.results import Group, read_run

    tree = run if isinstance(run, Group) else read_run(run)
    if isinstance(formula, FormulaSpec):
        spec = formula
        formula = spec.expression
    else:
        spec = FormulaSpec(name, quantity, formula if isinstance(formula, str) else "<callable>",
                           dict(parameters or {}), gap, edge, zero, expected_slope)
        if spec.quantity not in FORMULA_QUANTITIES:
            raise InputError(f"quantity {quantity!r} unknown; use one of {', '.join(FORMULA_QUANTITIES)}")
    ns, direct, estimate = direct_values(tree, spec)
    names = formula_names(tree, spec)
    field_parameters = json.loads(tree.attrs.get("parameters", "{}") or "{}").get("field_parameters", {})
    constants = {**{k: float(v) for k, v in field_parameters.items()}, **dict(spec.parameters)}
    value = evaluate_formula(formula, names, parameters=constants)
    # the floor of the run's own rates: rounding at the size of the support, or twice the
    # direct error estimate (pipeline.comparison_group)
    support = np.asarray(tree.get("equilibrium/support"), dtype=float)
    floor = max(compare.rounding_floor(float(np.max(np.abs(support)))), 2.0 * estimate)
    return compare_values(ns, direct, value, floor=floor, expected_slope=spec.expected_slope, name=spec.name,
                          on_failure=on_failure)


def formulas_group(tree, specs: Sequence[FormulaSpec]):
    """The ``/comparison/formulas`` group of a run: one sub-group per formula, and the notes."""
    from workbench.results import Group

    node = Group(attrs={"description": "the case's own formulas ([[formulas]]) against the direct numbers",
                        "names": [spec.name for spec in specs]})
    notes = []
    for spec in specs:
        c = compare_run(tree, spec, on_failure="mark")
        entry = node.group(spec.name)
        entry.attrs.update({
            "description": f"{spec.expression} against the direct {spec.target()} at every n",
            "quantity": spec.quantity, "target": spec.target(), "expression": spec.expression,
            "parameters": json.dumps(dict(spec.parameters)), "verdict": c.verdict, "summary": c.summary(),
            "slope": c.fit.slope, "stderr": c.fit.stderr, "intercept": c.fit.intercept, "points": c.fit.points,
            "floor": c.floor, "verified": c.verified, "message": c.message or "none",
        })
        if spec.expected_slope is not None:
            entry.attrs["expected_slope"] = float(spec.expected_slope)
        entry.add("value", c.value, f"the formula {spec.expression} at each n")
        entry.add("direct", c.direct, f"the direct {spec.target()} at each n")
        entry.add("error", c.error, "|direct - formula| at each n")
        if c.message or not c.verified:
            notes.append(f"formula {spec.name}: {c.summary()}")
    return node, notes
