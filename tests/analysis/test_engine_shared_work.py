"""Work the Analyzer shares between its stages, and rows its accumulators take in batches, change no
result: the fix, position and median statistics inside one Analyzer (one timeline, one projector at
the first fix, one valid_fix answer per epoch) give the very same figures as the same classes fed
alone, and batched accumulators equal the textbook one-row-at-a-time formulas."""

from __future__ import annotations

import json
import math

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.analysis.fixes import FixStats
from livefix.analysis.geo import EcefMemo
from livefix.analysis.median import MedianPosition
from livefix.analysis.position import PositionStats
from livefix.analysis.streaming import Timeline, fix_memo, valid_fix
from livefix.analysis.track import WARMUP, Moments3
from livefix.geodesy import LocalFrame
from livefix.pipeline import StreamCounters
from livefix.state.epoch import Epoch

T0 = 1.8e9
LAT, LON, H = 33.5, -101.25, 820.0  # invented point


def _epochs(n: int = 2400) -> list[Epoch]:
    """10 Hz epochs with noise, a no-fix spell, epochs without a height, an RTK spell, a receiver
    restart (UTC back by a minute with the fix lost) and a drive of 200 m to a second site."""
    rng = np.random.default_rng(17)
    noise = rng.normal(0, 1.0, (n, 3)).tolist()
    out, utc = [], T0
    for i in range(n):
        utc += 0.1
        if i == 1500:
            utc -= 60.0  # the receiver restarted: its clock goes back
        q = 0 if 700 <= i < 760 or 1500 <= i < 1530 else (4 if 300 <= i < 500 else 1)
        dn, de, du = noise[i]
        scale = 0.02 if q == 4 else 1.0
        north = 200.0 * min(1.0, max(0.0, (i - 1800) / 100))  # driven 200 m north at 20 m/s
        speed = 20.0 if 1800 <= i < 1900 else 0.0
        h = None if 900 <= i < 950 else H + du * scale
        out.append(Epoch(mono=0.1 * i, wall=T0 + 0.1 * i, utc=utc, quality=q,
                         lat=LAT + (dn * scale + north) / 111_000, lon=LON + de * scale / 93_000, h=h,
                         alt_msl=None if h is None else h - 25.0, sep=25.0, hdop=0.8,
                         sigma_lat=1.0, sigma_lon=1.0, sigma_alt=2.0, speed_mps=speed,
                         sentences=("GGA", "RMC", "GSA")))
    return out


def _dump(x: object) -> str:
    return json.dumps(x, sort_keys=True, allow_nan=False)


def test_stages_inside_the_analyzer_equal_the_same_stages_alone() -> None:
    eps = _epochs()
    cfg = AnalysisConfig()
    a = Analyzer(cfg)
    fs, ps, md = FixStats(cfg, lambda ev: None), PositionStats(cfg, lambda ev: None), MedianPosition()
    for ep in eps:
        a.on_chunk(ep.mono, ep.wall, 300)
        a.on_epoch(ep)
        fs.on_epoch(ep)
        ps.on_epoch(ep)
        md.on_epoch(ep)
    snap = a.snapshot(StreamCounters())
    assert snap["internal_errors"] == 0
    # reference: each class alone, with its own timeline, projector and valid_fix
    assert _dump(snap["fix"]) == _dump(fs.snapshot())
    assert snap["fix"]["starts_total"] == 2  # the restart was seen (hand count: start + restart)
    alone = ps.snapshot() | {"segments": ps.segments}
    assert _dump(snap["position"]) == _dump(alone) and alone["segments"] == 2  # a second site
    assert _dump(snap["session"]["median"]) == _dump(md.snapshot())


def test_a_projector_is_shared_only_for_the_very_same_floats() -> None:
    memo = EcefMemo()
    lat, lon, h = float(str(LAT)), float(str(LON)), float(str(H))  # float objects of their own
    first = memo.projector(lat, lon, h)
    assert memo.projector(lat, lon, h) is first  # the second stage anchoring at the same floats
    other = memo.projector(lat + 0.01, lon, h)
    assert other is not first
    rng = np.random.default_rng(4)
    for dlat, dlon, dh in rng.normal(0, 0.001, (50, 3)).tolist():
        pt = (LAT + dlat, LON + dlon, H + 100 * dh)
        # reference: livefix.geodesy.LocalFrame.enu about each frame's own origin, bit for bit
        assert other.enu(*pt) == LocalFrame(lat + 0.01, lon, h).enu(*pt)
        assert first.enu(*pt) == LocalFrame(lat, lon, h).enu(*pt)


def test_a_shared_timeline_gives_the_follower_the_same_times() -> None:
    eps = _epochs(1600)
    shared, own = Timeline(), Timeline()
    resets = 0
    for ep in eps:
        t = shared.step(ep)  # the leader
        resets += shared.reset
        assert shared.follow(ep) == t == own.step(ep)  # the follower reads the leader's step
        assert shared.abs_time == own.abs_time and shared.reset == own.reset
    assert resets == 1  # the one clock going back (hand count)


def test_fix_memo_answers_as_valid_fix() -> None:
    memo = fix_memo()
    cases = [Epoch(0.0, T0, T0, 1, lat=LAT, lon=LON, h=H), Epoch(0.1, T0, T0, 1, lat=math.nan, lon=LON),
             Epoch(0.2, T0, T0, 0, lat=LAT, lon=LON), Epoch(0.3, T0, T0, 1, lat=LAT, lon=LON, h=2e7),
             Epoch(0.4, T0, T0, 1, lat=91.0, lon=LON), Epoch(0.5, T0, T0, 2, lat=LAT, lon=LON)]
    for ep in cases:
        assert memo(ep) is valid_fix(ep) and memo(ep) is valid_fix(ep)  # asked twice: memo answers
    assert [memo(ep) for ep in cases] == [True, False, False, False, False, True]  # by the rule's text


def test_batched_moments_equal_welford_one_row_at_a_time() -> None:
    rng = np.random.default_rng(3)
    rows = [(0.1 * i, *v) for i, v in enumerate(rng.normal(0, 1, (300, 3)).tolist())]
    rows = [(t, e, n, math.nan if i % 11 == 0 else u) for i, (t, e, n, u) in enumerate(rows)]
    m = Moments3()
    got_r: list[float] = []
    for k in range(0, len(rows), 64):  # batches of the size Track uses
        r, _ = m.add_rows(rows[k:k + 64], WARMUP)
        got_r += r
    # reference: Welford's one-pass update written out here, horizontal radii before each update
    n = 0
    me = mn = cee = 0.0
    want_r = []
    for _t, e, nn, _u in rows:
        if n >= WARMUP:
            want_r.append(math.hypot(e - me, nn - mn))
        n += 1
        de = e - me
        me += de / n
        mn += (nn - mn) / n
        cee += de * (e - me)
    assert got_r == want_r and m.m[0] == me and m.m[1] == mn and m.c[0] == cee and m.n == n
    assert m.nu == sum(1 for r in rows if r[3] == r[3])  # heights counted apart (hand count)
