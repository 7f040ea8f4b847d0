"""The sweep engine: process pool, Dask, resuming from the journal, retrying dead workers.

The engine is tested with cheap stand-in point functions (closed forms), so
these tests check scheduling and bookkeeping, not the equilibrium solver; a
real equilibrium sweep at reduced size runs in tests/workbench/test_cases_shipped.py.
"""

from __future__ import annotations

import functools
import json
import math
import os
from pathlib import Path

import numpy as np
import pytest

from workbench.sweep import Journal, assemble, grid_points, run_points


def smooth_point(params):
    """Stand-in: a closed form of the two parameters."""
    t, s = params["t"], params.get("s", 0.0)
    return {"bands": 1 + int(t > 1.0), "lagrange": math.cos(t) + s, "energy": t * s,
            "support": [[-1.0, 1.0]], "omega": [], "verified": True}


def dying_point(marker_dir, params):
    """Dies (os._exit, as a segfault would) the first time it sees t == 0.5."""
    if params["t"] == 0.5:
        marker = Path(marker_dir) / "died-once"
        if not marker.exists():
            marker.write_text("x")
            os._exit(7)
    return smooth_point(params)


def always_dying_point(params):
    if params["t"] == 0.5:
        os._exit(9)
    return smooth_point(params)


def raising_point(params):
    if params["t"] > 0.7:
        raise ValueError("no convergence here")
    return smooth_point(params)


def _grid(nt=6, ns=4):
    return grid_points([("t", np.linspace(0.0, 1.0, nt)), ("s", np.linspace(0.0, 1.0, ns))])


def _expected(points):
    return {i: smooth_point(p) for i, p in enumerate(points)}


def test_pool_computes_every_point(tmp_path):
    points = _grid()
    journal = Journal(tmp_path / "points.jsonl", digest="abc")
    outcome = run_points(points, smooth_point, journal, workers=2, progress=False)
    assert outcome.complete and outcome.computed == len(points) and outcome.failed == 0
    for i, p in enumerate(points):
        assert outcome.results[i]["lagrange"] == pytest.approx(math.cos(p["t"]) + p["s"])


def test_resume_after_budget_stop_recomputes_nothing_finished(tmp_path):
    points = _grid()
    path = tmp_path / "points.jsonl"
    first = run_points(points, smooth_point, Journal(path, "abc"), workers=2, budget=10,
                       progress=False)
    assert first.computed == 10 and not first.complete
    second = run_points(points, smooth_point, Journal(path, "abc"), workers=2, progress=False)
    assert second.reused == 10
    assert second.computed == len(points) - 10
    assert second.complete
    third = run_points(points, smooth_point, Journal(path, "abc"), workers=2, progress=False)
    assert third.computed == 0 and third.reused == len(points)
    assert {k: v["lagrange"] for k, v in third.results.items()} == pytest.approx(
        {k: v["lagrange"] for k, v in _expected(points).items()})


def test_torn_journal_line_is_ignored(tmp_path):
    points = _grid(3, 2)
    path = tmp_path / "points.jsonl"
    run_points(points, smooth_point, Journal(path, "abc"), workers=1, budget=3, progress=False)
    with open(path, "a") as stream:  # what SIGKILL in the middle of a write leaves
        stream.write('{"id": 4, "result": {"bands": ')
    journal = Journal(path, "abc")
    assert sorted(journal.results) == [0, 1, 2]
    outcome = run_points(points, smooth_point, journal, workers=1, progress=False)
    assert outcome.complete and outcome.computed == 3
    lines = path.read_text().splitlines()
    assert all(json.loads(line) for line in lines if not line.startswith('{"id": 4, "result": {"bands": '))


