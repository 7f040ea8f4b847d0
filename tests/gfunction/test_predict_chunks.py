"""Predictor.predict takes the degrees in chunks (its memory is that of one chunk): the numbers do not change."""

from __future__ import annotations

import numpy as np

import gfunction.predict as predict_module
from equilibrium import Field, solve
from gfunction import predictor


def test_chunks_do_not_change_the_predictions(monkeypatch):
    pred = predictor(solve(Field.from_expression("x**6/6 - 5*x**4/4 + 4.5*x**2/2 + 0.1*x")))  # three bands
    degrees = np.arange(200, 237)
    whole = pred.predict(degrees)
    monkeypatch.setattr(predict_module, "PREDICT_CHUNK", 10)   # four chunks, the last one short
    chunked = pred.predict(degrees)
    assert whole.verified and chunked.verified
    np.testing.assert_allclose(chunked.a, whole.a, rtol=1e-14, atol=0)
    np.testing.assert_allclose(chunked.b, whole.b, rtol=0, atol=1e-14)
    np.testing.assert_allclose(chunked.gap_zeros, whole.gap_zeros, rtol=0, atol=1e-13)
    np.testing.assert_array_equal(chunked.band_counts, whole.band_counts)
    assert chunked.checks.keys() == whole.checks.keys()
    for key, value in whole.checks.items():   # the worst over the chunks is the worst over all
        np.testing.assert_allclose(chunked.checks[key], value, rtol=1e-6, atol=1e-15)
