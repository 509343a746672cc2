"""Overlapping Allan deviation against allantools.oadev on the same series."""

from __future__ import annotations

import allantools
import numpy as np

from livefix.analysis.allan import oadev, octave_m
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.position import PositionStats
from livefix.analysis.streaming import PairHistory
from livefix.geodesy import LocalFrame
from livefix.state.epoch import Epoch

T0 = 1.8e9


def _slope(taus: list[float], devs: list[float]) -> float:
    return float(np.polyfit(np.log(taus), np.log(devs), 1)[0])


def test_oadev_matches_allantools_white_and_random_walk() -> None:
    rng = np.random.default_rng(21)
    white = rng.normal(0, 1.0, 4096)
    walk = np.cumsum(rng.normal(0, 0.1, 4096))
    for y in (white, walk):
        ms = octave_m(y.size)
        ours = oadev(y, 0.5, ms)
        # reference: allantools.oadev, frequency-type data, rate = 1 / tau0
        t2, ad, _, _ = allantools.oadev(y, rate=2.0, data_type="freq", taus=[m * 0.5 for m in ms])
        assert np.allclose(t2, [m * 0.5 for m in ms])
        assert np.allclose(ours, ad, rtol=1e-9)


def test_allan_slopes_white_minus_half_walk_plus_half() -> None:
    rng = np.random.default_rng(22)
    ms = [1, 2, 4, 8, 16, 32, 64]
    w = oadev(rng.normal(0, 1.0, 16384), 1.0, ms)
    r = oadev(np.cumsum(rng.normal(0, 1.0, 16384)), 1.0, ms)
    # IEEE Std 1139 (from memory): white noise slope -1/2, random walk +1/2 on the log-log plot
    assert abs(_slope(ms, w) + 0.5) < 0.05
    assert abs(_slope(ms, r) - 0.5) < 0.15


def test_pair_history_is_block_mean_and_bounded() -> None:
    h = PairHistory(64, 1)
    x = np.arange(1000, dtype=float)
    for v in x:
        h.add((v,))
    a = h.array()[:, 0]
    assert h.n < 64 and h.factor == 16  # 1000 samples into 64 rows: smallest power of 2 with 1000/f < 64
    k = h.factor
    ref = x[: a.size * k].reshape(-1, k).mean(axis=1)  # numpy block means of the raw series
    assert np.allclose(a, ref)


def test_position_stats_allan_equals_allantools_on_fed_series() -> None:
    rng = np.random.default_rng(23)
    frame = LocalFrame(-35.0, 140.0, 50.0)
    ps = PositionStats(AnalysisConfig(ref=(-35.0, 140.0, 50.0)), lambda ev: None)
    n = 3000
    e, nn, u = rng.normal(0, 1, n), rng.normal(0, 1, n), rng.normal(0, 2, n)
    for i in range(n):
        lat, lon, h = frame.geodetic(e[i], nn[i], u[i])
        ps.on_epoch(Epoch(mono=i, wall=T0 + i, utc=T0 + i, quality=4, lat=lat, lon=lon, h=h))
    al = ps.snapshot()["allan"]
    taus = al["tau_s"]
    assert taus[0] == 1.0 and taus[-1] <= n / 3
    _, ref, _, _ = allantools.oadev(e, rate=1.0, data_type="freq", taus=taus)  # reference: allantools
    assert np.allclose(al["e"], ref, rtol=1e-3)
    _, ref_u, _, _ = allantools.oadev(u, rate=1.0, data_type="freq", taus=taus)
    assert np.allclose(al["u"], ref_u, rtol=1e-3)
