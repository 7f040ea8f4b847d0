"""Bad input through the command line: exit code 2, one line naming the problem, nothing written.

Every row of :data:`BAD` is one refused command line.  Each row runs
in-process through :func:`workbench.cli.main` (fast); a subset of at least
one row per subcommand runs as a real ``python -m workbench`` process, which
is what proves that no traceback ever reaches the terminal.

For every row: the exit code is 2, stdout is empty, stderr is exactly one
line and contains the expected fragment, the word "Traceback" never
appears, and the output folder given with ``--out`` stays empty (or is not
created at all).

The mathematical refusals follow the admissibility conditions of the
equilibrium problem (Saff & Totik, Logarithmic Potentials with External
Fields, 1997, §I.1, from memory of the statement): on an unbounded set the
field must satisfy V(x) - 2 log|x| -> +inf (so x**3, -x**2, log(1+x^2) and
0.9 log(1+x^2) are not admissible), and V must be real and finite on the
set; a weight factor |x - c|^p is integrable only for p > -1 (common
practice).
"""

from __future__ import annotations

import os
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest

from workbench.cli import main

def _files(root: Path, case_text: Callable[..., str], sweep_case_text: Callable[[], str]) -> dict[str, str]:
    """The fixture files a row may name (placeholders {name} in the argv).

    ``case_text`` is the fixture of tests/conftest.py; the rows name line
    numbers of its default text.
    """
    gauss = case_text()
    files = {
        "gauss": gauss,
        "malformed": "[case\nname = 'x'\n",
        "unknown_key": gauss.replace("value_points = 5", "value_pints = 5"),
        "wrong_type": gauss.replace("value_points = 5", 'value_points = "five"'),
        "wrong_type_dpi": gauss.replace("dpi = 100", "dpi = 1.5"),
        "unknown_table": gauss + "\n[bogus]\nx = 1\n",
        "case_nonconfining": gauss.replace('"x**2/2"', '"x**3"'),
        "case_slow_log": gauss.replace('"x**2/2"', '"0.9*log(1+x^2)"'),
        "case_not_finite": gauss.replace('"x**2/2"', '"log(x)"') + '\n[set]\nintervals = "-1:1"\n',
        "case_unknown_name": gauss.replace('"x**2/2"', '"y*x**2"'),
        "case_reversed": gauss + '\n[set]\nintervals = "1:-1"\n',
        "case_jacobi": gauss + '\n[set]\nintervals = "-1:1"\n[factor]\nkind = "jacobi"\nalpha = -1.0\n',
        "case_n_zero": gauss.replace("n = [10, 20]", "n = [0, 10]"),
        "case_unused_parameter": gauss.replace('"x**2/2"\n', '"x**2/2"\nparameters = { t = 1.0 }\n'),
        "sweep": sweep_case_text(),
        "sweep_nonconfining": sweep_case_text().replace('"x**4/4 - t*x**2/2"', '"x**3 + t*x**2"'),
        "sweep_bad_axis": sweep_case_text().replace('name = "t"', 'name = "q"'),
        "not_hdf5": "this is text, not HDF5\n",
    }
    paths = {}
    for name, text in files.items():
        suffix = ".h5" if name == "not_hdf5" else ".toml"
        path = root / f"{name}{suffix}"
        path.write_text(text)
        paths[name] = str(path)
    (root / "binary.toml").write_bytes(b"\xff\xfe\x00 not utf-8")
    paths["binary"] = str(root / "binary.toml")
    (root / "a_folder").mkdir()
    paths["a_folder"] = str(root / "a_folder")
    paths["missing"] = str(root / "missing.toml")
    paths["missing_h5"] = str(root / "missing.h5")
    return paths


EQ = ["equilibrium", "--out", "{out}/mu.h5"]
REC = ["recurrence", "--n", "5", "--count", "3", "--out", "{out}/rc.h5"]
ZER = ["zeros", "--n", "5", "--out", "{out}/z.h5"]
PRE = ["predict", "--degrees", "10:12"]
HAN = ["hankel", "--n", "6"]
RUN = ["--out", "{out}/run"]

