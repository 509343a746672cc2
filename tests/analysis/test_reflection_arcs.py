"""Arcs from the stream (livefix.analysis.arcs) and the `reflection` snapshot key, end to end.

Fixtures are hand-built NMEA: GGA + GSV at 1 Hz for satellites whose true elevation changes
linearly with time; GSV carries whole degrees (NMEA 0183) and C/N0 with a reflection off a plane
H below the antenna (two-ray model; H = f·λ/2, the GNSS-IR software paper, GPS Solutions 22:80 (2018)).
"""

from __future__ import annotations

import math
from functools import reduce

import numpy as np
import pytest

from livefix.analysis.arcs import Arc, ArcCollector, smooth
from livefix.analysis.engine import Analyzer
from livefix.analysis.reflection import ReflectionConfig
from livefix.pipeline import Pipeline
from livefix.sources import Chunk
from livefix.state.epoch import Epoch, SatObs

LAMBDA = 299_792_458.0 / 1575.42e6  # GPS L1: c / 1575.42 MHz
T0 = 1_700_000_000.0  # POSIX seconds of the first epoch (2023-11-14T22:13:20Z)


def nmea(body: str) -> bytes:
    cs = reduce(lambda a, ch: a ^ ord(ch), body, 0)  # XOR between $ and * (NMEA 0183)
    return f"${body}*{cs:02X}\r\n".encode()


def true_el(prn: int, t: float) -> float:
    """Satellite 5 rises 4° -> 27° in 2300 s; satellite 12 sets 26° -> 3°; 20 and 24 stay high."""
    return {5: 4.0 + t * 0.01, 12: 26.0 - t * 0.01, 20: 60.0, 24: 45.0}[prn]


def true_az(prn: int, t: float) -> float:
    return {5: 100.0 + t * 0.004, 12: 200.0 - t * 0.003, 20: 300.0, 24: 10.0}[prn]


def cn0(prn: int, t: float, h: float | None, rng: np.random.Generator, decimals: bool) -> float:
    x = math.sin(math.radians(true_el(prn, t)))
    c = 30.0 + 25.0 * x
    if h is not None:
        c += 10.0 * math.log10(1.04 + 0.4 * math.cos(4.0 * math.pi * h * x / LAMBDA + 1.0))  # a = 0.2
    c += rng.normal(0.0, 0.7)
    return round(c, 1) if decimals else round(c)


def stream(seconds: int, h: float | None = 2.0, gap: tuple[int, int] | None = None, decimals: bool = False,
           seed: int = 1) -> list[Chunk]:
    rng = np.random.default_rng(seed)
    out = []
    for k in range(seconds):
        t = float(k)
        tod = T0 + t
        hh, mm, ss = time_of_day(tod)
        gga = nmea(f"GPGGA,{hh:02d}{mm:02d}{ss:02d}.00,4700.0000,N,00800.0000,E,1,08,0.9,500.0,M,48.0,M,,")
        rmc = nmea(f"GPRMC,{hh:02d}{mm:02d}{ss:02d}.00,A,4700.0000,N,00800.0000,E,0.0,0.0,141123,,,A")
        sats = []
        for prn in (5, 12, 20, 24):
            c = None if gap and gap[0] <= k < gap[1] and prn in (5, 12) else cn0(prn, t, h, rng, decimals)
            sats.append(f"{prn:02d},{round(true_el(prn, t)):02d},{round(true_az(prn, t)) % 360:03d},"
                        + ("" if c is None else (f"{c:.1f}" if decimals else f"{int(c):02d}")))
        gsv = nmea("GPGSV,1,1,04," + ",".join(sats))
        out.append(Chunk(t, tod, gga + rmc + gsv))
    return out


def time_of_day(tod: float) -> tuple[int, int, int]:
    s = int(tod) % 86400
    return s // 3600, s // 60 % 60, s % 60


def run(chunks: list[Chunk]) -> tuple[dict, Analyzer]:
    p = Pipeline()
    for c in chunks:
        p.feed(c)
    p.finish()
    a = p.analyzer
    return a.snapshot(p.counters())["reflection"], a


