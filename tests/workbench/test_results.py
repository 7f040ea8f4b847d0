"""HDF5 layout: round trip, self-description read with plain h5py, atomic replacement, partials."""

from __future__ import annotations

import json
import re

import h5py
import os
import subprocess
import sys
import numpy as np
import pytest

from equilibrium.errors import InputError
from workbench.results import (
    Group,
    load_partials,
    partial_path,
    provenance,
    read_run,
    remove_stale_temporaries,
    write_partial,
    write_run,
)


def _tree() -> Group:
    tree = Group(attrs={"case_name": "t"})
    tree.attrs.update(provenance("[case]\nname = 't'\n", "cases/t.toml", {"n": [10, 20]},
                                 {"total": 1.5}))
    eq = tree.group("equilibrium")
    eq.attrs.update({"kind": "positive", "lagrange": 1.0, "checks": {"mass": 1e-15}})
    eq.add("support", np.array([[-2.0, 2.0]]), "bands [a_j, b_j]")
    eq.add("edges", np.array([["soft", "soft"]], dtype=object), "edge kinds")
    d = tree.group("direct/n_00010")
    d.attrs["n"] = 10
    d.add("a", np.sqrt(np.arange(13) / 10.0), "a_k^{(n)}")
    big = tree.group("comparison")
    big.add("grid", np.linspace(0, 1, 1000), "a long array (compressed)")
    big.add("flags", np.array([True, False]), "booleans")
    return tree


def test_round_trip(tmp_path):
    path = write_run(tmp_path / "run.h5", _tree())
    back = read_run(path)
    assert back.attrs["format"] == "workbench-run"
    np.testing.assert_array_equal(back.get("equilibrium/support"), [[-2.0, 2.0]])
    assert back.get("equilibrium/edges").tolist() == [["soft", "soft"]]
    np.testing.assert_allclose(back.get("direct/n_00010/a"), np.sqrt(np.arange(13) / 10.0))
    assert back.groups["direct"].groups["n_00010"].attrs["n"] == 10
    assert json.loads(back.groups["equilibrium"].attrs["checks"]) == {"mass": 1e-15}
    assert back.get("comparison/flags").tolist() == [True, False]
    assert back.get("comparison/grid").shape == (1000,)


def test_plain_h5py_reads_a_self_describing_file(tmp_path):
    # only h5py and json: no project code is needed to understand the file
    path = write_run(tmp_path / "run.h5", _tree())
    with h5py.File(path, "r") as f:
        assert f.attrs["format"] == "workbench-run"
        assert "conventions" in f.attrs
        assert f.attrs["workbench_version"]
        versions = json.loads(f.attrs["library_versions"])
        assert {"numpy", "scipy", "h5py", "mpmath", "matplotlib"} <= set(versions)
        assert versions["numpy"] == np.__version__
        assert f.attrs["case_text"].startswith("[case]")
        assert json.loads(f.attrs["parameters"]) == {"n": [10, 20]}
        assert json.loads(f.attrs["timings_s"]) == {"total": 1.5}
        if "git_commit" in f.attrs:  # present only inside a repository with a commit
            assert re.fullmatch(r"[0-9a-f]{40}", f.attrs["git_commit"])
        described = []
        f.visititems(lambda name, node: described.append(
            (name, "description" in node.attrs)) if isinstance(node, h5py.Dataset) else None)
        assert described and all(ok for _, ok in described), described
        assert f["equilibrium/edges"].asstr()[0, 0] == "soft"


def test_failed_write_keeps_previous_file(tmp_path):
    path = tmp_path / "run.h5"
    write_run(path, _tree())
    before = path.read_bytes()

    class Boom(Group):
        @property
        def datasets(self):  # noqa: D401 - raises halfway through writing
            raise KeyboardInterrupt

        @datasets.setter
        def datasets(self, value):
            pass

    bad = _tree()
    bad.groups["broken"] = Boom()
    with pytest.raises(KeyboardInterrupt):
        write_run(path, bad)
    assert path.read_bytes() == before
    assert not list(tmp_path.glob("*.tmp"))


def test_partials_are_tied_to_the_case_digest(tmp_path):
    node = Group(attrs={"n": 10})
    node.add("a", np.ones(3), "a")
    write_partial(tmp_path, 10, node, "digest-1")
    write_partial(tmp_path, 20, node, "digest-2")
    found = load_partials(tmp_path, "digest-1", [10, 20, 30])
    assert sorted(found) == [10]
    np.testing.assert_array_equal(found[10].get("a"), np.ones(3))
    assert partial_path(tmp_path, 10).name == "n_00010.h5"


def _dead_pid() -> int:
    """The process id of a child that has exited (not reused within a test, common practice)."""
    child = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    return int(child.stdout)


def test_stale_temporaries_are_removed(tmp_path):
    (tmp_path / "partial").mkdir()
    dead = _dead_pid()
    stale = [tmp_path / f"run.h5.workbench-{dead}-abc123.tmp",
             tmp_path / "partial" / f"n_00010.h5.workbench-{dead}-x1.tmp"]
    for p in stale:
        p.write_bytes(b"half a file")
    # the user's own files, a name the workbench does not own, and the temporary of a live
    # process (a run still writing into the same folder) are left alone
    keep = [tmp_path / "notes.txt", tmp_path / "data.h5.backup.tmp", tmp_path / "run.h5.abc123.tmp",
            tmp_path / f"run.h5.workbench-{os.getppid()}-live.tmp", tmp_path / "run.h5.workbench-x1-y.tmp"]
    for p in keep:
        p.write_text("keep")
    assert sorted(remove_stale_temporaries(tmp_path)) == sorted(stale)
    assert all(p.exists() for p in keep) and not any(p.exists() for p in stale)


def test_reading_a_foreign_file_is_input_error(tmp_path):
    path = tmp_path / "other.h5"
    with h5py.File(path, "w") as f:
        f["x"] = 1
    with pytest.raises(InputError, match="not a workbench file"):
        read_run(path)
    (tmp_path / "junk.h5").write_bytes(b"not hdf5")
    with pytest.raises(InputError, match="cannot read"):
        read_run(tmp_path / "junk.h5")
