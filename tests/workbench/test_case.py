"""Case files: schema, defaults, reduced sizes and error messages naming key and line."""

from __future__ import annotations

import math

import pytest

from equilibrium.errors import InputError
from workbench.case import FIGURE_NAMES, load_case, parse_case

GOOD = """\
[case]
name = "quartic"
title = "A quartic"

[field]
expression = "x**4/4 - t*x**2/2"
parameters = { t = 1.0 }

[set]
intervals = "-inf:inf"

[polynomials]
n = { start = 20, stop = 160, num = 4 }

[comparisons]
contour_points = 32

[figures]
formats = ["png"]

[reduced.polynomials]
n = [10, 20]

[sweep]
quantities = ["bands", "omega"]

[[sweep.axis]]
name = "t"
start = 0.0
stop = 3.0
num = 50

[reduced.sweep]
num = [5]
"""


def test_good_case_parses_with_defaults():
    case = parse_case(GOOD, source="cases/q.toml")
    assert case.name == "quartic"
    assert case.field.parameters == {"t": 1.0}
    assert case.set.intervals == ((-math.inf, math.inf),)
    # geometric grid 20..160 with 4 points is 20, 40, 80, 160 (ratio 2)
    assert case.polynomials.n == (20, 40, 80, 160)
    assert case.comparisons.contour_points == 32
    assert case.comparisons.small_norm is True  # default
    assert case.figures.formats == ("png",)
    assert case.figures.which == FIGURE_NAMES
    assert case.sweep.shape == (50,)
    assert case.output_directory() .as_posix() == "out/quartic"


def test_reduced_overrides():
    case = parse_case(GOOD, source="cases/q.toml", reduced=True)
    assert case.polynomials.n == (10, 20)
    assert case.sweep.shape == (5,)
    assert case.digest != parse_case(GOOD, source="cases/q.toml").digest


def test_digest_follows_what_the_results_depend_on():
    # formulas are evaluated on stored numbers: adding one reuses every finished n (same digest);
    # comments and layout change nothing either; a changed field or n does
    base = parse_case(GOOD, source="q.toml").digest
    with_formula = GOOD + '\n[[formulas]]\nname = "guess"\nquantity = "a"\nexpression = "1"\n'
    assert parse_case(with_formula, source="q.toml").formulas
    assert parse_case(with_formula, source="q.toml").digest == base
    assert parse_case("# a comment\n" + GOOD.replace(" = ", " =  "), source="q.toml").digest == base
    assert parse_case(GOOD.replace("t = 1.0", "t = 1.25"), source="q.toml").digest != base
    assert parse_case(GOOD.replace("num = 4", "num = 5"), source="q.toml").digest != base


def _error(text: str) -> str:
    with pytest.raises(InputError) as info:
        parse_case(text, source="cases/x.toml")
    return str(info.value)


def test_unknown_key_names_key_table_and_line():
    text = GOOD.replace("[polynomials]\n", "[polynomials]\ndegre = 3\n")
    message = _error(text)
    line = text.splitlines().index("degre = 3") + 1
    assert message.startswith(f"cases/x.toml line {line}: unknown key 'degre' in [polynomials]")
    assert "known keys: n, extra_degrees" in message


def test_wrong_type_names_key_and_line():
    text = GOOD.replace("contour_points = 32", 'contour_points = "many"')
    message = _error(text)
    line = text.splitlines().index('contour_points = "many"') + 1
    assert f"line {line}:" in message
    assert "'contour_points' in [comparisons] must be an integer, got a string" in message


def test_boolean_is_not_a_number():
    text = GOOD.replace("start = 0.0", "start = true")
    message = _error(text)
    assert "'start' in [[sweep.axis]] must be a number, got a boolean" in message
    assert f"line {text.splitlines().index('start = true') + 1}:" in message


def test_malformed_toml_gives_line():
    text = GOOD.replace('title = "A quartic"', "title = A quartic")
    message = _error(text)
    assert message.startswith("cases/x.toml line 3: malformed TOML")


def test_unknown_table():
    message = _error(GOOD + "\n[polynomial]\nn = [3]\n")
    assert "unknown table [polynomial]" in message
    assert f"line {len(GOOD.splitlines()) + 2}" in message


def test_key_in_second_axis_table_is_located():
    text = GOOD.replace("[reduced.sweep]\nnum = [5]\n", "") + (
        '\n[[sweep.axis]]\nname = "t"\nstart = 0\nstop = 1\nnum = 3\nsteps = 4\n')
    message = _error(text)
    assert "unknown key 'steps' in [[sweep.axis]]" in message
    assert f"line {len(text.splitlines())}:" in message


