"""Convergence time on constructed epoch sequences."""

from __future__ import annotations

import math

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.convergence import Tracker, first_hold
from livefix.analysis.position import PositionStats
from livefix.geodesy import LocalFrame
from livefix.state.epoch import Epoch

REF = (50.0, 0.0, 10.0)
T0 = 1.8e9


def _run(errors_h: list[float], quality: int = 1, errors_v: list[float] | None = None) -> dict:
    frame = LocalFrame(*REF)
    ps = PositionStats(AnalysisConfig(ref=REF), lambda ev: None)
    for i, eh in enumerate(errors_h):
        ev = errors_v[i] if errors_v else 0.0
        lat, lon, h = frame.geodetic(eh, 0.0, ev)
        ps.on_epoch(Epoch(mono=i, wall=T0 + i, utc=T0 + i, quality=quality if eh == eh else 0,
                          lat=lat, lon=lon, h=h))
    return ps.snapshot()


def test_first_hold_and_tracker_agree() -> None:
    t = np.arange(300.0)
    inside = (t >= 100) & ~((t >= 130) & (t < 135))
    # constructed: first spell 100..129 is shorter than 60 s, the next from 135 holds
    assert first_hold(t, inside, 60.0) == 135.0
    trk = Tracker(60.0)
    for ti, ok in zip(t, inside, strict=True):
        trk.add(float(ti), bool(ok))
    assert trk.done == 135.0
    assert first_hold(t, np.zeros(300, bool), 60.0) is None


def test_exponential_settling_of_single_fix() -> None:
    # error 20 m decaying with a 60 s time constant; single threshold 5 m (config default)
    err = [20.0 * math.exp(-i / 60.0) for i in range(400)]
    expect = math.ceil(60.0 * math.log(20.0 / 5.0))  # first whole second with error <= 5 m: 84
    s = _run(err, errors_v=[0.0] * 400)
    assert abs(s["convergence_s"] - expect) <= 1
    assert s["convergence_v_s"] == 0.0


def test_never_converges_and_outage_breaks_the_spell() -> None:
    s = _run([8.0] * 300)
    assert s["convergence_s"] is None
    err = [1.0] * 50 + [float("nan")] * 3 + [1.0] * 200  # three no-fix epochs at 50..52
    s = _run(err)
    assert s["convergence_s"] == 53.0  # the first 50 s spell is too short for the 60 s hold


def test_convergence_centre_is_robust_to_a_jump_without_reference() -> None:
    frame = LocalFrame(*REF)
    ps = PositionStats(AnalysisConfig(), lambda ev: None)
    for i in range(1000):  # RTK fixed from the start, 5 m jump for 100 s in the middle
        e = 5.0 if 500 <= i < 600 else 0.001 * (i % 3)
        lat, lon, h = frame.geodetic(e, 0.0, 0.0)
        ps.on_epoch(Epoch(mono=i, wall=T0 + i, utc=T0 + i, quality=4, lat=lat, lon=lon, h=h))
    # a mean centre would sit 0.5 m off and never converge within 5 cm; the median does at once
    assert ps.snapshot()["convergence_s"] == 0.0
