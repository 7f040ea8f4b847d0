"""Predictor.predict takes the degrees in chunks (its memory is that of one chunk): the numbers do not change."""

from __future__ import annotations

import numpy as np

import gfunction.outer as outer_module
import gfunction.predict as predict_module
from equilibrium import Field, solve
from gfunction import predictor


def test_chunks_do_not_change_the_predictions(monkeypatch):
    pred = predictor(solve(Field.from_expression("x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x")))  # three bands
    degrees = np.arange(200, 237)
    whole = pred.predict(degrees)
    monkeypatch.setattr(predict_module, "PREDICT_CHUNK", 10)   # four chunks, the last one short
    monkeypatch.setattr(outer_module, "EXPANSION_CHUNK", 10)   # a, b in blocks of phases too
    chunked = pred.predict(degrees)
    assert whole.verified and chunked.verified
    np.testing.assert_allclose(chunked.a, whole.a, rtol=1e-14, atol=0)
    np.testing.assert_allclose(chunked.b, whole.b, rtol=0, atol=1e-14)
    np.testing.assert_allclose(chunked.gap_zeros, whole.gap_zeros, rtol=0, atol=1e-13)
    np.testing.assert_array_equal(chunked.band_counts, whole.band_counts)
    assert chunked.checks.keys() == whole.checks.keys()
    for key, value in whole.checks.items():   # the worst over the chunks is the worst over all
        np.testing.assert_allclose(chunked.checks[key], value, rtol=1e-6, atol=1e-15)


def test_shared_tables_equal_the_pointwise_model():
    """The tables the zeros are found on (one table of phases per chunk shared by every fixed point,
    kept on the predictor between calls) give M_11 as ModelProblem.evaluate does point by point
    (each theta summed on its own, theta.riemann_theta_scaled); a second call and a fresh predictor
    give the same predictions.  Four bands (genus 3).  Measured 6.4e-14 over all 30 degrees, the
    same as main's tables (6.5e-14): the gap grid takes the Abel map from its interpolant
    (outer.gap_abel_map), evaluate from the direct map."""
    field = Field.from_expression("10*((x**2-4)**2*(x**2-1)**2/40 + 0.005*x)")
    measure = solve(field)
    pred = predictor(measure)
    assert pred.genus == 3
    degrees = np.arange(500, 530)
    chunk = next(pred._chunks(degrees, degrees.astype(float)))
    for j in range(pred.genus):
        gap_abel, xs, tab, factor = pred._gap(j)
        table = pred._m11_table((tab, factor), chunk.phases, chunk.c1)
        keep = np.abs(xs[:, None] - np.asarray(pred.model.gap_points)[None, :]).min(axis=1) > 1e-2
        for i in (0, 17, 29):
            direct = pred.model.evaluate(xs[keep] + 0j, chunk.w[i])[..., 0, 0]
            assert np.max(np.abs(table[i, keep] - direct) / (1 + np.abs(direct))) < 1e-13
    first = pred.predict(degrees)
    again = pred.predict(degrees)
    fresh = predictor(measure).predict(degrees)
    for other in (again, fresh):
        for name in ("a", "b", "gap_zeros", "band_counts"):
            np.testing.assert_array_equal(getattr(other, name), getattr(first, name))