def test_journal_of_another_case_is_set_aside(tmp_path):
    points = _grid(2, 2)
    path = tmp_path / "points.jsonl"
    run_points(points, smooth_point, Journal(path, "case-one"), workers=1, progress=False)
    outcome = run_points(points, smooth_point, Journal(path, "case-two"), workers=1,
                         progress=False)
    assert outcome.reused == 0 and outcome.computed == 4
    assert len(list(tmp_path.glob("points.other-*.jsonl"))) == 1


def test_dead_worker_is_retried_and_sweep_completes(tmp_path):
    points = grid_points([("t", np.linspace(0.0, 1.0, 9))])  # t = 0.5 is a grid point
    function = functools.partial(dying_point, str(tmp_path))
    outcome = run_points(points, function, Journal(tmp_path / "p.jsonl", "d"), workers=2,
                         chunk_size=2, progress=False)
    assert (tmp_path / "died-once").exists()  # the worker really died once
    assert outcome.complete and outcome.failed == 0
    assert outcome.retried >= 1
    assert outcome.results[4]["lagrange"] == pytest.approx(math.cos(0.5))


def test_point_that_always_kills_its_worker_is_recorded_failed(tmp_path):
    points = grid_points([("t", np.linspace(0.0, 1.0, 5))])
    outcome = run_points(points, always_dying_point, Journal(tmp_path / "p.jsonl", "d"),
                         workers=2, chunk_size=1, retries=1, progress=False)
    assert outcome.complete
    assert outcome.results[2]["error_kind"] == "WorkerDied"
    assert outcome.failed == 1  # only the culprit; its co-runners were rerun and finished
    grids = assemble(outcome.results, (5,))
    assert grids["bands"][2] == -1 and "WorkerDied" in grids["errors"][2]


def test_exception_in_point_is_recorded_not_fatal(tmp_path):
    points = grid_points([("t", np.linspace(0.0, 1.0, 5))])
    outcome = run_points(points, raising_point, Journal(tmp_path / "p.jsonl", "d"), workers=1,
                         progress=False)
    assert outcome.complete and outcome.failed == 2
    assert outcome.results[4] == {"error": "no convergence here", "error_kind": "ValueError"}


