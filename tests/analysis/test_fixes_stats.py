"""TTFF, availability, outages, re-acquisition and jumps on constructed epoch sequences."""

from __future__ import annotations

import json

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.fixes import LIST_CAP, FixStats
from livefix.geodesy import LocalFrame
from livefix.state.epoch import Epoch, Event
from livefix.timefmt import iso

T0 = 1.8e9
FRAME = LocalFrame(55.0, 25.0, 30.0)


def _ep(i: float, q: int, e: float = 0.0, n: float = 0.0, utc: float | None = ...) -> Epoch:  # type: ignore[assignment]
    lat, lon, h = FRAME.geodetic(e, n, 0.0)
    u = T0 + i if utc is ... else utc
    if q == 0:
        return Epoch(mono=i, wall=T0 + i, utc=u, quality=0)
    return Epoch(mono=i, wall=T0 + i, utc=u, quality=q, lat=lat, lon=lon, h=h)


def _feed(seq: list[Epoch]) -> tuple[FixStats, list[Event]]:
    events: list[Event] = []
    fs = FixStats(AnalysisConfig(), events.append)
    for ep in seq:
        fs.on_epoch(ep)
    return fs, events


def test_ttff_single_dgnss_rtk_and_availability() -> None:
    q = [0] * 35 + [1] * 20 + [2] * 65 + [4] * 80
    fs, ev = _feed([_ep(i, x) for i, x in enumerate(q)])
    s = fs.snapshot()
    # constructed: first fix at 35 s, DGNSS at 55 s, RTK fixed at 120 s after the first epoch
    assert (s["ttff_s"], s["ttff_dgnss_s"], s["ttff_rtk_fixed_s"]) == (35.0, 55.0, 120.0)
    assert s["availability"] == {"none": 0.175, "single": 0.1, "dgnss": 0.325, "rtk_fixed": 0.4}
    assert s["fix_losses"] == 0 and s["outages"] == []
    assert [e.kind for e in ev] == ["fix_change", "fix_change"]
    json.dumps(s, allow_nan=False)


def test_restart_event_and_utc_reset_start_new_ttff() -> None:
    seq = [_ep(i, 1) for i in range(50)]
    events: list[Event] = []
    fs = FixStats(AnalysisConfig(), events.append)
    for ep in seq:
        fs.on_epoch(ep)
    fs.on_event(Event(mono=50, wall=T0 + 50, kind="receiver_restart", text="restart"))
    for i in range(50, 80):
        fs.on_epoch(_ep(i, 0 if i < 62 else 1))
    s = fs.snapshot()
    assert s["ttff_from"] == "restart" and s["ttff_s"] == 12.0
    # receiver time reset to an early epoch while the fix is gone (no event): detected as restart
    for i in range(80, 100):
        fs.on_epoch(_ep(i, 0 if i < 90 else 1, utc=1000.0 + i))
    s = fs.snapshot()
    assert s["starts_total"] == 3 and s["ttff_from"] == "restart" and s["ttff_s"] == 10.0


def test_outages_from_no_fix_epochs_and_from_gaps() -> None:
    seq = [_ep(i, 1) for i in range(100)] + [_ep(i, 0) for i in range(100, 110)]
    seq += [_ep(i, 1) for i in range(110, 200)]
    seq += [_ep(i, 1) for i in range(220, 300)]  # epochs 200..219 missing entirely
    seq += [_ep(i, 1) for i in range(302, 320)]  # two missing epochs: below the gap factor
    fs, ev = _feed(seq)
    s = fs.snapshot()
    # constructed: no fix during epochs 100..109 -> starts at epoch 100, lasts 10 s
    assert s["outages"][0] == {"start": iso(T0 + 100), "duration_s": 10.0}
    assert s["outages"][1] == {"start": iso(T0 + 200), "duration_s": 20.0}
    assert len(s["outages"]) == 2 and s["fix_losses"] == 2 and s["longest_outage_s"] == 20.0
    assert s["reacquisition_s"] == [10.0, 20.0]
    kinds = [e.kind for e in ev]
    assert kinds == ["fix_lost", "fix_regained", "fix_lost", "fix_regained"]
    assert ev[0].mono == 100 and ev[1].mono == 110  # at the right epoch


def test_jump_detected_at_the_right_epoch_only() -> None:
    rng = np.random.default_rng(41)
    seq = []
    for i in range(600):
        off = 30.0 if i >= 400 else 0.0
        seq.append(_ep(i, 1, rng.normal(0, 0.5) + off, rng.normal(0, 0.5)))
    seq.append(_ep(600, 2, 100.0, 0.0))  # big step with a fix change: not a jump
    fs, ev = _feed(seq)
    s = fs.snapshot()
    assert s["jumps_total"] == 1
    assert s["jumps"][0]["time"] == iso(T0 + 400) and 28 < s["jumps"][0]["distance_m"] < 32
    jumps = [e for e in ev if e.kind == "jump"]
    assert len(jumps) == 1 and abs(jumps[0].mono - 400) <= 1


def test_lists_are_bounded_and_counted() -> None:
    fs = FixStats(AnalysisConfig(), lambda ev: None)  # drop events as they come
    for i in range(30000):
        fs.on_epoch(_ep(i, 0 if i % 100 == 50 else 1))
    s = fs.snapshot()
    assert s["outages_total"] == 300 and len(s["outages"]) == LIST_CAP
    assert len(s["reacquisition_s"]) == LIST_CAP and s["fix_losses"] == 300
    assert s["outages"][-1]["start"] == iso(T0 + 29950)


def test_jump_and_jump_back_both_caught() -> None:
    rng = np.random.default_rng(42)
    seq = [_ep(i, 4, rng.normal(0, 0.01) + (6.0 if 300 <= i < 330 else 0.0), rng.normal(0, 0.01))
           for i in range(500)]
    fs, _ = _feed(seq)
    times = [j["time"] for j in fs.snapshot()["jumps"]]
    assert times == [iso(T0 + 300), iso(T0 + 330)]  # constructed: 30 s offset of 6 m