#: (id, argv, fragment of the one-line message)
BAD = [
    # --- non-confining fields on unbounded sets
    ("cubic", EQ + ["--potential", "x**3"], "does not confine on the left"),
    ("minus_square", EQ + ["--potential=-x**2"], "does not confine"),
    ("log_growth", EQ + ["--potential", "log(1+x^2)"], "does not confine"),
    ("slow_log_growth", EQ + ["--potential", "0.9*log(1+x^2)"], "does not confine"),
    ("cosine", EQ + ["--potential", "cos(x)"], "does not confine"),
    ("half_line_decreasing", EQ + ["--potential=-x", "--on=0:"], "does not confine on the right"),
    ("zero_on_line", EQ + ["--on=0:"], "compact"),
    ("recurrence_cubic", REC + ["--potential", "x**3"], "does not confine"),
    ("zeros_log", ZER + ["--potential", "log(1+x^2)"], "does not confine"),
    ("predict_cubic", PRE + ["--potential", "x**3"], "does not confine"),
    ("hankel_cubic", HAN + ["--potential", "x**3"], "does not confine"),
    # --- fields not real or not finite on the set
    ("log_on_interval", EQ + ["--potential", "log(x)", "--on=-1:1"], "not finite"),
    ("sqrt_on_interval", EQ + ["--potential", "sqrt(x)", "--on=-1:1"], "not finite"),
    ("pole_on_interval", EQ + ["--potential", "1/x", "--on=-1:1"], "not finite at x = 0"),
    ("zeros_pole", ZER + ["--potential", "1/x", "--on=-1:1"], "not finite at x = 0"),
    # --- sets
    ("reversed_interval", EQ + ["--potential", "x^2", "--on=1:0"], "reversed"),
    ("overlapping_intervals", EQ + ["--potential", "x^2", "--on=0:1,0.5:2"], "overlap"),
    ("point_interval", EQ + ["--potential", "x^2", "--on=1:1"], "single point"),
    ("empty_set", EQ + ["--potential", "x^2", "--on="], "empty set"),
    ("empty_piece", EQ + ["--potential", "x^2", "--on=0:1,"], "must look like a:b"),
    ("set_not_number", EQ + ["--potential", "x^2", "--on=a:b"], "not a number"),
    ("set_overflow", EQ + ["--potential", "x^2", "--on=0:1e400"], "not finite"),
    ("inner_infinite_end", EQ + ["--potential", "x^2", "--on=-inf:0,1:inf,3:4"], "overlap"),
    ("signed_unbounded", EQ + ["--potential", "x^2", "--signed"], "compact"),
    # --- factors
    ("jacobi_minus_one", REC + ["--on=-1:1", "--factor", "(1-x)^-1"], "exponents must exceed -1"),
    ("jacobi_minus_1p5", REC + ["--on=-1:1", "--factor", "(1-x)^-1.5"], "exponents must exceed -1"),
    ("fisher_hartwig_minus_two", REC + ["--potential", "x^2", "--factor", "abs(x)^-2"],
     "exponents must exceed -1"),
    ("combined_factors", REC + ["--potential", "x^2", "--factor", "abs(x)^(-0.5)/abs(x)^0.6"],
     "combined factors"),
    ("factor_sign_change", REC + ["--potential", "x^2", "--factor", "(1-x)^0.5"], "changes sign"),
    ("factor_negative", REC + ["--potential", "x^2", "--factor=-1"], "not positive"),
    # an empty --factor= is a mistake, as an empty --on= is, in every command that takes a factor
    ("factor_empty_recurrence", REC + ["--potential", "x^2", "--factor="], "empty factor"),
    ("factor_empty_predict", PRE + ["--potential", "x^2", "--factor="], "empty factor"),
    ("factor_x_exponent", REC + ["--potential", "x^2", "--factor", "(1-x)^x"], "finite constant"),
    ("predict_factor", PRE + ["--potential", "x^2", "--on=-1:1", "--factor", "(1-x)^-1"],
     "exponents must exceed -1"),
    # --- sizes
    ("n_zero", REC + ["--potential", "x**2/2", "--n", "0"], "--n = 0 must be >= 1"),
    ("n_negative", ZER + ["--potential", "x**2/2", "--n", "-3"], "--n = -3 must be >= 1"),
    ("count_negative", REC + ["--potential", "x**2/2", "--count", "-1"], "--count = -1 must be >= 0"),
    ("n_not_integer", REC + ["--potential", "x**2/2", "--n", "2.5"], "must be an integer"),
    ("count_not_integer", REC + ["--potential", "x**2/2", "--count", "2.5"], "must be an integer"),
    ("count_expression", REC + ["--potential", "x**2/2", "--count", "10**9"], "must be an integer"),
    ("count_past_memory", REC + ["--potential", "x**2/2", "--count", "1000000000"], "GB"),
    ("degree_past_memory", ZER + ["--potential", "x**2/2", "--degree", "1000000000"], "GB"),
    ("degree_zero", ZER + ["--potential", "x**2/2", "--degree", "0"], "--degree = 0"),
    ("tolerance_negative", REC + ["--potential", "x**2/2", "--tolerance", "-1"], "--tolerance"),
    ("hankel_n_zero", ["hankel", "--potential", "x**2/2", "--n", "0"], "--n = 0 must be >= 1"),
    ("hankel_n_fraction", ["hankel", "--potential", "x**2/2", "--n", "2.5"], "must be an integer"),
    ("hankel_n_huge", ["hankel", "--potential", "x**2/2", "--n", "1000000"], "hours"),
    ("hankel_factor", HAN + ["--on=-1:1", "--factor", "(1-x)^-1"], "exponents must exceed -1"),
    ("degrees_reversed", PRE + ["--potential", "x^2", "--degrees", "10:5"], "1 <= LO < HI"),
    ("degrees_zero", PRE + ["--potential", "x^2", "--degrees", "0:5"], "1 <= LO < HI"),
    ("degrees_text", PRE + ["--potential", "x^2", "--degrees", "a:b"], "LO:HI with integers"),
    ("degrees_huge", PRE + ["--potential", "x^2", "--degrees", "1:10000000"], "longer than"),
    # --- expressions: nothing runs as code
    ("unknown_name", EQ + ["--potential", "y*x"], "unknown name 'y'"),
    ("unknown_function", EQ + ["--potential", "foo(x)"], "unknown function 'foo'"),
    ("attribute", EQ + ["--potential", "x.real"], "attribute access"),
    ("dunder", EQ + ["--potential", "__import__"], "unknown name '__import__'"),
    ("dunder_attribute", PRE + ["--potential", "x.__class__"], "attribute access"),
    ("lambda", EQ + ["--potential", "lambda x: x"], "lambda"),
    ("string", EQ + ["--potential", "'x'"], "quotes are not allowed"),
    ("subscript", EQ + ["--potential", "x[0]"], "brackets"),
    ("comprehension", REC + ["--potential", "[x for x in y]"], "brackets"),
    ("huge_exponent", EQ + ["--potential", "x^100000"], "too large"),
    ("huge_constant", EQ + ["--potential", "x^2*1e400"], "not finite"),
    ("inf_constant", EQ + ["--potential", "x^2+inf"], "finite"),
    ("nan_constant", ZER + ["--potential", "x^2+nan"], "finite"),
    ("factor_attribute", REC + ["--potential", "x^2", "--factor", "x.y"], "attribute access"),
    ("param_no_value", PRE + ["--potential", "x^2", "--param", "t"], "NAME=VALUE"),
    ("param_inf", EQ + ["--potential", "t*x^2", "--param", "t=inf"], "is not a number"),
    ("param_twice", EQ + ["--potential", "t*x^2", "--param", "t=1", "--param", "t=2"], "given twice"),
    ("param_bad_name", EQ + ["--potential", "x^2", "--param", "1t=3"], "must be a name"),
    # a value for a name no expression uses is refused (a misspelt --param would be ignored)
    ("param_unused", EQ + ["--potential", "t*x^2", "--param", "t=1", "--param", "s=2"],
     "--param s: not used by --potential (the names used are t)"),
    ("param_unused_no_field", EQ + ["--on=-1:1", "--param", "t=1"], "--param t: not used"),
    ("param_unused_factor", REC + ["--potential", "x^2", "--factor", "abs(x-c)^0.5", "--param", "c=0.1",
                                   "--param", "g=2"], "--param g: not used by --potential or --factor"),
    ("param_unused_predict", PRE + ["--potential", "x^2", "--param", "t=1"], "--param t: not used"),
    ("predict_order_three", PRE + ["--potential", "x^2", "--order", "3"], "--order must be one of 0, 1, 2"),
    ("predict_order_text", PRE + ["--potential", "x^2", "--order", "two"], "--order must be one of"),
    ("predict_method", PRE + ["--potential", "x^2", "--method", "exact"], "--method must be one of series"),
    ("predict_long_corrected", ["predict", "--degrees", "100:90100", "--potential", "x**4/4 - 3*x**2/2",
                                "--order", "2"], "would take about"),
    ("predict_edge_zeros_text", PRE + ["--potential", "x^2", "--edge-zeros", "five"], "--edge-zeros must be an integer"),
    ("predict_edge_zeros_many", PRE + ["--potential", "x^2", "--edge-zeros", "51"], "from 0 to 50"),
    ("predict_edge_zeros_fullwidth", PRE + ["--potential", "x^2", "--edge-zeros", "\uff15"], "--edge-zeros must be"),
    ("predict_edge_zeros_long", ["predict", "--degrees", "100:20100", "--potential", "x^2/2", "--edge-zeros", "5"],
     "ask for fewer --edge-zeros"),
    ("predict_fisher_hartwig_order", PRE + ["--potential", "x^2/2", "--factor", "abs(x-0.3)^1", "--order", "1"],
     "Fisher–Hartwig"),
    ("param_unused_zeros", ZER + ["--potential", "x^2/2", "--param", "t=1"], "--param t: not used"),
    ("dash_value_unattached", EQ + ["--potential", "-x^2"], "attached with '='"),
    ("missing_potential", REC + [], "--potential is required"),
    # --- output paths
    ("out_is_folder", ["equilibrium", "--potential", "x^2", "--out", "{a_folder}"], "is a folder"),
    ("out_under_file", ["recurrence", "--potential", "x^2", "--n", "5", "--count", "3",
                        "--out", "{not_hdf5}/rc.h5"], "is a file, not a folder"),
    # --- case files (run)
    ("run_missing_case", ["run", "{missing}"] + RUN, "not found"),
    ("run_malformed_toml", ["run", "{malformed}"] + RUN, "line 1: malformed TOML"),
    ("run_binary_case", ["run", "{binary}"] + RUN, "cannot read case file"),
    ("run_unknown_key", ["run", "{unknown_key}"] + RUN,
     "line 7: unknown key 'value_pints' in [polynomials]"),
    ("run_wrong_type", ["run", "{wrong_type}"] + RUN,
     "line 7: key 'value_points' in [polynomials] must be an integer"),
    ("run_wrong_type_dpi", ["run", "{wrong_type_dpi}"] + RUN, "line 10: key 'dpi' in [figures]"),
    ("run_unknown_table", ["run", "{unknown_table}"] + RUN, "line 12: unknown table [bogus]"),
    ("run_unknown_name", ["run", "{case_unknown_name}"] + RUN, "line 4: in [field] expression: unknown name 'y'"),
    ("run_reversed_set", ["run", "{case_reversed}"] + RUN, "[set] intervals '1:-1': interval 1:-1 is reversed"),
    ("run_jacobi_exponent", ["run", "{case_jacobi}"] + RUN, "[factor] alpha = -1.0 must be > -1"),
    ("run_n_zero", ["run", "{case_n_zero}"] + RUN, "line 6: n must be >= 2"),
    ("run_unused_parameter", ["run", "{case_unused_parameter}"] + RUN,
     "line 5: [field] parameters t not used by the expression"),
    ("run_nonconfining", ["run", "{case_nonconfining}"] + RUN, "[field] on [set]: V does not confine"),
    ("run_slow_log", ["run", "{case_slow_log}"] + RUN, "does not confine"),
    ("run_not_finite", ["run", "{case_not_finite}"] + RUN, "not finite at x = -1"),
    ("run_out_under_file", ["run", "{gauss}", "--out", "{not_hdf5}/run"], "is a file, not a folder"),
    # --- sweeps
    ("sweep_missing_case", ["sweep", "{missing}"] + RUN, "not found"),
    ("sweep_malformed", ["sweep", "{malformed}"] + RUN, "malformed TOML"),
    ("sweep_no_table", ["sweep", "{gauss}"] + RUN, "has no [sweep] table"),
    ("sweep_bad_axis", ["sweep", "{sweep_bad_axis}"] + RUN, "sweep axis 'q' is not a parameter"),
    ("sweep_nonconfining", ["sweep", "{sweep_nonconfining}"] + RUN, "refused at every corner"),
    ("sweep_workers_zero", ["sweep", "{sweep}", "--workers", "0"] + RUN, "--workers 0"),
    ("sweep_budget_negative", ["sweep", "{sweep}", "--budget", "-1"] + RUN, "--budget -1"),
    ("sweep_bad_scheduler", ["sweep", "{sweep}", "--scheduler", "localhost"] + RUN, "tcp://"),
    # --- plot and show
    ("plot_missing", ["plot", "{missing_h5}", "--out", "{out}/f"], "not found"),
    ("plot_not_hdf5", ["plot", "{not_hdf5}", "--out", "{out}/f"], "cannot read"),
    ("plot_toml", ["plot", "{gauss}", "--out", "{out}/f"], "as HDF5"),
    ("plot_folder", ["plot", "{a_folder}", "--out", "{out}/f"], "is a folder"),
    ("plot_format", ["plot", "{not_hdf5}", "--formats", "svg", "--out", "{out}/f"], "--formats"),
    ("show_missing", ["show", "{missing_h5}"], "not found"),
    ("show_not_hdf5", ["show", "{not_hdf5}"], "cannot read"),
    ("show_folder", ["show", "{a_folder}"], "is a folder"),
    # --- demo
    ("demo_unknown_option", ["demo", "--bogus"], "unrecognized arguments: --bogus"),
    ("demo_out_under_file", ["demo", "--out", "{not_hdf5}/demo"], "is a file, not a folder"),
]

