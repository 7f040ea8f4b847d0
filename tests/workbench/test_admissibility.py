"""No result claims more than it shows: the model of a run is admissible, and every comparison
that was skipped or is not a number says so, in the file and on screen.

* The zeros of the orthogonal polynomials of a weight on Σ follow the *positive*
  equilibrium measure constrained to Σ (Saff and Totik, Logarithmic Potentials with
  External Fields, 1997, Thm IV.1.11 and §IV.5 -- from memory of the statements).  A
  signed equilibrium measure that is negative somewhere is no model of them: a run
  asked for the signed problem switches to the positive measure, with a note; the
  predictor refuses such a measure outright.
* NaN is never verified: a comparison that was made and is not a number makes the run
  unverified (exit 3); one that was skipped by design is a note with its reason.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from equilibrium import Field, IntervalSet, solve_signed
from equilibrium.errors import InputError
from workbench.case import load_case
from workbench.cli import main
from workbench.commands.show import summary_lines, text_list
from workbench.pipeline import run_case
from workbench.results import read_run

#: the issue's case: 2x² - x on [-1, 0.3] ∪ [0.35, 1], signed density down to -inf at -1
SIGNED_CASE = """\
[case]
name = "signed_negative"
[field]
expression = "2*x**2 - x"
[set]
intervals = "-1:0.3,0.35:1"
signed = true
[polynomials]
n = [40, 80, 160]
[figures]
enabled = false
"""


def test_json_and_table_show_positivity(capsys):
    argv = ["equilibrium", "--potential", "2*x**2 - x", "--on=-1:0.3,0.35:1", "--signed"]
    assert main(argv + ["--json"]) == 0
    captured = capsys.readouterr()
    data = json.loads(captured.out)
    assert data["kind"] == "signed" and data["positive"] is False and data["density_minimum"] < 0
    assert data["negative_mass"] > 0.04
    assert "note: the signed measure is negative on [-1, -0.88" in captured.err
    assert main(argv) == 0
    table = capsys.readouterr().out
    assert "positive: NO   the density is negative on [-1, -0.88" in table
    assert main(["equilibrium", "--potential", "x**2/2", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["positive"] is True and data["density_minimum"] > 0


def test_predictor_refuses_a_negative_measure():
    from gfunction import predictor

    mu = solve_signed(Field.from_expression("2*x**2 - x"), IntervalSet.parse("-1:0.3,0.35:1"))
    with pytest.raises(InputError, match="negative on"):
        predictor(mu)


def test_signed_run_switches_to_the_positive_measure_and_converges(tmp_path, capsys):
    # Before: the run used the signed measure, exit 0 and verified = True, while err a_n stayed
    # near 0.06 and the small-norm check grew from 14 to 1e6.  The positive measure's predictions
    # converge: small-norm ~ 1/n, a_n to 1e-3, every zero counted in its band.
    path = tmp_path / "signed.toml"
    path.write_text(SIGNED_CASE)
    assert main(["run", str(path), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    captured = capsys.readouterr()
    assert "workbench run: note: [set] signed = true: the signed measure on the set is negative" in captured.err
    assert "note: [set] signed = true" in captured.out  # the summary shows it too
    tree = read_run(tmp_path / "out" / "run.h5")
    assert tree.groups["equilibrium"].attrs["kind"] == "positive"
    signed = tree.groups["equilibrium_signed"]
    assert signed.attrs["kind"] == "signed" and not signed.attrs["positive"]
    assert signed.attrs["density_minimum"] < 0
    assert any("signed = true" in note for note in text_list(tree.attrs["notes"]))
    comp = tree.groups["comparison"]
    small = np.asarray(comp.get("small_norm"))
    assert np.all(np.diff(small) < 0) and small[-1] < 0.01
    assert np.max(comp.get("err_a")) < 1e-3
    assert np.all(np.asarray(comp.get("band_count_mismatch")) == 0)
    assert tree.attrs["verified"]


def _run(tmp_path, text, monkeypatch=None):
    path = tmp_path / "case.toml"
    path.write_text(text)
    return run_case(load_case(path), tmp_path / "out", progress=False)


def test_skipped_comparisons_are_notes_with_their_reason(tmp_path, case_text):
    # a Fisher-Hartwig point at c = 0: values and small-norm comparisons are not made; the
    # reasons used to live only in an attribute of /model
    text = case_text(expression="x**2/2 + x**4/10", figures=("enabled = false",)) + (
        "[factor]\nkind = \"fisher_hartwig\"\nc = 0.0\ngamma = 0.75\n")
    outcome = _run(tmp_path, text)
    assert outcome.verified  # skipped by design is not a failure
    notes = "\n".join(outcome.notes)
    assert "values of p_n not compared: the factor (" in notes and "is singular at c = 0 inside a band" in notes
    assert "small-norm check not made: with h != 1" in notes
    stored = read_run(outcome.path)
    assert text_list(stored.attrs["notes"]) == list(outcome.notes)
    shown = "\n".join(summary_lines(stored))
    assert "note: values of p_n not compared" in shown and "note: small-norm check not made" in shown


def test_hard_right_edge_is_compared(tmp_path):
    # the right end of the support is the hard end 0.3 of the set: its zeros are compared with the
    # Bessel form (gfunction.edge_zeros), no longer a note "not compared"
    text = SIGNED_CASE.replace("signed = true\n", "").replace("n = [40, 80, 160]", "n = [10, 20]")
    outcome = _run(tmp_path, text)
    assert not any("edge zeros not compared" in note for note in outcome.notes)
    stored = read_run(outcome.path)
    assert stored.get("model").attrs["edge_kind"] == "hard"
    assert np.all(np.asarray(stored.get("comparison").get("err_zeros_edge_right")) < 1e-3)


def test_nan_comparison_is_never_verified(tmp_path, case_text, monkeypatch):
    # a small-norm check that returns NaN (as contour_radius = inf did) must not leave the
    # run verified; the message names the comparison and the n
    import workbench.pipeline as pipeline

    original = pipeline._small_norm_check

    def broken(*args, **kwargs):
        check = original(*args, **kwargs)

        def nan_check(rc):
            out = check(rc)
            return dict(out, deviation=np.full_like(out["deviation"], np.nan))

        return nan_check

    monkeypatch.setattr(pipeline, "_small_norm_check", broken)
    outcome = _run(tmp_path, case_text(figures=("enabled = false",)))
    assert not outcome.verified
    assert any(m.startswith("small_norm is not a number at n = 10, 20") for m in outcome.messages)
    stored = read_run(outcome.path)
    assert stored.attrs["verified"] is False or stored.attrs["verified"] == 0
    assert any("small_norm is not a number" in line for line in summary_lines(stored))


def test_infinite_contour_radius_is_refused(tmp_path, case_text, capsys):
    path = tmp_path / "case.toml"
    path.write_text(case_text(comparisons=("contour_radius = inf",)))
    assert main(["run", str(path), "--out", str(tmp_path / "out")]) == 2
    assert "contour_radius = inf must be finite" in capsys.readouterr().err
    assert not (tmp_path / "out").exists()
