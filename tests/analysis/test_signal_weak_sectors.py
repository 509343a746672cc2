"""Weak sky sectors (issue 15 item 6): a cell of sky whose C/N0 sits well below the session's
C/N0-vs-elevation curve is reported, with the threshold in the snapshot. Checked against numpy's
least squares on constructed epochs and on the simulator's building recording, whose scenario
scripts a reflecting wall (recordings/README.md; livefix/sim/scenarios/building.toml)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.signal import SignalStats
from livefix.pipeline import run_items
from livefix.record.reader import RecordingReader
from livefix.sim.scenario import Scenario
from livefix.state.epoch import Epoch, SatObs

RECORDINGS = Path(__file__).resolve().parents[2] / "recordings"
# prn, elev, azim: sixteen satellites spread over the sky, low ones all round (as an open sky
# has them; the curve is then fixed by the good ones); prn 3 and 4 sit in az 90-120, el 0-15
SKY = [(1, 70, 10), (2, 45, 200), (3, 8, 100), (4, 12, 110), (5, 30, 300), (6, 55, 150), (7, 20, 250),
       (8, 85, 40), (9, 9, 20), (10, 13, 170), (11, 7, 230), (12, 11, 290), (13, 10, 340), (14, 25, 60),
       (15, 38, 120), (16, 60, 270)]
WEAK = {3, 4}
ATTEN_DB = 7.0


def _cn0(el: float) -> float:
    return 30.0 + 20.0 * math.sin(math.radians(el))  # an open-sky curve, invented for the fixture


def _run(atten: float, seconds: int = 200) -> tuple[SignalStats, np.ndarray, np.ndarray, np.ndarray]:
    s = SignalStats(AnalysisConfig(), lambda ev: None)
    rng = np.random.default_rng(7)
    xs, cs, weak_mask = [], [], []
    for t in range(seconds):
        sats = []
        for p, el, az in SKY:
            c = round(_cn0(el) - (atten if p in WEAK else 0.0) + rng.normal(0, 0.8), 1)
            sats.append(SatObs("G", p, "1", el, az, c, True))
            xs.append(math.sin(math.radians(el)))
            cs.append(c)
            weak_mask.append(p in WEAK)
        s.on_epoch(Epoch(mono=float(t), wall=1.8e9 + t, utc=1.8e9 + t, quality=1, sats=tuple(sats)))
    return s, np.array(xs), np.array(cs), np.array(weak_mask)


def test_attenuated_sector_is_weak_by_the_least_squares_residual() -> None:
    s, x, c, w = _run(ATTEN_DB)
    b, a = np.polyfit(x, c, 1)  # reference least squares (numpy), same samples
    expected = float(np.mean(a + b * x[w] - c[w]))  # mean shortfall of the sector's samples
    snap = s.snapshot()
    assert snap["weak_sector_db"] == AnalysisConfig().weak_sector_db == 5.0
    sectors = snap["weak_sectors"]
    assert [(z["az_from"], z["az_to"], z["el_from"], z["el_to"]) for z in sectors] == [(90, 120, 0, 15)]
    assert abs(sectors[0]["below_curve_db"] - expected) < 0.05
    assert sectors[0]["n"] == 2 * 200  # hand count: two satellites, one sample per second for 200 s


def test_no_weak_sector_when_the_sky_follows_the_curve() -> None:
    s, *_ = _run(0.0)
    assert s.snapshot()["weak_sectors"] == []


def test_threshold_comes_from_the_config() -> None:
    s = SignalStats(AnalysisConfig(weak_sector_db=9.0), lambda ev: None)
    for t in range(200):
        sats = tuple(SatObs("G", p, "1", el, az, _cn0(el) - (ATTEN_DB if p in WEAK else 0.0), True)
                     for p, el, az in SKY)
        s.on_epoch(Epoch(mono=float(t), wall=1.8e9 + t, utc=1.8e9 + t, quality=1, sats=sats))
    snap = s.snapshot()
    assert snap["weak_sectors"] == [] and snap["weak_sector_db"] == 9.0  # 7 dB < 9 dB asked for


def _overlap(a0: float, a1: float, b0: float, b1: float) -> bool:
    span = lambda lo, hi: {d % 360 for d in range(int(lo), int(lo + (hi - lo) % 360 or 360))}  # noqa: E731
    return bool(span(a0, a1) & span(b0, b1))


def test_building_multipath_zone_shows_up_and_rooftop_stays_clean() -> None:
    sc = Scenario.load("building")
    zone = max(sc.multipath, key=lambda m: m.atten_db)  # the wall's reflections: 7 dB, az 190-250
    assert zone.atten_db > AnalysisConfig().weak_sector_db
    a = run_items(RecordingReader(str(RECORDINGS / "building-5min.lfr")).items()).snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    hits = [z for z in a["signal"]["weak_sectors"]
            if _overlap(z["az_from"], z["az_to"], zone.az_from, zone.az_to) and z["el_from"] < zone.el_below]
    assert hits, a["signal"]["weak_sectors"]
    roof = run_items(RecordingReader(str(RECORDINGS / "rooftop-5min.lfr")).items()).snapshot().analysis
    assert roof["internal_errors"] == 0 and roof["signal"]["weak_sectors"] == []
