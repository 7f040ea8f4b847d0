"""The researcher's own formulas: [[formulas]] in case files, the Python API, show --json.

Reference: the Laguerre weight x^α e^{-x} has monic recurrence coefficients
b_k = 2k + α + 1, a_k² = k(k + α) (DLMF 18.9.2 with 18.3 Table 18.3.1, normalised); for
x^α e^{-nx} (x -> x/n) a_n^{(n)} = (1 + α/n)^{1/2}, b_n^{(n)} = 2 + (α + 1)/n.  The
equilibrium measure of V = x on [0, ∞) (support [0, 4]) predicts a = 1, so the guess a = 1
errs by (1 + α/n)^{1/2} - 1 = α/(2n) + O(n^-2).
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest

from equilibrium.errors import InputError
from workbench.case import load_case, parse_case, shipped_case
from workbench.cli import main
from workbench.formulas import FormulaSpec, check_formula, compare_run, compare_values, evaluate_formula
from workbench.pipeline import run_case
from workbench.results import read_run

ALPHA = 0.7
NS = [40, 80, 160]

@pytest.fixture(scope="module")
def laguerre_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("formulas")
    # the shipped case cases/laguerre_formulas.toml at its reduced size (n = 40, 80, 160)
    outcome = run_case(load_case(shipped_case("laguerre_formulas"), reduced=True), out, progress=False, draw=False)
    return outcome.path, read_run(outcome.path)


def test_laguerre_formulas_in_a_run(laguerre_run):
    path, tree = laguerre_run
    node = tree.get("comparison/formulas")
    n = np.asarray(tree.get("comparison/n"), dtype=float)
    # sqrt(1 + alpha/n) is a_n exactly (DLMF 18.9.2 rescaled): agreement to rounding
    exact = node.groups["laguerre_a"]
    assert exact.attrs["verdict"] == "agrees to rounding"
    assert np.max(exact.get("error")) < 1e-13
    # b_1/2 = 2 is the right end of the support over 2 (band end as a name): b_n exactly
    assert node.groups["laguerre_b"].attrs["verdict"] == "agrees to rounding"
    # the guess a = 1 errs by alpha/(2n) + O(n^-2), slope -1
    guess = node.groups["guess_one"]
    err = np.asarray(guess.get("error"))
    assert np.allclose(err, np.sqrt(1 + ALPHA / n) - 1, rtol=0, atol=1e-13)
    assert np.all(np.abs(err * 2 * n / ALPHA - 1) < 2 * ALPHA / n)
    assert abs(guess.attrs["slope"] + 1) < 0.01 and guess.attrs["verdict"] == "consistent"
    # a deliberate error in the 1/n constant (0.5 instead of alpha/2 = 0.35): slope -1, claim -2 rejected
    wrong = node.groups["wrong_constant"]
    assert wrong.attrs["verdict"] == "rejected" and abs(wrong.attrs["slope"] + 1) < 0.02
    assert np.allclose(wrong.get("error"), np.abs(np.asarray(wrong.get("direct")) - 1 - 0.5 / n))
    # the model's own edge zero as a formula reproduces the run's Airy comparison at the right edge
    airy = node.groups["airy_first"]
    assert np.allclose(airy.get("value"), np.asarray(tree.get("model/edge_zeros"))[:, 0])
    assert np.all(np.asarray(airy.get("error")) <= np.asarray(tree.get("comparison/err_zeros_edge_right")))
    # log D_n by -n^2 I_V + n log 2pi misses n * int log h dmu_V: for the Marchenko-Pastur density
    # psi(x) = sqrt((4 - x)/x)/(2 pi) on [0, 4] (common practice) that is alpha * int log x dmu_V
    from scipy.integrate import quad

    missing = ALPHA * quad(lambda x: np.log(x) * np.sqrt((4 - x) / x) / (2 * np.pi), 0, 4)[0]
    hankel = node.groups["hankel_leading"]
    assert np.allclose(hankel.get("direct"), tree.get("comparison/log_hankel_direct"))
    # the rest is O(log n): c log n + C with |c|, |C| < 1
    assert np.all(np.abs(np.asarray(hankel.get("error")) - abs(missing) * n) < 1 + np.log(n))
    assert hankel.attrs["verdict"] == "consistent" and abs(hankel.attrs["slope"] - 1) < 0.05


def test_show_table_and_json(laguerre_run, capsys):
    path, tree = laguerre_run
    assert main(["show", str(path)]) == 0
    text = capsys.readouterr().out
    assert "formulas, |direct - formula|:" in text
    assert "wrong_constant a_n = a_model + 0.5/n: rejected: slope -1.0" in text
    assert main(["show", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert {"equilibrium", "rates", "formulas", "comparison"} <= set(data)
    guess = data["formulas"]["guess_one"]
    assert guess["n"] == NS and len(guess["error"]) == len(NS) and abs(guess["slope"] + 1) < 0.01
    assert data["formulas"]["laguerre_a"]["verdict"] == "agrees to rounding"
    assert abs(data["rates"]["err_a"]["slope"] + 1) < 0.01


def test_errors_figure_draws_the_formulas(laguerre_run):
    from workbench.figures import draw_errors

    fig = draw_errors(laguerre_run[1])
    titles = [ax.get_title() for ax in fig.get_axes()]
    assert "the case's formulas" in titles
    ax = fig.get_axes()[titles.index("the case's formulas")]
    texts = [t.get_text() for t in ax.get_legend().get_texts()] if ax.get_legend() else \
        [t.get_text() for legend in fig.legends for t in legend.get_texts()]
    texts += [t.get_text() for sub in fig.subfigs for legend in sub.legends for t in legend.get_texts()]
    assert any(t.startswith("laguerre_a (a): rounding") for t in texts)
    assert any("rejected (claim -2)" in t for t in texts)


def test_python_callable_on_the_run_file(laguerre_run):
    path, _ = laguerre_run
    # the same comparison with a callable (names from its signature) on the file
    c = compare_run(path, lambda n, alpha: np.sqrt(1 + alpha / n), "a", parameters={"alpha": ALPHA})
    assert c.verdict == "agrees to rounding" and c.verified
    c = compare_run(path, lambda n, a_model: a_model, "a", expected_slope=-1)
    assert c.verdict == "consistent" and abs(c.fit.slope + 1) < 0.01
    with pytest.raises(InputError, match="asks for Omega_1"):
        compare_run(path, lambda n, Omega_1: n, "a")


def test_array_level_comparison_needs_no_run():
    n = np.array([100, 200, 400, 800])
    direct = np.sqrt(1 + ALPHA / n)          # DLMF 18.9.2 rescaled
    good = compare_values(n, direct, evaluate_formula("1 + c/(2*n) - c^2/(8*n^2)", {"n": n}, parameters={"c": ALPHA}),
                          expected_slope=-3)
    assert good.verdict == "consistent" and abs(good.fit.slope + 3) < 0.05
    bad = compare_values(n, direct, 1 + 0.4 / n, expected_slope=-2, on_failure="mark")
    assert bad.verdict == "rejected" and abs(bad.fit.slope + 1) < 0.02
    assert compare_values(n, direct, direct).verdict == "agrees to rounding"
    from equilibrium.errors import NumericalFailure

    with pytest.raises(NumericalFailure, match="undetermined"):
        compare_values(n[:2], direct[:2], 1.0)


BAD = [
    ('name = "f"\nquantity = "a"\nexpression = "sqrt(1 + beta/n)"', "unknown name 'beta'"),
    ('name = "f"\nquantity = "c"\nexpression = "1"', "quantity 'c' unknown"),
    ('name = "f"\nquantity = "a"\nexpression = "1 +* n"', "expression '1 +* n': unexpected '*' at column 4"),
    ('name = "f"\nquantity = "a"\nexpression = "__import__(n)"', "unknown"),
    ('name = "f"\nquantity = "a"\nexpression = "a_model_order2"', "needs [model] order >= 2"),
    ('name = "f"\nquantity = "a"\nexpression = "1"\ngap = 1', "belongs to quantity"),
    ('name = "f"\nquantity = "a"', "lacks key 'expression'"),
]


@pytest.mark.parametrize("table, words", BAD)
def test_bad_formulas_are_refused_when_the_case_is_read(table, words):
    text = 'name = "ok"\nquantity = "b"\nexpression = "2"\n\n[[formulas]]\n' + table
    case = f'[field]\nexpression = "x^2/2"\n\n[[formulas]]\n{text}\n'
    with pytest.raises(InputError) as info:
        parse_case(case, source="bad.toml")
    message = str(info.value)
    assert "\n" not in message and words in message
    # the line of the offending key (header at line 9, then name, quantity, expression, ...)
    assert re.match(r"bad\.toml line (9|1[0-3]): \[\[formulas\]\] number 2 'f'", message), message


def test_bad_formula_exit_code_and_run_time_refusal(tmp_path, capsys):
    path = tmp_path / "bad.toml"
    path.write_text('[field]\nexpression = "x^2/2"\n\n[[formulas]]\nname = "g"\nquantity = "gap_zero"\n'
                    'expression = "Omega_1"\n[polynomials]\nn = [10]\n')
    # one band, no gap: refused after the equilibrium measure, before anything is written
    assert main(["run", str(path), "--out", str(tmp_path / "out"), "--quiet", "--no-figures"]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and "'g'" in err and "0 gap(s)" in err
    assert not (tmp_path / "out").exists()
    path.write_text('[field]\nexpression = "x^2/2"\n\n[[formulas]]\nname = "g"\nquantity = "a"\n'
                    'expression = "sqrt(n"\n')
    assert main(["run", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and "[[formulas]] number 1 'g'" in err and "parenthes" in err


def test_check_formula_names_and_grammar():
    spec = FormulaSpec("f", "a", "a_model*(1 + t/n) + Omega_2 - energy + ell", {})
    expression = check_formula(spec, {"t": 1.0})
    assert set(expression.more_variables) == {"a_model", "Omega_2", "energy", "ell"}
    with pytest.raises(InputError, match="already a parameter"):
        check_formula(FormulaSpec("f", "a", "t", {"t": 2.0}), {"t": 1.0})


def _api_blocks() -> list[str]:
    from pathlib import Path

    text = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    section = text.split("## Python API", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```python\n(.*?)```", section, flags=re.S)


def test_readme_python_api_example_runs(laguerre_run, capsys):
    first, second = _api_blocks()
    exec(compile(first, "README.md: Python API", "exec"), {})
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("agrees to rounding")
    assert lines[1].startswith("consistent: slope -0.99") and lines[2].startswith("rejected: slope -1.00")
    deviations = [float(line.split("=")[-1]) for line in lines[-3:]]
    # O(1/n): doubling n halves the deviation (DKMVZ 1999, §7)
    assert all(1.8 < d0 / d1 < 2.2 for d0, d1 in zip(deviations, deviations[1:]))
    # the run-file snippet, on the shipped Laguerre case at its reduced size
    scope: dict = {}
    exec(compile(second.replace("out/laguerre_formulas/run.h5", str(laguerre_run[0])), "README.md", "exec"), scope)
    assert scope["c"].verdict == "consistent" and abs(scope["c"].fit.slope + 2) < 0.1
