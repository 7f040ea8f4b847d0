"""The words of the outputs: the trade's terms, and one way of writing each thing.

* Ω_j = μ([a_{j+1}, b_k]) are the *filling fractions* (the word of the
  random-matrix and integrable-systems literature; common practice), not
  "filling phases" -- the phases are n Ω mod 1, the arguments of the theta
  functions.
* The numbers a result carries to show it is right are *checks*
  ("figures" are plots here).
* A set is written in its text form ``a:b,c:d`` in every output, infinite
  ends as ``inf``: the real line is ``-inf:inf`` in tables, JSON and files.
"""

from __future__ import annotations

import json
import subprocess
from pathlib import Path

import numpy as np

from equilibrium import IntervalSet
from workbench.cli import main

ROOT = Path(__file__).resolve().parents[2]


def test_equilibrium_table_and_json(capsys):
    assert main(["equilibrium", "--potential", "x**4/4 - t*x**2/2", "--param", "t=3"]) == 0
    table = capsys.readouterr().out
    assert "on -inf:inf" in table.splitlines()[0]
    assert "filling fractions Omega_j" in table and "phases" not in table
    assert any(line.startswith("check ") for line in table.splitlines())
    assert "figure" not in table
    assert main(["equilibrium", "--potential", "x**2/2", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["set"] == "-inf:inf"
    assert main(["equilibrium", "--potential", "x", "--on=0:", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["set"] == "0:inf"


def test_set_text_round_trips():
    for text in ("-inf:inf", "0:inf", "-inf:0", "-1:0.3,0.35:1", "-inf:-2,1:inf"):
        on = IntervalSet.parse(text)
        assert on.describe() == text == str(on)
        assert IntervalSet.parse(on.describe()) == on


def test_recurrence_weight_line(capsys):
    assert main(["recurrence", "--potential", "x**2/2", "--n", "3", "--count", "1"]) == 0
    assert capsys.readouterr().out.splitlines()[0].endswith(" on -inf:inf")


def test_run_file_and_summary(tmp_path, case_text):
    from workbench.case import load_case
    from workbench.commands.show import summary_lines
    from workbench.pipeline import _dense_description, run_case

    path = tmp_path / "gauss.toml"
    path.write_text(case_text(figures=("enabled = false",)))
    outcome = run_case(load_case(path), tmp_path / "out", progress=False)
    tree = outcome.tree
    assert tree.groups["equilibrium"].attrs["set"] == "-inf:inf"
    assert " on -inf:inf" in summary_lines(tree)[1]
    from workbench.results import read_run

    stored = read_run(outcome.path)  # the words as the file holds them
    omega = stored.groups["equilibrium"].datasets["omega"].attrs["description"]
    assert omega.startswith("filling fractions")
    # n_dense says what it is: every integer of a short range, a spread of a long one
    assert stored.groups["model"].datasets["n_dense"].attrs["description"].startswith(
        "every integer n from 10 to 20")
    assert _dense_description(np.unique(np.round(np.linspace(60, 800, 400)).astype(int))).startswith(
        "400 integers n spread evenly from 60 to 800 (of the 741")


def test_no_old_words_left_in_docs_and_code():
    files = subprocess.run(["git", "ls-files", "*.py", "*.md", "*.toml"], cwd=ROOT, capture_output=True,
                           text=True, check=True).stdout.split()
    offenders = []
    for name in files:
        if name.startswith("tests/"):
            continue
        text = (ROOT / name).read_text(encoding="utf-8").lower()
        for word in ("filling phase", "verification figure"):
            if word in text:
                offenders.append((name, word))
    assert offenders == []
