"""Hostile inputs, second round: each test is one input that crashed, hung or gave silent data.

Every refusal is exit code 2 with one line on stderr, no traceback and nothing
written; unbounded requests are refused up front with the estimate
(:mod:`workbench.limits`); damaged or crafted files are recomputed or refused.
"""

from __future__ import annotations

import json
import os
import resource
import socket
import subprocess
import sys
import threading
from fractions import Fraction
from pathlib import Path

import h5py
import numpy as np
import pytest

from equilibrium.errors import InputError
from workbench.cli import main


def _refused(argv, capsys, fragment: str) -> str:
    code = main(argv)
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert code == 2, captured.err
    assert len(lines) == 1 and "Traceback" not in captured.err, captured.err
    assert fragment in lines[0], lines[0]
    return lines[0]


def _temporaries(root: Path) -> list[Path]:
    return [p for p in root.rglob("*") if p.name.endswith(".tmp")]


# ------------------------------------------------------------------------------- crashes
def test_a_failing_write_is_one_line_and_leaves_nothing(tmp_path):
    # RLIMIT_FSIZE makes every write beyond 20 kB fail with EFBIG (Python ignores SIGXFSZ):
    # the same failure as a full disk; it used to end in a segfault inside HDF5
    def limit():
        resource.setrlimit(resource.RLIMIT_FSIZE, (20_000, 20_000))

    out = tmp_path / "mu.h5"
    process = subprocess.run([sys.executable, "-m", "workbench", "equilibrium", "--potential", "x^2",
                              "--out", str(out)], capture_output=True, text=True, preexec_fn=limit,
                             timeout=300)
    lines = process.stderr.strip().splitlines()
    assert process.returncode == 2 and len(lines) == 1, process.stderr
    assert "File too large" in lines[0] and "Traceback" not in process.stderr
    assert not out.exists() and _temporaries(tmp_path) == []


def test_json_writes_infinite_values_as_strings():
    from workbench.jsontext import json_text

    text = json_text({"a": float("inf"), "b": [np.float64("-inf"), float("nan"), 1.5], "c": np.int64(3)})
    assert json.loads(text) == {"a": "inf", "b": ["-inf", "nan", 1.5], "c": 3}


def test_json_of_a_measure_with_an_infinite_check(capsys):
    # x^64 overflows far out: a check is infinite (it was a ValueError traceback)
    code = main(["equilibrium", "--potential", "x^64", "--json"])
    out = capsys.readouterr().out

    def refuse(name):
        raise ValueError(f"{name} is not JSON (RFC 8259)")

    data = json.loads(out, parse_constant=refuse)
    assert code in (0, 3) and "checks" in data


def test_monic_leading_does_not_overflow():
    from equilibrium.algebraic import monic_leading

    # exact rational value d^m / 2^(m-1) (150 intervals on [0, 299]: d = 150, m = 149)
    for d, m in ((150.0, 149), (3.0, 5), (0.5, 40)):
        exact = float(Fraction(d) ** m / Fraction(2) ** (m - 1))
        assert monic_leading(d, m) == pytest.approx(exact, rel=1e-13)


def test_too_many_intervals_are_refused_with_the_measurement(capsys):
    on = ",".join(f"{2 * i}:{2 * i + 1}" for i in range(150))
    _refused(["equilibrium", f"--on={on}"], capsys, "150 intervals")