#: rows that also run as a real process (at least one per subcommand)
SUBPROCESS = [
    "cubic", "pole_on_interval", "jacobi_minus_one", "param_unused", "count_past_memory", "zeros_pole",
    "degrees_reversed", "hankel_n_huge", "lambda", "run_unknown_key", "run_nonconfining", "sweep_nonconfining",
    "plot_not_hdf5", "show_folder", "demo_out_under_file",
]

COMMANDS = ("equilibrium", "recurrence", "zeros", "predict", "hankel", "run", "sweep", "plot", "show", "demo")


def test_the_table_covers_every_command():
    assert len(BAD) >= 40 and len({row[0] for row in BAD}) == len(BAD)
    assert {row[1][0] for row in BAD} == set(COMMANDS)
    assert {dict((r[0], r[1][0]) for r in BAD)[name] for name in SUBPROCESS} == set(COMMANDS)
    assert len(SUBPROCESS) >= 12


def _argv(argv, paths, out):
    return [a.format(out=out, **paths) for a in argv]


def _check(code, stdout, stderr, fragment, out: Path):
    assert code == 2, stderr
    assert "Traceback" not in stderr
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert fragment in lines[0]
    assert stdout == ""
    # nothing written: the --out folder is absent or empty, and no temporary is left
    assert not out.exists() or list(out.rglob("*")) == []


