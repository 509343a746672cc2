"""Analyzer: JSON-able, deterministic snapshots, bounded memory, events in stream order."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.geodesy import dop as geometry_dop
from livefix.pipeline import StreamCounters, run_items
from livefix.sources.base import Chunk
from livefix.state.epoch import Epoch, Event, SatObs

T0 = 1.8e9
LAT, LON, H = 10.5, 20.25, 100.0  # invented point
KEYS = ("stream", "fix", "position", "dop", "signal", "sky", "trend", "events")


def _epochs(n: int, seed: int = 4, step: float = 1.0):  # noqa: ANN201
    rng = np.random.default_rng(seed)
    base = [(k + 1, 15 + (k * 9) % 70, (k * 41) % 360) for k in range(10)]
    skies = [tuple(SatObs("G", p, "", el + d, az, 30 + el // 4, True) for p, el, az in base) for d in range(5)]
    used = tuple(("G", p) for p, _, _ in base)
    noise = rng.normal(0, 1.0, (n, 3)).tolist()
    for i in range(n):
        t = i * step
        dn, de, du = noise[i]
        yield Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=1, lat=LAT + dn / 111_000,
                    lon=LON + de / 109_000, h=H + 2.0 * du, num_sv=10, hdop=0.9, pdop=1.6,
                    vdop=1.3, sats=skies[(i // 600) % 5], used_prns=used)  # geometry changes now and then


def _run(n: int) -> Analyzer:
    a = Analyzer(AnalysisConfig())
    for ep in _epochs(n):
        a.on_chunk(ep.mono, ep.wall, 500)
        a.on_epoch(ep)
    return a


def test_snapshot_keys_json_and_deterministic() -> None:
    s1 = _run(900).snapshot(StreamCounters(lines=4500, by_type={"GGA": 900}))
    s2 = _run(900).snapshot(StreamCounters(lines=4500, by_type={"GGA": 900}))
    for k in KEYS:
        assert k in s1
    j1 = json.dumps(s1, allow_nan=False)  # NaN would raise: JSON-able only
    assert j1 == json.dumps(s2, allow_nan=False)
    assert s1["internal_errors"] == 0, s1["last_error"]
    assert s1["stream"]["rate_hz"] == 1.0 and s1["stream"]["epochs"] == 900
    assert len(s1["trend"]["t"]) <= 600 and s1["trend"]["sats_used"][0] == 10


def test_dop_computed_inside_engine_matches_geometry() -> None:
    a = _run(10)
    ep = list(_epochs(10))[-1]
    ref = geometry_dop([s.azim for s in ep.sats], [s.elev for s in ep.sats], [s.system for s in ep.sats])
    got = a.snapshot(StreamCounters())["dop"]["current"]["computed"]
    assert got["hdop"] == pytest.approx(ref["hdop"], abs=1e-3)


def test_bounded_memory_over_1e5_epochs() -> None:
    a = Analyzer(AnalysisConfig(), max_events=500)
    sizes = []
    for i, ep in enumerate(_epochs(100_000, step=0.1)):
        a.on_chunk(ep.mono, ep.wall, 500)
        a.on_epoch(ep)
        if i % 97 == 0:
            a.on_event(Event(ep.mono, ep.wall, "note", f"note {i}"))
        if i in (9_999, 99_999):
            sizes.append(len(json.dumps(a.snapshot(StreamCounters()))))
    snap = a.snapshot(StreamCounters())
    assert len(a.events) == 500 and snap["events_dropped"] > 500
    assert len(snap["trend"]["t"]) <= 600
    assert len(a.signal.base) <= 10 and len(a.integrity.iv_nominal) <= 256
    assert sizes[1] < 1.5 * sizes[0]  # snapshot size does not grow with the session
    assert snap["internal_errors"] == 0, snap["last_error"]


def test_events_sorted_and_nan_becomes_none() -> None:
    a = Analyzer()
    a.on_event(Event(5.0, T0 + 5, "marker", "b"))
    a.on_event(Event(2.0, T0 + 2, "marker", "a", data={"x": math.nan}))
    ev = a.snapshot(StreamCounters())["events"]
    assert [e["text"] for e in ev] == ["a", "b"] and ev[0]["x"] is None


def test_reference_and_reset() -> None:
    a = _run(200)
    ref = a.reference_to_mean()
    assert ref is not None and ref[0] == pytest.approx(LAT, abs=1e-4)
    assert a.snapshot(StreamCounters())["position"]["ref"]["source"] == "session_mean"
    a.set_reference(LAT, LON, H)
    a.reset()
    snap = a.snapshot(StreamCounters())
    assert snap["stream"]["epochs"] == 0 and snap["position"]["ref"]["source"] == "user"


def test_pipeline_replay_identical() -> None:
    from livefix.sim import Scenario, SimReceiver

    sc = Scenario.load("rooftop")

    def items():  # noqa: ANN202
        rx = SimReceiver(sc, rate_hz=1, seed=3)
        for t, data in rx.epochs(duration=60):
            yield Chunk(100.0 + t, sc.start_utc + t, data)

    j = [json.dumps(run_items(items()).snapshot().analysis, allow_nan=False, sort_keys=True) for _ in range(2)]
    assert j[0] == j[1]
    snap = json.loads(j[0])
    assert snap["internal_errors"] == 0, snap["last_error"]
    assert snap["stream"]["epochs"] >= 55


_sat = st.builds(SatObs, st.sampled_from("GREC"), st.integers(1, 40), st.sampled_from(["", "1", "7"]),
                 st.one_of(st.none(), st.integers(-20, 120)), st.one_of(st.none(), st.integers(-30, 400)),
                 st.one_of(st.none(), st.integers(-5, 120)), st.booleans())
_num = st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True, width=32))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 5), st.lists(_sat, max_size=14), _num, _num, st.integers(0, 8)),
                max_size=30))
def test_arbitrary_epochs_never_raise(rows) -> None:  # noqa: ANN001
    a = Analyzer()
    t = 0.0
    for dt, sats, hdop, pdop, q in rows:
        t += dt
        a.on_chunk(t, T0 + t, 10)
        a.on_epoch(Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=q, lat=LAT, lon=LON, h=H,
                         hdop=hdop, pdop=pdop, sats=tuple(sats)))
        a.on_rejected("bad_checksum", t, T0 + t)
    snap = a.snapshot(StreamCounters())
    json.dumps(snap, allow_nan=False)
    assert snap["internal_errors"] == 0, snap["last_error"]
