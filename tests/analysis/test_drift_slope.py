"""Drift slope and its honest standard error."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.drift import slope_se
from livefix.analysis.position import PositionStats
from livefix.geodesy import LocalFrame
from livefix.state.epoch import Epoch

T0 = 1.8e9


def test_slope_and_se_match_linregress_on_white_noise() -> None:
    rng = np.random.default_rng(31)
    t = np.arange(3600.0)
    y = 2e-5 * t + rng.normal(0, 0.01, t.size)
    b, se = slope_se(t, y)
    ref = stats.linregress(t, y)  # reference: scipy.stats.linregress (OLS slope and its SE)
    assert math.isclose(b, ref.slope, rel_tol=1e-9)
    assert 1.0 <= se / ref.stderr < 1.2  # white noise: lag-1 inflation close to 1
    assert abs(b - 2e-5) < 3 * se


def test_se_inflated_for_autocorrelated_noise() -> None:
    rng = np.random.default_rng(32)
    rho, m = 0.9, 20000
    w = rng.normal(0, 1, m)
    x = np.empty(m)
    x[0] = w[0]
    for i in range(1, m):
        x[i] = rho * x[i - 1] + w[i]
    t = np.arange(m, dtype=float)
    _, se = slope_se(t, x)
    ref = stats.linregress(t, x).stderr
    # AR(1) variance factor (1 + rho) / (1 - rho) on the SE of a mean/slope (common practice)
    assert abs(se / ref - math.sqrt((1 + rho) / (1 - rho))) < 0.4


def test_position_stats_recovers_north_trend_within_se() -> None:
    rng = np.random.default_rng(33)
    frame = LocalFrame(40.0, -100.0, 500.0)
    ps = PositionStats(AnalysisConfig(ref=(40.0, -100.0, 500.0)), lambda ev: None)
    rate = 0.1 / 3600.0  # 100 mm/h north, invented test trend
    for i in range(7200):
        lat, lon, h = frame.geodetic(rng.normal(0, 0.005), rate * i + rng.normal(0, 0.005), rng.normal(0, 0.01))
        ps.on_epoch(Epoch(mono=i, wall=T0 + i, utc=T0 + i, quality=4, lat=lat, lon=lon, h=h))
    s = ps.snapshot()
    d, se = s["drift_mm_per_h"], s["drift_se_mm_per_h"]
    assert se["n"] > 0 and abs(d["n"] - 100.0) < 3 * se["n"]  # recovered within 3 SE
    assert abs(d["e"]) < 3 * se["e"] + 0.5 and abs(d["u"]) < 3 * se["u"] + 0.5
    assert abs(s["drift_window_mm_per_h"]["n"] - 100.0) < 30.0  # 10 min window: noisier