@pytest.mark.parametrize("name,argv,fragment", BAD, ids=[row[0] for row in BAD])
def test_bad_input_in_process(name, argv, fragment, tmp_path, capsys, case_text, sweep_case_text):
    paths = _files(tmp_path, case_text, sweep_case_text)
    out = tmp_path / "out"
    before = sorted(p.name for p in tmp_path.iterdir())
    try:
        code = main(_argv(argv, paths, str(out)))
    except SystemExit as exc:  # argparse usage errors
        code = exc.code
    captured = capsys.readouterr()
    _check(code, captured.out, captured.err, fragment, out)
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing beside the fixtures


def test_bad_input_in_a_real_process(tmp_path, case_text, sweep_case_text):
    """The same rows as separate processes (started together: the cost is the interpreter start)."""
    rows = {row[0]: row for row in BAD}
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    started = []
    for name in SUBPROCESS:
        _, argv, fragment = rows[name]
        root = tmp_path / name
        root.mkdir()
        paths = _files(root, case_text, sweep_case_text)
        out = root / "out"
        process = subprocess.Popen([sys.executable, "-m", "workbench", *_argv(argv, paths, str(out))],
                                   stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
        started.append((name, process, fragment, out))
    for name, process, fragment, out in started:
        stdout, stderr = process.communicate(timeout=120)
        _check(process.returncode, stdout, stderr, f"{fragment}", out)


# ------------------------------------------------------------- hints belong to the front end
def _string_literals(path: Path):
    import tokenize

    with open(path, "rb") as handle:
        for token in tokenize.tokenize(handle.readline):
            if token.type == tokenize.STRING or token.type == getattr(tokenize, "FSTRING_MIDDLE", -1):
                yield token.start[0], token.string


def test_core_messages_name_no_command_line_option():
    # equilibrium, gfunction and the polynomial engine are libraries: their messages speak of the
    # set and the parameters; the CLI (workbench.cli.command_line_hint) adds --on / --param
    import re

    root = Path(__file__).resolve().parents[2]
    option = re.compile(r"--[a-z]")
    found = []
    for package in ("equilibrium", "gfunction", "workbench/polynomials"):
        for path in sorted((root / package).rglob("*.py")):
            for line, text in _string_literals(path):
                if option.search(text) and not text.lstrip("rbfuRBFU").startswith(('"""', "'''")):
                    found.append(f"{path.relative_to(root)}:{line}: {text[:60]}")
    assert not found, found


@pytest.mark.parametrize("argv, core, hint", [
    (["equilibrium", "--potential", "1/x", "--on=-1:1"], "not finite at x = 0", "(the set is given as --on=a:b,c:d, e.g. --on=-1:1)"),
    (["equilibrium", "--potential", "x**4 - t*x**2"], "if 't' is a parameter, give its value", "(on the command line: --param t=VALUE)"),
])
def test_the_command_line_adds_its_hint(argv, core, hint, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and core in err[0] and hint in err[0]


def test_a_case_file_gets_its_own_hint(tmp_path):
    from equilibrium.errors import InputError
    from workbench.case import parse_case

    text = '[case]\nname = "c"\n[field]\nexpression = "x**4 - t*x**2"\n[polynomials]\nn = [10]\n'
    with pytest.raises(InputError) as info:
        parse_case(text, source="c.toml")
    message = str(info.value)
    assert "give it in [field], e.g. parameters = { t = 1.0 }" in message and "--param" not in message
