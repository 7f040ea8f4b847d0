"""Killing at other moments than tests/workbench/test_run.py does: early, mid-run over a previous result, mid-write.

tests/workbench/test_run.py kills a run (SIGINT and SIGKILL) after two finished n and
checks the resume.  These tests add the moments it leaves out:

* a rerun of a changed case killed while a *previous complete* ``run.h5``
  is in the folder: the previous file must survive byte for byte;
* a kill early (0.3 s after the start), before any n is finished;
* a writer killed with SIGKILL in the middle of :func:`atomic_file`: the
  destination keeps its previous content, only a ``*.tmp`` is left, and
  the next run removes it.
"""

from __future__ import annotations

import hashlib
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import h5py
import pytest

from workbench.case import load_case
from workbench.pipeline import run_case
from workbench.results import remove_stale_temporaries

CASE = """\
[case]
name = "gauss"
[field]
expression = "x**2/2"
[polynomials]
n = {ns}
value_points = 5
[comparisons]
contour_points = 32
[figures]
enabled = false
"""


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _start(case_path, out):
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    return subprocess.Popen([sys.executable, "-m", "workbench", "run", str(case_path), "--out", str(out),
                             "--quiet", "--no-figures"], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            env=env, text=True)


def _wait(predicate, process, timeout=90.0):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if predicate():
            return
        if process.poll() is not None:
            pytest.fail(f"the run ended before it could be interrupted: {process.stderr.read()}")
        time.sleep(0.01)
    pytest.fail("the moment to interrupt never came")


@pytest.mark.parametrize("how,moment", [(signal.SIGKILL, "early"), (signal.SIGINT, "first n")])
def test_kill_keeps_the_previous_complete_file_and_resumes(tmp_path, how, moment):
    out = tmp_path / "out"
    case_path = tmp_path / "gauss.toml"
    case_path.write_text(CASE.format(ns="[10, 20]"))
    run_case(load_case(case_path), out, progress=False, draw=False)
    previous = _digest(out / "run.h5")

    # the changed case recomputes everything (another digest), so the old run.h5 is at risk
    case_path.write_text(CASE.format(ns="[30, 60, 90, 120, 150, 180]"))
    process = _start(case_path, out)
    if moment == "early":
        # early: 0.3 s after the start, during start-up, before any n is finished
        _wait(lambda: process.poll() is None and time.sleep(0.3) is None, process)
        assert not list((out / "partial").glob("n_00030.h5"))
    else:
        _wait(lambda: (out / "partial" / "n_00030.h5").exists(), process)
    process.send_signal(how)
    _, stderr = process.communicate(timeout=60)
    if how == signal.SIGINT:
        assert process.returncode == 130 and "Traceback" not in stderr
        assert not list(out.rglob("*.tmp"))
    else:
        assert process.returncode == -signal.SIGKILL
    assert _digest(out / "run.h5") == previous        # the previous complete file, untouched
    with h5py.File(out / "run.h5", "r") as f:
        assert list(f["direct"]) == ["n_00010", "n_00020"]

    outcome = run_case(load_case(case_path), out, progress=False, draw=False)
    assert sorted(outcome.computed + outcome.reused) == [30, 60, 90, 120, 150, 180]
    if moment == "first n":
        assert 30 in outcome.reused
    assert not list(out.rglob("*.tmp"))
    with h5py.File(out / "run.h5", "r") as f:
        assert len(f["direct"]) == 6 and f.attrs["verified"]


WRITER = textwrap.dedent("""
    import sys, time
    import numpy as np
    from workbench.hdf5 import atomic_file
    with atomic_file(sys.argv[1]) as handle:
        handle.attrs["version"] = 2
        for i in range(100000):
            handle.create_dataset(f"d{i}", data=np.full(4096, float(i)))
            handle.flush()
            if i == 20:
                print("writing", flush=True)
            time.sleep(0.002)
""")


def test_sigkill_in_the_middle_of_an_atomic_write(tmp_path):
    from workbench.hdf5 import atomic_file

    target = tmp_path / "run.h5"
    with atomic_file(target) as handle:
        handle.attrs["version"] = 1
    before = _digest(target)
    process = subprocess.Popen([sys.executable, "-c", WRITER, str(target)], stdout=subprocess.PIPE,
                               stderr=subprocess.PIPE, text=True)
    assert process.stdout.readline().strip() == "writing", process.stderr.read()
    process.kill()
    process.communicate(timeout=30)
    assert _digest(target) == before                  # previous content, complete
    with h5py.File(target, "r") as f:
        assert f.attrs["version"] == 1
    # the file is built in memory and written out only when complete: no temporary while building
    assert list(tmp_path.glob("*.tmp")) == []
    # a temporary left by SIGKILL during the final os.write (the only moment one exists) is cleared
    leftover = tmp_path / f"run.h5.workbench-{process.pid}-abc123.tmp"   # the killed writer's own name
    leftover.write_bytes(b"partial")
    assert remove_stale_temporaries(tmp_path) == [leftover] and not list(tmp_path.glob("*.tmp"))


def _descendants(pid: int) -> set[int]:
    """Every live process below ``pid``, from the parent ids in /proc (Linux; common practice)."""
    children: dict[int, list[int]] = {}
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat_text = (entry / "stat").read_text()
            except OSError:
                continue
            parent = int(stat_text.rsplit(")", 1)[1].split()[1])
            children.setdefault(parent, []).append(int(entry.name))
    found, todo = set(), [pid]
    while todo:
        for child in children.get(todo.pop(), []):
            if child not in found:
                found.add(child)
                todo.append(child)
    return found


def _alive(pid: int) -> bool:
    try:
        stat_text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat_text.rsplit(")", 1)[1].split()[0] != "Z"     # a zombie has ended


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads process parents from /proc")
def test_sigterm_to_a_sweep_ends_its_workers(tmp_path):
    # SIGTERM is handled like Ctrl-C: exit 143, one line, no temporary, and no worker left behind
    case = tmp_path / "long.toml"
    case.write_text("\n".join(['[case]', 'name = "long"', '[field]', 'expression = "x**4/4 - t*x**2/2"',
                               'parameters = { t = 1.0 }', '[[sweep.axis]]', 'name = "t"', 'start = -1.0',
                               'stop = 3.0', 'num = 2000', '[figures]', 'enabled = false']) + "\n")
    out = tmp_path / "out"
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    process = subprocess.Popen([sys.executable, "-m", "workbench", "sweep", str(case), "--out", str(out),
                                "--workers", "2"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                               env=env)
    journal = out / "points.jsonl"
    # the pool is up (forkserver and workers below the sweep) and points are being recorded
    _wait(lambda: len(_descendants(process.pid)) >= 2 and journal.exists()
          and journal.read_text().count("\n") >= 3, process)
    workers = _descendants(process.pid)
    process.send_signal(signal.SIGTERM)
    _, stderr = process.communicate(timeout=60)
    assert process.returncode == 143, stderr
    assert "Traceback" not in stderr and stderr.strip().splitlines()[-1].endswith("terminated (SIGTERM)")
    deadline = time.monotonic() + 10
    while any(_alive(pid) for pid in workers) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert not [pid for pid in workers if _alive(pid)], "workers outlived the sweep"
    assert not list(out.rglob("*.tmp"))