def test_rising_and_setting_arcs_give_the_fixture_height() -> None:
    r, a = run(stream(2300))
    assert a.internal_errors == 0
    assert r["arcs"] == 2  # satellite 5 rising (az ~100-108°), satellite 12 setting (az ~200-194°)
    assert r["height_m"] == pytest.approx(2.0, abs=0.03)  # the fixture's H
    sectors = {(s["az_from"], s["az_to"]): s for s in r["sectors"]}
    assert set(sectors) == {(90.0, 120.0), (180.0, 210.0)}  # the arcs' azimuths, 30° sectors
    # a = 0.2 -> 20·log10((1+a)/(1-a)) = 3.52 dB peak to peak (hand arithmetic), within the noise
    assert all(2.5 < s["mp_db"] < 4.5 for s in sectors.values())
    assert r["status"] == "collecting"  # 2 arcs < min_arcs_sector: tentative words
    assert "tentative" in r["advice"] and "2.0 m below the antenna" in r["advice"]
    assert r["config"]["el_min_deg"] == 5.0 and r["config"]["min_peak_noise"] == a.config.reflection.min_peak_noise
    assert [f["el_deg"] for f in r["fresnel"]] == [5.0, 10.0, 15.0]


def test_decimal_cn0_is_used_as_written() -> None:
    r, a = run(stream(2300, decimals=True, seed=3))
    assert a.internal_errors == 0
    assert r["arcs"] == 2 and r["height_m"] == pytest.approx(2.0, abs=0.03)


def test_no_reflection_no_accepted_arcs() -> None:
    r, a = run(stream(2300, h=None, seed=4))
    assert a.internal_errors == 0
    assert r["arcs"] == 0 and r["height_m"] is None and r["arcs_evaluated"] == 2
    assert r["advice"].startswith("no reflecting surface found in 2 satellite arcs")


def test_a_gap_splits_the_arc() -> None:
    # 5 min without C/N0 in the middle (> gap_s 60 s): each satellite gives two arcs, 6-7° and 9-10°
    r, a = run(stream(2300, gap=(1000, 1300)))
    assert a.internal_errors == 0
    assert r["arcs_evaluated"] == 4
    assert r["refused"].get("short arc", 0) + r["arcs"] == 4


def _epoch(t: float, sats: tuple[SatObs, ...]) -> Epoch:
    return Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=1, sats=sats)


def test_smoothing_undoes_whole_degree_rounding_and_turning_point_splits() -> None:
    cfg = ReflectionConfig()
    col = ArcCollector(cfg)
    arcs: list[Arc] = col.done
    # a satellite culminating at 20° inside the window: el = 20 - ((t - 1500)/150)² degrees
    for k in range(3000):
        t = float(k)
        el = 20.0 - ((t - 1500.0) / 150.0) ** 2
        s = SatObs("G", 7, "1", round(el), round(150.0 + t * 0.01), 40.0, False)
        col.on_epoch(_epoch(t, (s,)))
    col.flush()
    assert [a.rising for a in arcs] == [True, False]  # rising then setting
    for a in arcs:
        truth = 20.0 - ((a.t - 1500.0) / 150.0) ** 2
        assert np.abs(a.el - truth).max() < 0.15  # whole degrees (±0.5°) smoothed along the track
        assert a.el.min() >= cfg.el_min_deg and a.el.max() <= cfg.el_max_deg
    assert col.in_progress == 0


def test_memory_is_bounded_by_arcs_in_progress() -> None:
    # a satellite that stays inside the window (as a geostationary one would) is cut into arcs of
    # MAX_SAMPLES; nothing else is kept
    from livefix.analysis.arcs import MAX_SAMPLES

    col = ArcCollector(ReflectionConfig())
    arcs: list[Arc] = col.done
    for k in range(2 * MAX_SAMPLES + 10):
        col.on_epoch(_epoch(float(k), (SatObs("G", 9, "1", 15, 120, 40.0, False),)))
    assert len(arcs) == 2 and all(a.t.size == MAX_SAMPLES for a in arcs)
    assert sum(len(tr.t) for tr in col.tracks.values()) == 10


def test_smooth_returns_a_cubic_exactly() -> None:
    t = np.linspace(0.0, 100.0, 50)
    v = 1.0 + 0.1 * t - 0.002 * t**2 + 1e-5 * t**3
    np.testing.assert_allclose(smooth(t, v), v, atol=1e-9)  # a cubic is its own cubic fit


def test_snapshot_does_not_depend_on_when_snapshots_are_taken() -> None:
    # live, replay and report must agree (livefix.analysis.engine): arcs in progress are estimated
    # at fixed sample counts, never at snapshot time
    chunks = stream(1800, seed=6)  # both satellites still inside the window at the end
    once, _ = run(chunks)
    p = Pipeline()
    for k, c in enumerate(chunks):
        p.feed(c)
        if k % 37 == 0:
            p.analyzer.snapshot(p.counters())
    p.finish()
    often = p.analyzer.snapshot(p.counters())["reflection"]
    assert often == once
    assert once["arcs_in_progress"] == 2 and once["arcs_evaluated"] == 2  # provisional estimates
