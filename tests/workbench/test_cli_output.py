"""What the command line prints: closed pipes, help texts, integer columns.

A reader that stops early (``workbench ... | head``) closes the pipe; every
command then stops quietly with exit status 141 (128 + SIGPIPE, what the
shell reports for tools killed by SIGPIPE; common practice) and prints no
traceback.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from workbench.cli import COMMAND_MODULES, EXIT_BROKEN_PIPE, build_parser


def _start_into_closed_pipe(argv: list[str], cwd: Path) -> subprocess.Popen:
    """Start ``python -m workbench argv`` with a standard output whose reader is already gone."""
    read_end, write_end = os.pipe()
    os.close(read_end)  # the reader went away before the first byte (``| head -0``)
    try:
        return subprocess.Popen([sys.executable, "-m", "workbench", *argv], stdout=write_end,
                                stderr=subprocess.PIPE, text=True, cwd=cwd)
    finally:
        os.close(write_end)


def test_closed_pipe_stops_quietly(tmp_path, case_text, sweep_case_text):
    (tmp_path / "sweep.toml").write_text(sweep_case_text())
    (tmp_path / "gauss.toml").write_text(case_text(figures=("enabled = false",)))
    first = _start_into_closed_pipe(["run", "gauss.toml", "--out", "run", "--quiet"], tmp_path)
    commands = [
        ["equilibrium", "--potential", "x**4/4 - x**2"],
        ["equilibrium", "--potential", "x**2/2", "--json"],
        ["recurrence", "--potential", "x**2/2", "--n", "10", "--count", "200"],
        ["zeros", "--potential", "x**2/2", "--n", "50"],
        ["predict", "--potential", "x**2/2", "--degrees", "10:20"],
        ["sweep", "sweep.toml", "--workers", "1", "--quiet", "--out", "sweep"],
        ["--help"],
    ]
    started = [(argv, _start_into_closed_pipe(argv, tmp_path)) for argv in commands]
    # the run prints its summary into the closed pipe after writing its file completely
    assert (first.wait(timeout=300), first.stderr.read()) == (EXIT_BROKEN_PIPE, "")
    assert (tmp_path / "run" / "run.h5").is_file()
    started.append((["show"], _start_into_closed_pipe(["show", "run/run.h5"], tmp_path)))
    for argv, process in started:
        _, stderr = process.communicate(timeout=300)
        assert "Traceback" not in stderr and "BrokenPipe" not in stderr, (argv, stderr)
        assert stderr == "", (argv, stderr)
        # argparse prints --help itself and ignores a failed write (status 0); all else is 141
        assert process.returncode == (0 if argv == ["--help"] else EXIT_BROKEN_PIPE), argv


def test_help_texts_are_plain_text():
    # argparse prints descriptions as they are: reStructuredText markup would show raw
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    assert set(sub.choices) == set(COMMAND_MODULES)
    for name, command in sub.choices.items():
        text = command.format_help()
        assert "``" not in text and ":func:" not in text, name


def test_count_miss_prints_as_an_integer(tmp_path, case_text, capsys):
    from workbench.case import load_case
    from workbench.commands.show import summary_lines
    from workbench.pipeline import run_case

    path = tmp_path / "gauss.toml"
    path.write_text(case_text(figures=("enabled = false",)))
    outcome = run_case(load_case(path), tmp_path / "out", progress=False)
    lines = summary_lines(outcome.tree)
    header = next(line for line in lines if "count miss" in line)
    end = header.index("count miss") + len("count miss")  # columns are right-aligned
    rows = lines[lines.index(header) + 1: lines.index(header) + 3]
    assert [row[end - 11: end].strip() for row in rows] == ["0", "0"]  # not 0.000000
