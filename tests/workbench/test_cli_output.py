"""What the command line prints: closed pipes, help texts, integer columns, worker restarts.

A reader that stops early (``workbench ... | head``) closes the pipe; every
command then stops quietly with exit status 141 (128 + SIGPIPE, what the
shell reports for tools killed by SIGPIPE; common practice) and prints no
traceback.
"""

from __future__ import annotations

import functools
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from workbench.cli import COMMAND_MODULES, EXIT_BROKEN_PIPE, build_parser

SWEEP_CASE = """\
[case]
name = "tiny_sweep"
[field]
expression = "x**4/4 - t*x**2/2"
parameters = { t = 1.0 }
[[sweep.axis]]
name = "t"
start = 0.0
stop = 1.0
num = 3
[figures]
enabled = false
"""


def _start_into_closed_pipe(argv: list[str], cwd: Path) -> subprocess.Popen:
    """Start ``python -m workbench argv`` with a standard output whose reader is already gone."""
    read_end, write_end = os.pipe()
    os.close(read_end)  # the reader went away before the first byte (``| head -0``)
    try:
        return subprocess.Popen([sys.executable, "-m", "workbench", *argv], stdout=write_end,
                                stderr=subprocess.PIPE, text=True, cwd=cwd)
    finally:
        os.close(write_end)


def test_closed_pipe_stops_quietly(tmp_path, case_text):
    (tmp_path / "sweep.toml").write_text(SWEEP_CASE)
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


def _dying_point(marker_dir, params):
    """Stand-in point function that kills its worker process the first time it sees t = 0.5."""
    if params["t"] == 0.5:
        marker = Path(marker_dir) / "died-once"
        if not marker.exists():
            marker.write_text("x")
            os._exit(7)
    return {"bands": 1, "lagrange": float(np.cos(params["t"])), "energy": 0.0,
            "support": [[-1.0, 1.0]], "omega": [], "verified": True}


def test_dask_worker_restart_is_counted(tmp_path):
    # Dask's nanny restarts a worker that died and reschedules its tasks by itself; the
    # summary must say so ("0 resubmitted" after a restart was the defect)
    distributed = pytest.importorskip("distributed")
    from workbench.sweep import Journal, grid_points, run_points

    points = grid_points([("t", np.linspace(0.0, 1.0, 9))])  # t = 0.5 is a grid point
    with distributed.LocalCluster(n_workers=1, processes=True, threads_per_worker=1,
                                  dashboard_address=None, silence_logs=50) as cluster:
        outcome = run_points(points, functools.partial(_dying_point, str(tmp_path)),
                             Journal(tmp_path / "p.jsonl", "d"), scheduler=cluster.scheduler_address,
                             chunk_size=2, progress=False)
    assert (tmp_path / "died-once").exists()  # the worker really died
    assert outcome.complete and outcome.failed == 0
    assert outcome.retried >= 2  # at least the chunk of two points that was running
