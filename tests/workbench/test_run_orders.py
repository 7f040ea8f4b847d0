"""A run with [model] order = 2 and method = "residual": stored predictions, errors per order, rates,
the errors figure with the orders side by side, and the refusals of the [model] table.

Sources: the direct coefficients, zeros and values of the run itself (V = 3x on [-1, 1] with a Jacobi factor: a hard edge
at -1 with β = 0.3, a soft edge at 1/3, one band, so the correction constants do not depend on n).
"""

import json

import numpy as np
import pytest

from equilibrium import solve
from equilibrium.errors import InputError
from workbench.case import parse_case
from workbench.figures import draw_errors
from workbench.orders import check_model_request
from workbench.pipeline import run_case
from workbench.results import read_run

CASE = """[case]
name = "orders"
[field]
expression = "3*x"
[set]
intervals = "-1:1"
[factor]
kind = "jacobi"
alpha = 0.5
beta = 0.3
[model]
order = 2
method = "residual"
[polynomials]
n = [100, 200, 400]
[comparisons]
contour_points = 16
[figures]
formats = ["png"]
dpi = 100
"""


def test_orders_in_a_run(tmp_path):
    out = run_case(parse_case(CASE), tmp_path / "run", progress=False)
    assert out.verified, out.messages
    tree = read_run(out.path)
    model, comp = tree.groups["model"], tree.groups["comparison"]
    assert model.attrs["order"] == 2 and model.attrs["method"] == "residual"
    errs = [np.asarray(comp.get(key)) for key in ("err_a", "err_a_order1", "err_a_order2")]
    # measured at n = 100, 200, 400: order 0 1.1e-4 … 2.8e-5, order 1 4.8e-8 … 5.5e-9 (c_2/n² and
    # c_3/n³ partly cancel at these n), order 2 5.4e-8, 6.8e-9, 8.5e-10 (c_3/n³); residual ≤ 5e-15
    assert np.all(errs[1] < 1e-2 * errs[0]) and np.all(errs[2] < 1e-2 * errs[0]) and errs[2][-1] < errs[1][-1], errs
    assert np.max(comp.get("err_a_residual")) < 1e-12 and np.max(comp.get("err_b_residual")) < 1e-12
    assert np.max(model.get("residual_error_estimate")) < 1e-13
    assert model.get("corrections_a").shape == (3, 2) and model.get("corrections_b").shape == (3, 2)
    # one band: the c_k do not depend on n
    assert np.ptp(model.get("corrections_a"), axis=0).max() < 1e-12
    rates = comp.groups["rates"].groups
    assert abs(rates["err_b_order1"].attrs["slope"] + 2) < 0.2, rates["err_b_order1"].attrs
    for q in ("a", "b"):
        assert abs(rates[f"err_{q}_order2"].attrs["slope"] + 3) < 0.2, rates[f"err_{q}_order2"].attrs
    assert "note" in rates["err_a_residual"].attrs                  # rounding level: no rate
    # zeros and values by order (workbench.orders.model_zero_orders) against the run's direct zeros and
    # values.  Measured at n = 100, 200, 400: soft right edge 7.9e-6 … 5.3e-7 (order 0), 3.4e-8 …
    # 5.8e-10 (order 1, slope -2.95), 2.4e-10 … 1.0e-12 (order 2, -3.96); hard left edge 3.1e-8 …
    # 1.2e-10 (order 0, -3.99), 4.6e-11 … 4.6e-14 (order 1, -5.00), order 2 at rounding from n = 200;
    # bulk values 5.4e-3 … 1.7e-3 (order 0), 9.4e-5 … 5.7e-6 (order 1, -2.02), 1.3e-6 … 2.8e-8 (order 2)
    for k in (1, 2):
        assert np.asarray(model.get(f"edge_zeros_order{k}")).shape == (3, 5)
        assert np.asarray(model.get(f"values_shape_order{k}")).shape == np.asarray(model.get("values_shape")).shape
    assert abs(rates["err_zeros_edge_right"].attrs["slope"] + 2) < 0.1
    assert abs(rates["err_zeros_edge_right_order1"].attrs["slope"] + 3) < 0.1
    assert abs(rates["err_zeros_edge_right_order2"].attrs["slope"] + 4) < 0.1
    assert abs(rates["err_zeros_edge_left"].attrs["slope"] + 4) < 0.1
    assert abs(rates["err_zeros_edge_left_order1"].attrs["slope"] + 5) < 0.2
    assert np.max(comp.get("err_zeros_edge_left_order2")) < 1e-12
    assert abs(rates["err_values_order1"].attrs["slope"] + 2) < 0.2
    values = [np.asarray(comp.get(f"err_values{s}")) for s in ("", "_order1", "_order2")]
    assert np.all(values[1] < 0.05 * values[0]) and np.all(values[2] < 0.05 * values[1]), values
    fig = draw_errors(tree)
    # a_n, b_n, values, right and left edge zeros by order
    assert fig is not None and len(fig.subfigs) == 2 and len([a for a in fig.subfigs[1].axes if a.get_visible()]) == 5
    assert (tmp_path / "run" / "figures" / "errors.png").exists()
    from workbench.figures import draw_edge_zeros
    edge = draw_edge_zeros(tree)      # per edge: the scaled zeros, and their errors by order at n = 400
    assert edge is not None and len(edge.axes) == 4