def test_a_damaged_partial_block_is_computed_again(tmp_path, capsys, case_text):
    from workbench.case import parse_case
    from workbench.pipeline import run_case

    case = parse_case(case_text(n=(10, 12)), source="c.toml")
    out = tmp_path / "out"
    first = run_case(case, out, progress=False, draw=False)
    partial = out / "partial" / "n_00010.h5"
    data = bytearray(partial.read_bytes())
    data[len(data) // 3: len(data) // 3 + 4000] = b"\xff" * 4000
    partial.write_bytes(bytes(data))
    # a block of another n under this n's name must not be reused either
    (out / "partial" / "n_00012.h5").unlink()
    (out / "partial" / "n_00010.h5").rename(out / "partial" / "n_00012.h5")
    again = run_case(case, out, progress=False, draw=False)
    assert again.computed == (10, 12) and again.reused == ()
    a_first = first.tree.group("direct").group("n_00012").datasets["a"].data
    a_again = again.tree.group("direct").group("n_00012").datasets["a"].data
    assert np.array_equal(a_first, a_again)
    third = run_case(case, out, progress=False, draw=False)
    assert third.reused == (10, 12)


def test_journal_records_are_validated(tmp_path):
    from workbench.sweep import Journal, valid_point_result

    path = tmp_path / "points.jsonl"
    good = {"bands": 1, "support": [[-1.0, 1.0]], "omega": [], "lagrange": 0.5, "energy": 0.1,
            "verified": True, "regular": True, "positive": True}
    lines = [json.dumps({"digest": "d", "format": "workbench-sweep-journal"}).encode(),
             json.dumps({"id": 0, "result": good}).encode(),
             b"\xff\xfe\x00 not utf-8",
             b'{"id": "abc", "result": {}}', b'{"id": NaN, "result": {}}', b'{"id": 1.5, "result": {}}',
             b'{"id": true, "result": {}}', b'{"id": -3, "result": {}}', b'{"id": 2, "result": 5}',
             json.dumps({"id": 3, "result": dict(good, bands="one")}).encode(),
             json.dumps({"id": 4, "result": dict(good, support=[[0, 1], [2, 3]])}).encode(),
             json.dumps({"id": 5, "result": {"error": "no convergence", "error_kind": "ValueError"}}).encode(),
             b"[" * 100000]
    path.write_bytes(b"\n".join(lines) + b"\n")
    journal = Journal(path, "d", valid=valid_point_result)
    assert sorted(journal.results) == [0, 5] and journal.rejected == 10
    folder = tmp_path / "as_folder.jsonl"
    folder.mkdir()
    with pytest.raises(InputError, match="not a regular file"):
        Journal(folder, "d")


@pytest.mark.parametrize("change, fragment", [
    (lambda t: "x = " + "[" * 5000 + "]" * 5000 + "\n", "nested too deep"),
    (lambda t: t.replace("n = [10, 20]", "n = { start = 16, stop = 32, num = 9223372036854775807 }"),
     "at most the supported 20000"),
    (lambda t: t.replace("n = [10, 20]", "n = { start = 2.5, stop = 32, num = 3 }"), "needs three integers"),
    (lambda t: t + '\n[factor]\nkind = "fisher_hartwig"\nc = inf\ngamma = 0.5\n', "c = inf must be a finite"),
    (lambda t: t + '\n[output]\nfile = "r\\u0000.h5"\n', "[output] file"),
    (lambda t: t + '\n[output]\nfile = "' + "r" * 300 + '.h5"\n', "at most 200 bytes"),
    (lambda t: t.replace('name = "gauss"', 'name = "' + "a" * 300 + '"'), "use at most 200"),
    (lambda t: t.replace("value_points = 5", "value_points = 1000000000"), "22.4 GB"),
    (lambda t: t.replace("[figures]", "[comparisons]\ncontour_points = 1000000000\n[figures]"),
     "more than the 100000 points"),
    # trust boundary: a case file writes under the working folder only (--out may go anywhere)
    (lambda t: t + '\n[output]\ndirectory = "/tmp/elsewhere"\n', "relative folder inside the working folder"),
    (lambda t: t + '\n[output]\ndirectory = "../up"\n', "relative folder inside the working folder"),
    (lambda t: t + '\n[output]\ndirectory = "results/../../up"\n', "relative folder inside the working folder"),
    (lambda t: t + '\n[output]\ndirectory = "~/home"\n', "relative folder inside the working folder"),
])
def test_case_files_asking_for_the_impossible(change, fragment, case_text):
    from workbench.case import parse_case

    with pytest.raises(InputError, match=None) as info:
        parse_case(change(case_text()), source="c.toml")
    assert fragment in str(info.value) and "\n" not in str(info.value)


def test_output_directory_of_a_case_stays_in_the_working_folder(tmp_path, case_text, monkeypatch):
    from workbench.case import parse_case

    case = parse_case(case_text() + '\n[output]\ndirectory = "results/run1"\n', source="c.toml")
    assert case.output_directory() == Path("results/run1")
    assert case.output_directory(tmp_path / "anywhere") == tmp_path / "anywhere"   # --out is the user's


def test_a_refused_run_leaves_no_folder(tmp_path, capsys, case_text):
    # the field is checked before anything is written: no empty output folder is left behind
    case = tmp_path / "c.toml"
    case.write_text(case_text(expression="-x**2"))
    out = tmp_path / "out"
    assert main(["run", str(case), "--out", str(out), "--quiet"]) == 2
    assert not out.exists()


def test_a_file_where_the_figures_folder_belongs(tmp_path, capsys, case_text):
    case = tmp_path / "c.toml"
    case.write_text(case_text())
    out = tmp_path / "out"
    out.mkdir()
    (out / "figures").write_text("x")
    _refused(["run", str(case), "--out", str(out), "--quiet"], capsys, "is a file, not a folder")
    assert sorted(p.name for p in out.iterdir()) == ["figures"]


def test_long_and_nul_output_names(tmp_path, capsys):
    _refused(["equilibrium", "--potential", "x^2", "--out", str(tmp_path / ("q" * 300 + ".h5"))], capsys,
             "more than the 255 a file system accepts")
    _refused(["equilibrium", "--potential", "x^2", "--out", str(tmp_path / "a\x00b.h5")], capsys, "NUL byte")
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------- crafted HDF5 files
def _crafted(path: Path, build) -> str:
    with h5py.File(path, "w") as handle:
        handle.attrs["format"] = "workbench-run"
        build(handle)
    return str(path)


def _deep(handle):
    group = handle
    for _ in range(2000):
        group = group.create_group("g")


def _loop(handle):
    handle.create_group("a")
    handle["a"]["back"] = handle["a"]  # a hard link to itself


def _huge(handle):
    # 7 kB on disk, 10^10 doubles declared (chunked, nothing written: the fill value)
    handle.create_dataset("big", shape=(10**10,), dtype="f8", chunks=(1024,))


@pytest.mark.parametrize("build, fragment", [
    (lambda h: h.attrs.__setitem__("format", np.array([1, 2])), "not a workbench file"),
    (lambda h: h.create_group("equilibrium").attrs.__setitem__("support", "not json ["), "workbench"),
    (lambda h: h.__setitem__("equilibrium", h5py.ExternalLink("missing.h5", "/x")), "ExternalLink"),
    (lambda h: h.__setitem__("equilibrium", h5py.SoftLink("/nowhere")), "SoftLink"),
    (_deep, "nested deeper than 32 levels"),
    (_loop, "reached twice"),
    (_huge, "declares 74.5 GB of data"),
])
@pytest.mark.parametrize("command", ["show", "plot"])
def test_crafted_files_for_show_and_plot(build, fragment, command, tmp_path, capsys):
    path = _crafted(tmp_path / "crafted.h5", build)
    argv = [command, path] + (["--out", str(tmp_path / "figs")] if command == "plot" else [])
    code = main(argv)
    captured = capsys.readouterr()
    assert code in (0, 2), captured.err
    assert "Traceback" not in captured.err and len(captured.err.strip().splitlines()) <= 1
    if code == 2:
        assert fragment in captured.err
    else:  # nothing in the file to draw or show: said so on stdout
        assert fragment == "workbench" and captured.out


def test_show_escapes_terminal_sequences():
    from workbench.commands.show import printable

    assert printable("title \x1b[31mred\x1b[0m\x07") == "title \\x1b[31mred\\x1b[0m\\x07"


def test_two_runs_do_not_share_a_figure_temporary(tmp_path):
    import matplotlib.pyplot as plt

    from workbench.figures import save_figure

    # another run writing the same figure holds a temporary beside it; it is not touched
    other = tmp_path / "density.png.tmp"
    other.write_bytes(b"another run's half-written figure")
    fig = plt.figure(figsize=(1, 1))
    try:
        written = save_figure(fig, tmp_path / "density", ["png"], dpi=50)
    finally:
        plt.close(fig)
    assert written == [tmp_path / "density.png"] and written[0].read_bytes()[:4] == b"\x89PNG"
    assert other.read_bytes() == b"another run's half-written figure"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["density.png", "density.png.tmp"]


# ------------------------------------------------------------------ schedulers and pools
def test_malformed_scheduler_address(tmp_path, capsys, sweep_case_text):
    case = tmp_path / "s.toml"
    case.write_text(sweep_case_text())
    for address in ("tcp://::::", "tcp://127.0.0.1:99999", "tcp://host", "localhost:8786"):
        _refused(["sweep", str(case), "--scheduler", address, "--out", str(tmp_path / "o")], capsys,
                 "tcp://HOST:PORT")
    assert not (tmp_path / "o").exists()


@pytest.mark.parametrize("reply, fragment", [
    (None, "no answer within 1 s"),                                   # an HTTP server waits for a request
    (b"\xff" * 8, "did not send a Dask handshake"),                   # would announce exabytes
    (b"HTTP/1.1 400 Bad Request\r\n\r\n", "did not send a Dask handshake"),
])
def test_a_peer_that_is_no_dask_scheduler(reply, fragment):
    from workbench.sweep import check_scheduler

    server = socket.socket()
    server.bind(("127.0.0.1", 0))
    server.listen(1)
    port = server.getsockname()[1]
    held = []

    def serve():
        connection, _ = server.accept()
        held.append(connection)
        if reply:
            connection.sendall(reply)

    thread = threading.Thread(target=serve, daemon=True)
    thread.start()
    try:
        with pytest.raises(InputError, match=fragment):
            check_scheduler(f"tcp://127.0.0.1:{port}", timeout=1.0)
    finally:
        thread.join(5)
        for connection in held:
            connection.close()
        server.close()


def test_more_workers_than_cores(tmp_path, capsys, sweep_case_text):
    from workbench.limits import usable_cores

    case = tmp_path / "s.toml"
    case.write_text(sweep_case_text())
    _refused(["sweep", str(case), "--workers", str(usable_cores() + 1), "--out", str(tmp_path / "o")], capsys,
             f"more than the {usable_cores()} usable core(s)")
    # run's direct stage goes through the same pools: the same limit, before any work
    _refused(["run", "one_band_quartic", "--workers", "64", "--out", str(tmp_path / "r")], capsys,
             f"more than the {usable_cores()} usable core(s)")
    assert not (tmp_path / "r").exists()


# ------------------------------------------------------------------------ unbounded cost
def test_a_huge_count_is_refused_with_its_estimate(capsys):
    line = _refused(["recurrence", "--potential", "x^2", "--n", "10", "--count", "19000000"], capsys,
                    "would take about")
    assert "WORKBENCH_LIMITS=off" in line


def test_a_long_product_is_refused_before_symbolic_differentiation(capsys):
    product = "*".join(f"cosh(x/{k})" for k in range(1, 120))
    _refused(["equilibrium", "--potential", product, "--on=-1:1"], capsys, "derivatives V', V''")


def test_long_symbolic_work_within_the_budget_is_announced(capsys):
    from workbench import limits

    # 39 factors: measured 57 s under load (the fit of limits.SYMBOLIC_SECONDS); only estimated here
    product = "*".join(f"cosh(x/{k})" for k in range(1, 40))
    seconds = limits.check_expression(product, {}, "--potential")
    assert limits.NOTICE_SECONDS <= seconds < 600
    assert "the symbolic derivatives V', V'' take about" in capsys.readouterr().err
    assert limits.check_expression("cosh(x)*x^2", {}, "--potential") < limits.NOTICE_SECONDS
    assert limits.check_expression("x^4/4 - x^2", {}, "--potential") == 0.0   # from its coefficients
    assert capsys.readouterr().err == ""


def test_the_budgets_can_be_lifted(monkeypatch):
    from workbench import limits

    monkeypatch.setenv("WORKBENCH_LIMITS", "off")
    limits.check_time(1e9, "x", "y")
    limits.check_workers(64, 2)
    with pytest.raises(InputError):  # not a cost: no float can count these degrees
        limits.check_degree(2**53 + 1, "--n")


# -------------------------------------------------------------------- wrong or silent data
@pytest.mark.parametrize("potential", ["(x/10000)^2", "1e-8*x^2"])
def test_confinement_is_scale_invariant(potential, capsys):
    # V = c x^2 has the semicircle law on [-2/sqrt(2c), 2/sqrt(2c)] (V = x^2/2 scaled; common practice)
    assert main(["equilibrium", "--potential", potential, "--json"]) == 0
    support = json.loads(capsys.readouterr().out)["support"]
    edge = 2.0 / np.sqrt(2e-8)
    assert np.allclose(support, [[-edge, edge]], rtol=1e-9, atol=0)


def test_output_onto_a_fifo_or_device_is_refused(tmp_path, capsys):
    from workbench.hdf5 import check_output_file

    fifo = tmp_path / "fifo.h5"
    os.mkfifo(fifo)
    _refused(["equilibrium", "--potential", "x^2", "--out", str(fifo)], capsys, "not a regular file")
    assert fifo.is_fifo()
    with pytest.raises(InputError, match="not a regular file"):
        check_output_file("/dev/null")  # checked only: never written


@pytest.mark.parametrize("argv, fragment", [
    (["equilibrium", "--potential", "t*x^2", "--param", "t=\uff11"], "ASCII digits"),
    (["equilibrium", "--on=\uff10:\uff11"], "U+FF10"),
    (["equilibrium", "--potential", "x^2+t*x", "--param", "t=1e-400"], "underflows to 0"),
    (["predict", "--potential", "x^2", "--degrees", "\uff11\uff10:20"], "ASCII digits"),
    (["recurrence", "--potential", "x^2", "--n", "\uff11\uff10", "--count", "3"], "must be an integer"),
    (["predict", "--potential", "x^2", "--degrees", "9007199254740993:9007199254740995"], "beyond 2^53"),
    (["zeros", "--potential", "x^2", "--n", "99999999999999999999", "--degree", "3"], "beyond 2^53"),
])
def test_numbers_the_expressions_would_refuse(argv, fragment, capsys):
    _refused(argv, capsys, fragment)


def test_omega_refinement_of_many_bands_is_budgeted(monkeypatch, capsys):
    """The extended-precision Ω (equilibrium.refinement) is estimated before it runs: within the budget
    for the fields of the tests (three bands 0.9 s and five bands 1.9 s measured, estimated 0.9 s and
    4.4 s), kept to the double Ω with the estimate beyond it, announced on stderr in between."""
    from workbench import limits

    assert limits.refinement_seconds(3, 6) == pytest.approx(0.9, rel=0.05)
    assert limits.refinement_over_budget(3, 6) == ""
    over = limits.refinement_over_budget(40, 80)
    assert "would take about" in over and "budget" in over
    assert limits.refinement_over_budget(12, 24) == "" and "takes about" in capsys.readouterr().err
    monkeypatch.setenv("WORKBENCH_LIMITS", "off")
    assert limits.refinement_over_budget(40, 80) == ""