def test_dask_local_cluster(tmp_path):
    distributed = pytest.importorskip("distributed")
    points = _grid(4, 3)
    with distributed.LocalCluster(n_workers=1, processes=False, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        outcome = run_points(points, smooth_point, Journal(tmp_path / "p.jsonl", "d"),
                             scheduler=cluster.scheduler_address, progress=False, budget=5)
        assert outcome.computed == 5
        outcome = run_points(points, smooth_point, Journal(tmp_path / "p.jsonl", "d"),
                             scheduler=cluster.scheduler_address, progress=False)
    assert outcome.complete and outcome.reused == 5 and outcome.computed == 7
    for i, p in enumerate(points):
        assert outcome.results[i]["energy"] == pytest.approx(p["t"] * p["s"])


def test_unreachable_scheduler_is_input_error(tmp_path):
    from equilibrium.errors import InputError

    with pytest.raises(InputError, match="cannot reach the Dask scheduler"):
        run_points(_grid(2, 2), smooth_point, Journal(tmp_path / "p.jsonl", "d"),
                   scheduler="tcp://127.0.0.1:1", progress=False, scheduler_timeout=1.0)


def test_assemble_shapes():
    points = _grid(3, 2)
    results = _expected(points)
    grids = assemble(results, (3, 2))
    assert grids["bands"].shape == (3, 2)
    assert grids["support"].shape == (3, 2, 1, 2)
    assert grids["lagrange"][1, 1] == pytest.approx(math.cos(0.5) + 1.0)


def test_cli_sweep_resumes_after_budget(tmp_path, capsys):
    """`workbench sweep` on the shipped quartic family at reduced size, stopped and resumed."""
    from workbench.case import shipped_case
    from workbench.cli import main

    case = str(shipped_case("sweep_quartic"))
    out = str(tmp_path / "out")
    assert main(["sweep", case, "--reduced", "--out", out, "--workers", "1", "--budget", "7",
                 "--no-figures", "--quiet"]) == 0
    first = capsys.readouterr().out
    assert "7 point(s) computed, 0 taken from the journal" in first and "sweep incomplete" in first
    assert main(["sweep", case, "--reduced", "--out", out, "--workers", "1", "--no-figures",
                 "--quiet"]) == 0
    second = capsys.readouterr().out
    assert "23 point(s) computed, 7 taken from the journal, 0 failed" in second
    assert "30 points; 1 band(s):" in second
    assert main(["sweep", case, "--out", out, "--workers", "0"]) == 2


def test_dask_worker_restart_is_counted(tmp_path):
    # Dask's nanny restarts a worker that died and reschedules its tasks by itself; the
    # summary must say so ("0 resubmitted" after a restart was the defect)
    distributed = pytest.importorskip("distributed")
    points = grid_points([("t", np.linspace(0.0, 1.0, 9))])  # t = 0.5 is a grid point
    with distributed.LocalCluster(n_workers=1, processes=True, threads_per_worker=1,
                                  dashboard_address=None, silence_logs=50) as cluster:
        outcome = run_points(points, functools.partial(dying_point, str(tmp_path)),
                             Journal(tmp_path / "p.jsonl", "d"), scheduler=cluster.scheduler_address,
                             chunk_size=2, progress=False)
    assert (tmp_path / "died-once").exists()  # the worker really died
    assert outcome.complete and outcome.failed == 0
    assert outcome.retried >= 2  # at least the chunk of two points that was running


def test_transitions_are_located_on_the_grid_edges(tmp_path):
    # x^4/4 - t x^2/2 + s x at s = 0: the one-band density (x^2 + b^2/2 - t) sqrt(b^2 - x^2)/(2 pi)
    # with 3 b^4/16 - t b^2/4 = 1 (normalisation, derived by hand) vanishes at x = 0 when
    # b^2 = 2t, i.e. t = 2 (common practice; the symmetric quartic splits at t = 2).
    from workbench.case import load_case, shipped_case
    from workbench.results import read_run
    from workbench.sweep import sweep_case, transition_edges

    case = load_case(shipped_case("sweep_quartic"), reduced=True)
    result = sweep_case(case, tmp_path / "out", workers=1, progress=False, draw=False)
    grid = read_run(result.path).groups["grid"]
    bands = np.asarray(grid.get("bands"))
    located = np.asarray(grid.get("transition_t"))
    assert located.shape == (bands.shape[0] - 1, bands.shape[1])
    edges = transition_edges(bands)
    assert grid.attrs["transitions_located"] == len(edges) > 0 and grid.attrs["transitions_failed"] == 0
    s = np.asarray(grid.get("axis_s"))
    (i,) = np.nonzero(np.isfinite(located[:, 0]))
    assert s[0] == 0.0 and abs(located[i[0], 0] - 2.0) < 1e-8
    t = np.asarray(grid.get("axis_t"))
    finite = np.isfinite(located)
    rows = np.nonzero(finite)[0]
    assert np.all(t[rows] < located[finite]) and np.all(located[finite] < t[rows + 1])  # inside its edge
    # the grid axes are dimension scales of the grid quantities (labelled dimensions for netCDF readers)
    import h5py

    with h5py.File(result.path, "r") as f:
        labels = [[axis[0].name for axis in list(f[f"grid/{name}"].dims)[:2]] for name in ("bands", "omega")]
        assert labels == [["/grid/axis_t", "/grid/axis_s"]] * 2
        assert f["grid/transition_t"].dims[1][0].name == "/grid/axis_s"   # one fewer t: a dimension of its own
    # resumable: a second call takes every located transition from the journal
    again = sweep_case(case, tmp_path / "out", workers=1, progress=False, draw=False)
    np.testing.assert_array_equal(np.asarray(read_run(again.path).groups["grid"].get("transition_t")), located)
