"""The per-epoch shortcuts of the analysis change nothing: failing stages are still counted, lazily
written buffers read the same at any time, memoised projections equal the plain conversion, and
running medians equal statistics.median."""

from __future__ import annotations

import json
import math
import statistics

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.analysis.fixes import FixStats
from livefix.analysis.geo import EcefMemo, Projector
from livefix.analysis.integrity import StreamIntegrity
from livefix.analysis.streaming import PairHistory, Ring
from livefix.geodesy import LocalFrame, geodetic_to_ecef
from livefix.pipeline import StreamCounters
from livefix.state.epoch import Epoch, SatObs

T0 = 1.8e9
LAT, LON, H = -12.25, 47.5, 310.0  # invented point


def _epochs(n: int, seed: int = 8, sentences: tuple = ("GGA", "GSA", "GSV")):  # noqa: ANN201
    rng = np.random.default_rng(seed)
    sats = tuple(SatObs("GREC"[k % 4], k + 1, "", 10 + (k * 7) % 75, (k * 37) % 360, 25 + k, True)
                 for k in range(12))
    noise = rng.normal(0, 1.0, (n, 3)).tolist()
    for i in range(n):
        t = 0.1 * i
        dn, de, du = noise[i]
        sky = sats if (i // 50) % 2 else sats[:-1]  # the sky changes now and then
        yield Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=1 if i % 97 else 0, lat=LAT + dn / 111_000,
                    lon=LON + de / 108_000, h=H + du, num_sv=11, hdop=0.9, pdop=1.6, vdop=1.2, sats=sky,
                    used_prns=tuple((s.system, s.prn) for s in sky), sentences=sentences)


def test_failing_stage_is_counted_and_the_others_still_run() -> None:
    a = Analyzer(AnalysisConfig())
    for ep in _epochs(40, sentences=(["GGA"],)):  # unhashable sentence id: FixStats raises
        a.on_chunk(ep.mono, ep.wall, 400)
        a.on_epoch(ep)
    snap = a.snapshot(StreamCounters())
    assert snap["internal_errors"] == 40
    assert snap["last_error"].startswith("FixStats.on_epoch: TypeError")
    assert snap["stream"]["epochs"] == 40 and snap["fix"]["epochs"] == 0  # before it, and it
    assert snap["position"]["n"] > 30 and snap["dop"]["compared"] == 40  # the stages after it
    assert snap["signal"]["current"]["tracked"] >= 11 and snap["trend"]["t"]


def test_failing_trend_is_counted() -> None:
    a = Analyzer(AnalysisConfig())
    a.on_epoch(Epoch(mono=0.0, wall=T0, utc=T0, quality=0, num_sv="x"))  # type: ignore[arg-type]
    assert a.internal_errors == 1 and a.last_error.startswith("Analyzer._trend: TypeError")


def test_snapshots_taken_any_time_do_not_change_the_result() -> None:
    """Buffers written in batches (rings, histories, histogram runs) are flushed by every reader."""
    eps = list(_epochs(1500))
    a, b = Analyzer(AnalysisConfig()), Analyzer(AnalysisConfig())
    for i, ep in enumerate(eps):
        a.on_chunk(ep.mono, ep.wall, 400)
        b.on_chunk(ep.mono, ep.wall, 400)
        a.on_epoch(ep)
        b.on_epoch(ep)
        if i % 37 == 0:
            b.snapshot(StreamCounters())
    ja = json.dumps(a.snapshot(StreamCounters()), sort_keys=True)
    assert ja == json.dumps(b.snapshot(StreamCounters()), sort_keys=True)
    assert json.loads(ja)["internal_errors"] == 0


def test_projector_equals_local_frame_bit_for_bit() -> None:
    rng = np.random.default_rng(5)
    frame = LocalFrame(LAT, LON, H)
    ecef = EcefMemo()
    proj = Projector(frame, ecef)
    for lat, lon, h in zip(LAT + rng.normal(0, 0.01, 500), LON + rng.normal(0, 0.01, 500),
                           H + rng.normal(0, 50, 500), strict=True):
        lat, lon, h = float(lat), float(lon), float(h)
        assert proj.enu(lat, lon, h) == frame.enu(lat, lon, h)
        assert proj.enu(lat, lon, h) == frame.enu(lat, lon, h)  # second call comes from the memo
        assert ecef(lat, lon, h) == geodetic_to_ecef(lat, lon, h)


def test_ring_batches_read_like_plain_rows() -> None:
    r = Ring(7, 2)
    rows = [(float(i), float(i * i)) for i in range(137)]
    for k, row in enumerate(rows):
        r.push(row)
        if k % 11 == 0:
            assert r.array().tolist() == [list(x) for x in rows[max(0, k - 6):k + 1]]
    assert r.n == 7 and r.total == 137
    assert r.array().tolist() == [list(x) for x in rows[-7:]]


def test_pair_history_add3_equals_add() -> None:
    a, b = PairHistory(16, 3), PairHistory(16, 3)
    rng = np.random.default_rng(9)
    for x, y, z in rng.normal(0, 1, (333, 3)).tolist():
        a.add((x, y, z))
        b.add3(x, y, z)
    assert a.n == b.n and a.factor == b.factor == 32
    assert a.array().tolist() == b.array().tolist()


def test_running_interval_medians_equal_statistics_median() -> None:
    rng = np.random.default_rng(2)
    si = StreamIntegrity(AnalysisConfig(), lambda ev: None)
    fs = FixStats(AnalysisConfig(), lambda ev: None)
    t = 0.0
    for k in range(700):
        t += float(rng.choice([0.1, 0.1000001, 0.0999999, 0.2, 0.05, 1.3]))
        ep = Epoch(mono=t, wall=T0 + t, utc=None, quality=1, lat=LAT, lon=LON, h=H)
        si.on_epoch(ep)
        fs.on_epoch(ep)
        q = list(si.iv_nominal)
        assert not any(math.isnan(x) for x in q)  # a NaN stamp never enters the window
        if len(q) >= 5:
            assert si.nominal() == statistics.median(q)  # reference: Python's statistics.median
        if fs._dts:
            assert fs._interval() == statistics.median(fs._dts)
        if k == 400:
            si.on_epoch(Epoch(mono=math.nan, wall=T0, utc=None, quality=1))  # a NaN interval: no crash
            assert si.nominal() is not None
