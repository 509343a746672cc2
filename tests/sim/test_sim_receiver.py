"""Simulator behaviour: masks, C/N0, fix timeline, scripted faults, restart commands, determinism."""

from __future__ import annotations

import math

import numpy as np
import pytest

from livefix import geodesy
from livefix.sim import Scenario, SimReceiver, nmea
from livefix.sim.errors import UERE, cn0_model


def _run(rx: SimReceiver, duration: float):
    """(t, truth, data) per epoch, including stalled epochs (data None)."""
    out = []
    last_t = -1.0
    for t, data in rx.epochs(duration):
        out.append((t, rx.last, data))
        last_t = t
    return out, last_t


def test_same_seed_same_bytes_other_seed_differs():
    a = b"".join(d for _t, d in SimReceiver(Scenario.load("soak"), 10, seed=5).epochs(45))
    b = b"".join(d for _t, d in SimReceiver(Scenario.load("soak"), 10, seed=5).epochs(45))
    c = b"".join(d for _t, d in SimReceiver(Scenario.load("soak"), 10, seed=6).epochs(45))
    assert a == b and a != c


def test_obstruction_mask_only_untracks_inside_the_sector():
    sc = Scenario.load("building")
    (mask,) = sc.masks
    rx = SimReceiver(sc, rate_hz=1, seed=1)
    inside_untracked = outside_untracked_high = inside = 0
    for _t, _d in rx.epochs(600):
        for s in rx.last.sats:
            blocked = mask.contains(s.az, s.el)
            if blocked:
                inside += 1
                assert s.cn0 is None and not s.used  # in view, listed, but not tracked
                inside_untracked += 1
            elif s.el > 15 and s.cn0 is None and _t > 60 and not any(m.contains(s.az, s.el) for m in sc.multipath):
                outside_untracked_high += 1
    assert inside > 100 and inside_untracked == inside
    assert outside_untracked_high == 0  # clear sky above 15 deg is tracked once acquired
    # the wall sector 250-330 below 60 is the one in the scenario file
    assert (mask.az_from, mask.az_to, mask.el_below) == (250.0, 330.0, 60.0)


def test_cn0_model_and_multipath_attenuation():
    # model end points: 32 dB-Hz at 5 deg, 48 at zenith; docs/sources.md#typical-cn0: typical 37-45 dB-Hz
    assert cn0_model(np.array([5.0, 90.0]), 32, 48) == pytest.approx([32.0, 48.0])
    mid = float(cn0_model(np.array([35.0]), 32, 48)[0])
    assert 37 <= mid <= 45
    sc = Scenario.load("building")
    rx = SimReceiver(sc, rate_hz=1, seed=1)
    hit, clear = [], []
    for t, _d in rx.epochs(900):
        if t < 60:
            continue
        for s in rx.last.sats:
            if s.cn0 is None or not 10 <= s.el < 25:
                continue
            resid = s.cn0 - float(cn0_model(np.array([s.el]), sc.cn0_5deg, sc.cn0_zenith)[0])
            (hit if sc.multipath[0].contains(s.az, s.el) else clear).append(resid)
    assert len(hit) > 50 and len(clear) > 50
    assert np.mean(clear) - np.mean(hit) > 4.0  # 7 dB attenuation in the reflection sector
    assert np.std(hit) > np.std(clear)  # and extra jitter


def test_ttff_and_rtk_timeline_at_scripted_times():
    sc = Scenario.load("rooftop")
    rows, _ = _run(SimReceiver(sc, rate_hz=10, seed=1), 90)
    first = {}
    for t, tr, _d in rows:
        first.setdefault(tr.fix, t)
    assert first["single"] == pytest.approx(sc.ttff_s)
    assert first["dgnss"] == pytest.approx(sc.ttff_s + sc.dgnss_after_s)
    assert first["rtk_float"] == pytest.approx(sc.ttff_s + sc.float_after_s)
    assert first["rtk_fixed"] == pytest.approx(sc.ttff_s + sc.fixed_after_s)
    # GGA quality codes: 4 RTK fixed, 5 RTK float (docs/sources.md#gga-quality, from memory beyond 0-2)
    assert nmea.MODES["rtk_fixed"][0] == 4 and nmea.MODES["rtk_float"][0] == 5


def test_position_error_scales_with_fix_type_and_dop():
    sc = Scenario.load("rooftop")
    rx = SimReceiver(sc, rate_hz=1, seed=3)
    by_fix: dict[str, list] = {}
    for _t, _d in rx.epochs(1500):
        tr = rx.last
        if tr.fix != "none":
            by_fix.setdefault(tr.fix, []).append((tr.err_enu, tr.dop["hdop"]))
    fixed = np.array([e for e, _h in by_fix["rtk_fixed"]])
    hdop = np.mean([h for _e, h in by_fix["rtk_fixed"]])
    h_rms = math.sqrt(np.mean(fixed[:, 0] ** 2 + fixed[:, 1] ** 2))
    expected = UERE["rtk_fixed"][0] * hdop  # horizontal RMS = UERE·HDOP by construction
    assert 0.5 * expected < h_rms < 1.6 * expected
    assert h_rms < 0.03  # RTK fixed: centimetre level (common practice)
    single = np.array([e for e, _h in by_fix["single"]])
    assert np.sqrt(np.mean(single[:, 0] ** 2 + single[:, 1] ** 2)) > 5 * h_rms


