"""Signal quality: curve fit, weak satellites and broadband (interference) drops on constructed epochs."""

from __future__ import annotations

import math

import numpy as np
import pytest

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.signal import SignalStats
from livefix.state.epoch import Epoch, Event, SatObs

SKY = [(i + 1, 10 + 8 * i, (37 * i) % 360) for i in range(10)]  # prn, elev, azim


def _cn0(el: float) -> float:
    return 30.0 + 15.0 * math.sin(math.radians(el))


def _ep(t: float, cn0s: dict[int, float | None]) -> Epoch:
    sats = tuple(SatObs("G", p, "", el, az, None if cn0s[p] is None else int(round(cn0s[p])), True)
                 for p, el, az in SKY)
    return Epoch(mono=t, wall=1.8e9 + t, utc=1.8e9 + t, quality=1, sats=sats)


def _run(drop_fn, seconds: int = 240, seed: int = 1) -> tuple[SignalStats, list[Event]]:
    events: list[Event] = []
    s = SignalStats(AnalysisConfig(), events.append)
    rng = np.random.default_rng(seed)
    for t in range(seconds):
        vals = {}
        for p, el, _ in SKY:
            d = drop_fn(t, p)
            vals[p] = None if d is None else _cn0(el) + rng.normal(0, 0.7) - d
        s.on_epoch(_ep(float(t), vals))
    return s, events


def test_curve_matches_numpy_polyfit() -> None:
    s, _ = _run(lambda t, p: 0.0, seconds=60)
    # numpy.polyfit (degree 1 in sin el) on the same (rounded) samples is the reference
    xs, ys = [], []
    rng = np.random.default_rng(1)
    for _t in range(60):
        for _p, el, _ in SKY:
            xs.append(math.sin(math.radians(el)))
            ys.append(round(_cn0(el) + rng.normal(0, 0.7)))
    b, a = np.polyfit(xs, ys, 1)
    cv = s.snapshot()["curve"]
    assert cv["a"] == pytest.approx(a, abs=1e-3) and cv["b"] == pytest.approx(b, abs=1e-3)
    assert cv["b"] == pytest.approx(15.0, abs=1.0)


def test_weak_satellite_listed() -> None:
    s, _ = _run(lambda t, p: 12.0 if p == 7 and t > 100 else 0.0, seconds=120)
    weak = s.snapshot()["weak"]
    assert [w["sat"] for w in weak] == ["G07"]
    assert weak[0]["expected"] - weak[0]["cn0"] > 8.0


def test_broadband_drop_is_interference() -> None:
    # common practice (NAVITEC 2010, docs/sources.md#interference-indicator): interference lowers
    # C/N0 on all satellites at once, regardless of direction
    s, events = _run(lambda t, p: 10.0 if 120 <= t < 150 else 0.0)
    snap = s.snapshot()
    inter = snap["interference"]
    assert len(inter) == 1 and not inter[0]["ongoing"]
    assert inter[0]["duration_s"] == pytest.approx(30.0, abs=2.0)
    assert inter[0]["drop_db"] == pytest.approx(10.0, abs=1.5)
    assert inter[0]["start"].startswith("2027-01-15T08:02:00")  # 1.8e9 + 120 s
    phases = [e.data["phase"] for e in events if e.kind == "interference"]
    assert phases == ["start", "end"]


def test_partial_loss_of_lock_plus_drop_is_interference() -> None:
    # common practice: a jammer drops C/N0 everywhere and the weakest satellites lose lock
    s, _ = _run(lambda t, p: (None if p <= 4 else 9.0) if 120 <= t < 140 else 0.0)
    inter = s.snapshot()["interference"]
    assert len(inter) == 1 and inter[0]["duration_s"] == pytest.approx(20.0, abs=2.0)


def test_total_loss_is_an_outage_not_interference() -> None:
    # everything lost at once (antenna cable, restart): nothing left to measure a drop on
    s, _ = _run(lambda t, p: None if 120 <= t < 140 else 0.0)
    assert s.snapshot()["interference"] == []


def test_sector_blockage_is_not_interference() -> None:
    # common practice: blockage hits particular directions (3 of 10 satellites here)
    s, events = _run(lambda t, p: 15.0 if 120 <= t < 180 and p in (2, 3, 4) else 0.0)
    assert s.snapshot()["interference"] == []
    assert not [e for e in events if e.kind == "interference"]


def test_slow_change_is_not_interference() -> None:
    s, _ = _run(lambda t, p: 0.01 * t, seconds=600)  # 6 dB over 10 min: baseline follows
    assert s.snapshot()["interference"] == []


def test_means_bands_and_top4() -> None:
    s = SignalStats(AnalysisConfig(), lambda e: None)
    sats = (SatObs("G", 1, "", 15, 0, 30, True), SatObs("G", 2, "", 55, 90, 40, True),
            SatObs("E", 3, "", 85, 180, 50, True), SatObs("E", 4, "", 25, 270, 44, True),
            SatObs("R", 5, "", 5, 300, 20, False), SatObs("R", 6, "", 5, 310, None, False))
    s.on_epoch(Epoch(mono=0, wall=0, utc=None, quality=1, sats=sats))
    snap = s.snapshot()
    assert snap["cn0_mean_dbhz"] == pytest.approx((30 + 40 + 50 + 44 + 20) / 5)
    assert snap["top4_mean_dbhz"] == pytest.approx((50 + 44 + 40 + 30) / 4)
    assert snap["by_system"] == {"E": 47.0, "G": 35.0, "R": 20.0}
    bands = {b["from"]: b["mean"] for b in snap["by_elevation"]}
    assert bands[10] == 30 and bands[80] == 50 and bands[0] == 20 and bands[30] is None
    assert snap["current"]["tracked"] == 5
