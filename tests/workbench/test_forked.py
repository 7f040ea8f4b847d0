"""Work beside the main process (workbench.forked): the value comes back, a failure is the caller's,
no child outlives its caller, and what is computed or drawn in a child is bit for bit what the main
process computes or draws alone (``WORKBENCH_FORK=0``).

Each check runs in a fresh interpreter: a fork is made only by a process with one thread, and the
test process may hold threads of earlier tests.  The reference numbers are the run's own (the
Gaussian case of tests/workbench/test_run.py, whose values are checked there against the Hermite
closed forms, DLMF 18.9.1).
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import time

import h5py
import numpy as np
import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def _python(code: str, env: dict | None = None, timeout: float = 120.0) -> subprocess.CompletedProcess:
    environment = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""),
                       MPLBACKEND="Agg", **(env or {}))
    return subprocess.run([sys.executable, "-c", textwrap.dedent(code)], capture_output=True, text=True,
                          env=environment, cwd=ROOT, timeout=timeout)


pytestmark = pytest.mark.skipif(not hasattr(os, "fork") or len(os.sched_getaffinity(0)) < 2,
                                reason="forks only on POSIX with two usable cores")


def test_value_failure_and_cancel():
    done = _python("""
        import os, time
        from workbench.forked import can_fork, fork_call
        assert can_fork()
        child = fork_call(lambda: (os.getpid(), list(range(100000))))
        pid, values = child.result()
        assert pid != os.getpid() and values == list(range(100000))    # 100000 values: more than a pipe holds
        def broken():
            raise ValueError("computed in the child")
        assert fork_call(broken).result() is None                       # the caller computes it itself
        slow = fork_call(lambda: time.sleep(60))
        start = time.perf_counter()
        slow.cancel()
        assert time.perf_counter() - start < 5
        try:
            os.waitpid(-1, os.WNOHANG)
            raise AssertionError("a child is left")
        except ChildProcessError:
            pass
        print("ok")
    """)
    assert done.stdout.strip() == "ok", done.stderr
    # WORKBENCH_FORK=0: no child, the caller does the work
    off = _python("from workbench.forked import fork_call; print(fork_call(lambda: 1))", {"WORKBENCH_FORK": "0"})
    assert off.stdout.strip() == "None", off.stderr


def test_no_fork_beside_another_thread():
    done = _python("""
        import threading, time
        from workbench.forked import fork_call
        threading.Thread(target=time.sleep, args=(2,), daemon=True).start()
        print(fork_call(lambda: 1))
    """)
    assert done.stdout.strip() == "None", done.stderr


def test_child_dies_with_its_parent(tmp_path):
    marker = tmp_path / "child.pid"
    parent = subprocess.Popen([sys.executable, "-c", textwrap.dedent(f"""
        import os, time
        from workbench.forked import fork_call
        def wait():
            open({str(marker)!r}, "w").write(str(os.getpid()))
            time.sleep(120)
        child = fork_call(wait)
        time.sleep(120)
    """)], env=dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", "")), cwd=ROOT)
    try:
        deadline = time.monotonic() + 60
        while not (marker.exists() and marker.read_text()) and time.monotonic() < deadline:
            time.sleep(0.05)
        child = int(marker.read_text())
        parent.kill()                       # SIGKILL: no finally runs in the parent
        parent.wait(timeout=30)
        deadline = time.monotonic() + 10
        while os.path.exists(f"/proc/{child}") and time.monotonic() < deadline:
            time.sleep(0.05)
        assert not os.path.exists(f"/proc/{child}") or "zombie" in open(f"/proc/{child}/status").read().lower()
    finally:
        if parent.poll() is None:
            parent.kill()


def _run(case_path, out, env):
    done = subprocess.run([sys.executable, "-m", "workbench", "run", str(case_path), "--out", str(out), "--quiet"],
                          capture_output=True, text=True, cwd=ROOT, timeout=300,
                          env=dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""),
                                   MPLBACKEND="Agg", **env))
    assert done.returncode == 0, done.stderr
    return out


def _datasets(path):
    found = {}
    with h5py.File(path) as f:
        f.visititems(lambda name, node: found.__setitem__(name, node[()]) if isinstance(node, h5py.Dataset) else None)
    return found


def test_run_in_children_gives_the_numbers_and_files_of_one_process(tmp_path, case_text):
    case = tmp_path / "gauss.toml"
    case.write_text(case_text(n=(10, 20), comparisons=["contour_points = 16"],
                              figures=['formats = ["png", "pdf"]', "dpi = 100"]))
    alone = _run(case, tmp_path / "alone", {"WORKBENCH_FORK": "0"})
    forked = _run(case, tmp_path / "forked", {})
    one, two = _datasets(alone / "run.h5"), _datasets(forked / "run.h5")
    assert one.keys() == two.keys() and "model/bulk_zeros" in one
    for name in one:
        if np.asarray(one[name]).dtype.kind in "fc":
            np.testing.assert_array_equal(one[name], two[name], err_msg=name)
        else:
            assert np.array_equal(one[name], two[name]), name
    figures = sorted(p.name for p in (alone / "figures").iterdir())
    assert len(figures) >= 6 and figures == sorted(p.name for p in (forked / "figures").iterdir())
    for name in figures:   # PNG and PDF, byte for byte
        assert (alone / "figures" / name).read_bytes() == (forked / "figures" / name).read_bytes(), name
