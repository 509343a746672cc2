"""Decimated trend: bounded points, exact bucket means, weighted means preserved through merges."""

from __future__ import annotations

import numpy as np
import pytest

from livefix.analysis.trend import Trend


def test_bounded_and_mean_preserved() -> None:
    tr = Trend()
    rng = np.random.default_rng(2)
    vals = rng.normal(3.0, 1.0, 50_000)
    for i, v in enumerate(vals):
        tr.add(i * 0.5, None, h_err_m=float(v), cn0_mean=40.0, sats_used=12)
    snap = tr.snapshot()
    assert 300 <= len(snap["t"]) <= 600
    assert snap["bucket_s"] > 1.0
    # Each point is a bucket mean and buckets are equal width: the mean of the points equals the
    # numpy mean of all samples within the partial-last-bucket effect.
    assert float(np.mean(snap["h_err_m"])) == pytest.approx(float(np.mean(vals)), abs=0.02)
    assert set(snap["cn0_mean"]) == {40.0}
    assert snap["t"] == sorted(snap["t"])


def test_missing_values_stay_none() -> None:
    tr = Trend()
    for i in range(10):
        tr.add(float(i), "2026-12-02T00:00:00.000Z", h_err_m=None, cn0_mean=float(i), sats_used=None)
    snap = tr.snapshot()
    assert snap["h_err_m"] == [None] * 10 and snap["cn0_mean"] == [float(i) for i in range(10)]
    assert snap["t0"] == "2026-12-02T00:00:00.000Z" and snap["t"][0] == 0.0


def test_bucket_mean_exact_against_numpy() -> None:
    tr = Trend(max_points=4, width_s=1.0)
    xs = [1.0, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0, 128.0, 256.0]
    for i, x in enumerate(xs):
        tr.add(float(i), None, h_err_m=x)
    snap = tr.snapshot()
    # width doubled to 4 s after t = 8: buckets [0-3], [4-7], [8]; numpy means of each
    assert snap["h_err_m"] == [float(np.mean(xs[0:4])), float(np.mean(xs[4:8])), 256.0]