def test_model_table_refusals(tmp_path):
    with pytest.raises(InputError, match="order = 3 must be 0, 1 or 2"):
        parse_case(CASE.replace("order = 2", "order = 3"))
    with pytest.raises(InputError, match="method = 'all'"):
        parse_case(CASE.replace('method = "residual"', 'method = "all"'))
    fh = CASE.replace('expression = "3*x"', 'expression = "x**2/2"').replace('intervals = "-1:1"', 'intervals = "-5:5"')
    fh = fh.replace('kind = "jacobi"\nalpha = 0.5\nbeta = 0.3', 'kind = "fisher_hartwig"\nc = 0.3\ngamma = 0.5')
    with pytest.raises(InputError, match="Fisher–Hartwig point c = 0.3 lies inside a band") as kind_error:
        run_case(parse_case(fh), tmp_path / "fh", progress=False)
    assert not (tmp_path / "fh").exists()
    # the same root written as a [factor] expression is the same factor and refused the same way,
    # for the series at order 1 and 2 and for the residual method, before anything is written
    fh_expression = fh.replace('kind = "fisher_hartwig"\nc = 0.3\ngamma = 0.5', 'expression = "abs(x-0.3)^1.0"')
    assert 'expression = "abs(x-0.3)^1.0"' in fh_expression
    with pytest.raises(InputError) as expression_error:
        run_case(parse_case(fh_expression), tmp_path / "fhx", progress=False)
    assert str(expression_error.value) == str(kind_error.value)
    assert not (tmp_path / "fhx").exists()
    for model in ('order = 1\nmethod = "series"', 'order = 0\nmethod = "residual"'):
        text = fh_expression.replace('order = 2\nmethod = "residual"', model)
        assert model in text
        with pytest.raises(InputError, match="c = 0.3 lies inside a band"):
            run_case(parse_case(text), tmp_path / "fhx", progress=False)
        assert not (tmp_path / "fhx").exists()
    # a root at an end of the band is a Jacobi-type end (Bessel parametrix), not refused here
    edge = parse_case(fh_expression.replace("abs(x-0.3)", "abs(x-1)").replace('"-5:5"', '"-1:1"'))
    mu = solve(edge.build_field(), edge.build_set())
    assert mu.support == ((-1.0, 1.0),)
    check_model_request(edge, mu)


GAPS = """[case]
name = "gaps"
[field]
expression = "x**4/4 - 3*x**2/2 + 0.35*x"
[model]
order = 1
[polynomials]
n = [95, 182]
[comparisons]
small_norm = false
[figures]
formats = ["png"]
dpi = 100
"""


def test_gap_zeros_by_order_in_a_run(tmp_path):
    """Two bands (Omega = 0.382): the gap zero of p_n from the run's direct zeros against the outer form
    at orders 0 and 1 (gfunction.polynomial_form.gap_zeros).  Measured: order 0 9.9e-3, 1.0e-3
    (n = 95, 182), order 1 2.6e-6, 2.0e-5 (the coefficients move with n Omega); bulk values 7.3e-3,
    2.5e-3 (order 0) and 2.7e-5, 8.0e-6 (order 1); n = 182 is one of the degrees of tests/gfunction/test_corrected_zeros.py, where
    the slopes over n = 182 … 1699 are -1.08 and -2.10."""
    from workbench.figures import draw_gap_zeros

    out = run_case(parse_case(GAPS), tmp_path / "run", progress=False)
    assert out.verified, out.messages
    tree = read_run(out.path)
    model, comp = tree.groups["model"], tree.groups["comparison"]
    assert np.asarray(model.get("gap_zeros_order1")).shape == (2, 1)
    e0, e1 = np.asarray(comp.get("err_zeros_gap")), np.asarray(comp.get("err_zeros_gap_order1"))
    assert np.all(np.isfinite(e0)) and np.all(e1 < 0.05 * e0), (e0, e1)
    assert np.all(np.asarray(comp.get("err_values_order1")) < 0.02 * np.asarray(comp.get("err_values")))
    fig = draw_gap_zeros(tree)
    assert fig is not None and len(fig.axes) == 2
    assert (tmp_path / "run" / "figures" / "gap_zeros.png").exists()


def test_several_bands_take_omega_to_rounding(tmp_path):
    """Beyond leading order the model stage re-solves Ω in extended precision (equilibrium.refinement,
    tested against closed forms and an independent mpmath solution in tests/equilibrium) and records it."""
    from equilibrium import Field
    from equilibrium.refinement import refine_frequencies

    text = CASE.replace('"3*x"', '"x**4/4 - 3.1*x**2/2 + 0.23*x"').replace('[set]\nintervals = "-1:1"\n', "")
    text = text.replace('[factor]\nkind = "jacobi"\nalpha = 0.5\nbeta = 0.3\n', "")
    text = text.replace('order = 2\nmethod = "residual"', "order = 1").replace("[100, 200, 400]", "[100, 200]")
    out = run_case(parse_case(text), tmp_path / "run", progress=False)
    model = read_run(out.path).groups["model"]
    refined = refine_frequencies(solve(Field.from_expression("x**4/4 - 3.1*x**2/2 + 0.23*x")))
    assert np.array_equal(np.asarray(model.attrs["omega"]), refined.omega)
    info = json.loads(model.attrs["omega_refinement"])       # dict attributes are stored as JSON text
    assert info["omega_shift"] == refined.omega_shift and info["endpoint_residual"] < 1e-20
