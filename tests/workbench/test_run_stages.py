"""The stages of a run: the model stage reports its progress and is kept for a resume.

The reference numbers are the run's own: a resumed run must give, bit for bit, what an
uninterrupted run gives (the Gaussian case of tests/workbench/test_run.py, whose values are
checked there against the Hermite closed forms, DLMF 18.9.1).
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench import pipeline
from workbench.case import parse_case
from workbench.pipeline import model_steps, run_case


class _Recorder:
    def __init__(self, total, initial, description, unit, progress):
        self.total, self.count, self.description, self.closed = total, initial, description, False

    def update(self, k=1):
        self.count += k

    def close(self):
        self.closed = True


@pytest.fixture
def two_n(case_text):
    return parse_case(case_text(n=(10, 12), comparisons=["contour_points = 16"]), source="gauss.toml")


def test_model_stage_has_a_progress_bar(tmp_path, monkeypatch, two_n):
    bars = []
    monkeypatch.setattr(pipeline, "_bar", lambda *args: bars.append(_Recorder(*args)) or bars[-1])
    run_case(two_n, tmp_path / "out", progress=True, draw=False)
    model, direct = bars
    assert model.description.endswith(": model") and model.total == model_steps([10, 12]) == 11
    assert model.count == model.total and model.closed
    assert direct.description.endswith(": direct") and direct.count == direct.total == 2


def test_resume_reads_the_model_stage(tmp_path, monkeypatch, two_n):
    whole = run_case(two_n, tmp_path / "whole", progress=False, draw=False)

    def stop(n):
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_case(two_n, tmp_path / "out", progress=False, draw=False, after_each_n=stop)
    assert (tmp_path / "out" / "partial" / "model.h5").exists()

    def recomputed(*args, **kwargs):
        raise AssertionError("the model stage was computed again")

    monkeypatch.setattr(pipeline, "model_predictions", recomputed)
    resumed = run_case(two_n, tmp_path / "out", progress=False, draw=False)
    assert resumed.model_reused and resumed.reused == (10,) and resumed.computed == (12,)
    assert resumed.verified, resumed.messages
    for key in ("err_a", "small_norm", "err_log_hankel", "err_zeros_bulk", "err_values"):
        np.testing.assert_array_equal(resumed.tree.get(f"comparison/{key}"), whole.tree.get(f"comparison/{key}"))
    # another case text: the stored model is not used
    other = parse_case(two_n.text.replace("value_points = 5", "value_points = 6"), source="other.toml")
    monkeypatch.undo()
    assert not run_case(other, tmp_path / "out", progress=False, draw=False).model_reused


def test_direct_stage_on_workers_gives_the_serial_numbers(tmp_path, two_n):
    serial = run_case(two_n, tmp_path / "serial", progress=False, draw=False)
    pooled = run_case(two_n, tmp_path / "pool", progress=False, draw=False, workers=2)
    assert pooled.verified and pooled.computed == (10, 12)
    for key in ("a_direct", "err_a", "small_norm", "log_hankel_direct", "err_zeros_bulk", "err_values"):
        np.testing.assert_array_equal(pooled.tree.get(f"comparison/{key}"), serial.tree.get(f"comparison/{key}"))
    assert not list((tmp_path / "pool" / "partial").glob("*.jsonl"))   # the pool's journal is removed


def test_run_workers_refused(tmp_path, capsys):
    from workbench.case import shipped_case
    from workbench.cli import main

    case = str(shipped_case("one_band_quartic"))
    assert main(["run", case, "--workers", "0"]) == 2
    assert "--workers 0 must be >= 1" in capsys.readouterr().err
    assert main(["run", case, "--scheduler", "localhost"]) == 2
    assert "tcp://" in capsys.readouterr().err