@pytest.mark.parametrize(
    "replace, expect",
    [
        (('intervals = "-inf:inf"', 'intervals = "1:0"'), "reversed"),
        (('intervals = "-inf:inf"', 'intervals = "0:1,0.5:2"'), "overlap"),
        (('intervals = "-inf:inf"', 'intervals = "a:b"'), "not a number"),
        (("n = { start = 20, stop = 160, num = 4 }", "n = [1, 5]"), "n must be >= 2"),
        (("n = { start = 20, stop = 160, num = 4 }", "n = [10.5]"), "list of integers"),
        (('formats = ["png"]', 'formats = ["svg"]'), "format 'svg' unknown"),
        (('name = "t"', 'name = "q"'), "not a parameter of the field"),
    ],
)
def test_bad_values(replace, expect):
    assert expect in _error(GOOD.replace(*replace))


def test_field_needs_exactly_one_form():
    text = GOOD.replace('expression = "x**4/4 - t*x**2/2"',
                        'expression = "x**2"\ncoefficients = [0, 0, 1]')
    assert "exactly one of expression, coefficients" in _error(text)


def test_zero_field_needs_compact_set():
    text = '[field]\nzero = true\n'
    assert "compact set" in _error(text)


def test_factor_checks():
    base = '[field]\nzero = true\n[set]\nintervals = "-1:1"\n[factor]\nkind = "jacobi"\n'
    case = parse_case(base + "alpha = 0.5\nbeta = -0.5\n")
    assert (case.factor.alpha, case.factor.beta) == (0.5, -0.5)
    assert "must be > -1" in _error(base + "alpha = -1.0\n")
    assert "does not apply" in _error(base + "gamma = 1.0\n")


def test_missing_file_is_input_error(tmp_path):
    with pytest.raises(InputError, match="not found"):
        load_case(tmp_path / "nope.toml")


def test_intervals_as_list():
    text = '[field]\nzero = true\n[set]\nintervals = [[-1, -0.2], [0.3, "1"]]\n'
    assert parse_case(text).set.intervals == ((-1.0, -0.2), (0.3, 1.0))


# ----------------------------------------------------------------------------- [factor] expression
def _factor_case(factor_lines: str, intervals: str = "0:", field: str = '"x"') -> str:
    return f'[field]\nexpression = {field}\n[set]\nintervals = "{intervals}"\n[factor]\n{factor_lines}\n'


def test_factor_expression_is_the_command_line_grammar():
    """x^0.7 on [0, inf) in a case file (issue 14): the same factor objects as --factor x^0.7."""
    from equilibrium.sets import IntervalSet
    from equilibrium.weight import JacobiFactor, parse_factor

    case = parse_case(_factor_case('expression = "x^0.7"'))
    on = case.build_set()
    assert case.factor.build(on, case.field.parameters) == parse_factor("x^0.7", {}, IntervalSet.parse("0:"))
    assert case.factor.build(on) == (JacobiFactor(0.0, math.inf, 0.0, 0.7),)
    assert case.factor.describe() == "h = x^0.7" and not case.factor.is_one
    # names in the factor take the field's parameter values
    case = parse_case(_factor_case('expression = "x^p*exp(x/4)"', field='"x"\nparameters = { p = 0.3 }'))
    factors = case.factor.build(case.build_set(), case.field.parameters)
    assert factors[0] == JacobiFactor(0.0, math.inf, 0.0, 0.3)


def test_factor_kind_is_sugar_for_the_expression():
    """kind = "jacobi" / "fisher_hartwig" build the factor objects the expressions
    (b-x)^alpha*(x-a)^beta and abs(x-c)^(2*gamma) build: same singular points, same log h."""
    import numpy as np

    from equilibrium.weight import Weight

    pairs = [
        ('kind = "jacobi"\nalpha = 0.5\nbeta = -0.3', 'expression = "(1-x)^0.5*(x+1)^-0.3"', "-1:1"),
        ('kind = "fisher_hartwig"\nc = 0.4\ngamma = 0.75', 'expression = "abs(x-0.4)^1.5"', "-inf:inf"),
    ]
    for sugar, expression, intervals in pairs:
        weights = []
        for lines in (sugar, expression):
            case = parse_case(_factor_case(lines, intervals, field='"x**2/2"'))
            on = case.build_set()
            weights.append(Weight(case.build_field(), 1.0, on, case.factor.build(on, case.field.parameters)))
        assert weights[0].singular_points == weights[1].singular_points
        x = np.linspace(-0.95, 0.95, 41)
        assert np.allclose(weights[0].log_weight(x), weights[1].log_weight(x), rtol=0, atol=1e-14)


def test_factor_expression_errors_name_the_line():
    assert "does not go with expression" in _error(_factor_case('expression = "x^0.7"\nkind = "jacobi"'))
    message = _error(_factor_case('expression = "x^-1.5"'))
    assert "line 6" in message and "exponents must exceed -1" in message
    assert "in [factor] expression" in _error(_factor_case('expression = "x^0.7 +"'))
    assert "in [factor] expression" in _error(_factor_case('expression = "x^q"'))   # q is no parameter