def test_dop_is_computed_from_the_used_satellites():
    rx = SimReceiver(Scenario.load("building"), rate_hz=1, seed=1)
    for _t, _d in rx.epochs(120):
        pass
    used = [s for s in rx.last.sats if s.used]
    ref = geodesy.dop([s.az for s in used], [s.el for s in used], [s.system for s in used])
    assert rx.last.dop == pytest.approx(ref)


def test_scripted_faults_happen_at_their_times():
    sc = Scenario.load("soak")
    faults = {f.kind + (f.restart if f.kind == "restart" else ""): f for f in sc.faults}
    rows, _ = _run(SimReceiver(sc, rate_hz=2, seed=1), 600)
    times = [t for t, _tr, _d in rows]
    stall = faults["stall"]
    assert not [t for t in times if stall.at <= t < stall.at + stall.duration]  # nothing yielded
    assert stall.at - 0.5 in times and stall.at + stall.duration in times
    for t, tr, _d in rows:
        o = faults["outage"]
        if o.at <= t < o.at + o.duration:
            assert tr.fix == "none" and all(s.cn0 is None for s in tr.sats)
        j = faults["jump"]
        if j.at <= t < j.at + j.duration:
            assert tr.jump and math.hypot(tr.err_enu[0], tr.err_enu[1]) == pytest.approx(j.offset_m, abs=0.3)
        g = faults["garbage"]
        assert (tr.garbage > 0) == (g.at <= t < g.at + g.duration)
    # cold restart: no fix for the cold TTFF, then a first fix; RTK chain again afterwards
    cold = faults["restartcold"]
    after = [(t, tr.fix) for t, tr, _d in rows if cold.at <= t < cold.at + 80]
    fix_back = next(t for t, f in after if f != "none")
    assert fix_back == pytest.approx(cold.at + sc.restart_ttff_s["cold"])
    # a cold restart loses the clock: UTC counts from 1980-01-06 until the first fix (common practice)
    zda_years = {t: int(d.split(b"ZDA,")[1].split(b",")[3]) for t, _tr, d in rows if d and b"ZDA," in d}
    assert {y for t, y in zda_years.items() if cold.at <= t < fix_back} == {1980}
    assert {y for t, y in zda_years.items() if t < cold.at or t >= fix_back} == {2026}
    assert any(f == "rtk_fixed" for _t, f in after if _t > fix_back + sc.fixed_after_s)
    hot = faults["restarthot"]
    back = next(t for t, tr, _d in rows if t >= hot.at and tr.fix != "none")
    assert back == pytest.approx(hot.at + sc.restart_ttff_s["hot"])
    assert [e for e in SimReceiver(sc).events] == [(0.0, "start", "start")]


@pytest.mark.parametrize("kind", ["COLD", "WARM", "HOT"])
def test_restart_command_restarts_with_its_ttff(kind):
    sc = Scenario.load("rooftop")
    rx = SimReceiver(sc, rate_hz=5, seed=1)
    gen = rx.epochs(200)
    for t, _d in gen:
        if t >= 100:
            break
    assert rx.last.fix == "rtk_fixed"
    body = f"PLFX,RESET,{kind}"
    rx.command(f"${body}*{nmea.checksum(body)}\r\n".encode()[:9])  # split writes are joined
    rx.command(f"${body}*{nmea.checksum(body)}\r\n".encode()[9:])
    t, data = next(gen)
    assert f"$PLFX,ACK,RESET,{kind}".encode() in data
    assert rx.last.fix == "none"
    back = next(t2 for t2, _d in gen if rx.last.fix != "none")
    assert back == pytest.approx(t + sc.restart_ttff_s[kind.lower()], abs=0.21)


def test_bad_commands_are_counted_not_obeyed():
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=1, seed=1)
    gen = rx.epochs(100)
    for t, _d in gen:
        if t >= 60:
            break
    rx.command(b"$PLFX,RESET,COLD*00\r\n$PLFX,RESET,LUKEWARM\r\n\xff\xfe\r\n")
    next(gen)
    assert rx.last.fix != "none" and rx.commands_refused == 3
    rx.command(b"$PLFX,RESET,HOT\r\n")  # checksum optional
    next(gen)
    assert rx.last.fix == "none"


def test_rate_and_scenario_errors_are_one_line(tmp_path):
    with pytest.raises(ValueError, match="1 to 20"):
        SimReceiver(Scenario.load("rooftop"), rate_hz=50)
    with pytest.raises(ValueError, match="unknown scenario 'moon'"):
        Scenario.load("moon")
    bad = tmp_path / "x.toml"
    bad.write_text('start_utc = "2026-01-01T00:00:00Z"\n[site]\nlat = 1\nlon = 2\nh = 3\ncolour = 4\n')
    with pytest.raises(ValueError, match=r"x.toml: unknown key site.'colour'"):
        Scenario.load(bad)
    bad.write_text('start_utc = "2026-01-01T00:00:00Z"\n[site]\nlat = 1\nlon = 2\n')
    with pytest.raises(ValueError, match="missing key 'h'"):
        Scenario.load(bad)
