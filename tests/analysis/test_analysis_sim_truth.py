"""The analysis against the simulator's ground truth: what a scenario scripts (livefix/sim/scenarios/
*.toml) must be found at the scripted time, within one epoch, and scatter must match the configured
noise within statistical tolerance. The scenario files are read here directly, so the truth is the
simulator's configuration, not anything the analysis computed."""

from __future__ import annotations

import datetime as dt
import threading
import tomllib
from pathlib import Path

import pytest

from livefix.pipeline import run_items
from livefix.sim.errors import UERE
from livefix.sources.sim import SimSource

SCENARIOS = Path(__file__).resolve().parents[2] / "livefix" / "sim" / "scenarios"
EPOCH = 0.1 + 1e-6  # one epoch at 10 Hz (plus float rounding of the stamps)


def _truth(name: str) -> dict:
    return tomllib.loads((SCENARIOS / f"{name}.toml").read_text())


def _run(name: str, seconds: float, rate: float = 10.0) -> dict:
    src = SimSource(name, rate_hz=rate, speed=None, duration=seconds)  # simulated clocks
    p = run_items(src.items(threading.Event()), source=src.name)
    return p.analyzer.snapshot(p.counters())


def _t(iso: str, start: str) -> float:
    f = dt.datetime.fromisoformat
    return (f(iso.replace("Z", "+00:00")) - f(start.replace("Z", "+00:00"))).total_seconds()


@pytest.fixture(scope="module")
def soak() -> tuple[dict, dict]:
    return _truth("soak"), _run("soak", 620.0)


def test_ttff_equals_the_scripted_one(soak) -> None:
    truth, a = soak
    assert a["fix"]["starts"][0]["ttff_s"] == pytest.approx(truth["fix"]["ttff_s"], abs=EPOCH)
    cold = [s for s in a["fix"]["starts"] if s["from"] == "restart"]
    assert cold and cold[0]["ttff_s"] == pytest.approx(truth["restart"]["cold"], abs=EPOCH)


def test_scripted_outage_jump_and_stall_found_at_their_times(soak) -> None:
    truth, a = soak
    start = truth["start_utc"]
    faults = {f["kind"]: f for f in truth["faults"] if f["kind"] != "restart"}
    outages = [_t(o["start"], start) for o in a["fix"]["outages"]]
    assert any(abs(t - faults["outage"]["at"]) <= EPOCH for t in outages), outages
    jump = faults["jump"]
    times = sorted(_t(j["time"], start) for j in a["fix"]["jumps"])
    # the offset is switched on and, after `duration`, off again: two jumps of offset_m
    assert times[0] == pytest.approx(jump["at"], abs=EPOCH)
    assert times[1] == pytest.approx(jump["at"] + jump["duration"], abs=EPOCH)
    assert all(j["distance_m"] == pytest.approx(jump["offset_m"], abs=0.1) for j in a["fix"]["jumps"])
    stall = faults["stall"]
    stalls = a["stream"]["stalls"]
    assert len(stalls) == 1
    assert _t(stalls[0]["start"], start) == pytest.approx(stall["at"], abs=EPOCH)
    assert stalls[0]["duration_s"] == pytest.approx(stall["duration"], abs=2 * EPOCH)


def test_hot_restart_shows_as_its_scripted_reacquisition(soak) -> None:
    truth, a = soak
    hot = next(f for f in truth["faults"] if f["kind"] == "restart" and f["restart"] == "hot")
    hits = [o for o in a["fix"]["outages"] if abs(_t(o["start"], truth["start_utc"]) - hot["at"]) <= EPOCH]
    assert hits and hits[0]["duration_s"] == pytest.approx(truth["restart"]["hot"], abs=EPOCH)


def test_garbage_and_checksum_faults_are_counted_not_hidden(soak) -> None:
    _, a = soak
    assert a["stream"]["junk_bytes"] > 0 and a["stream"]["bad_checksum"] > 0
    assert a["stream"]["checksum_bursts"] >= 1


def test_rtk_fixed_scatter_matches_the_configured_noise() -> None:
    # The simulator draws horizontal error with drms = UERE x HDOP (livefix/sim/errors.py). With a
    # 10 s correlation time, 20 minutes give roughly 60 independent samples: allow 30 %.
    a = _run("rooftop", 1260.0, rate=2.0)
    fixed = a["position"]["by_fix"]["rtk_fixed"]
    expected = UERE["rtk_fixed"][0] * a["dop"]["reported"]["hdop"]
    assert fixed["n"] > 2000
    assert fixed["drms_m"] == pytest.approx(expected, rel=0.3)
    # the circular-normal factor CEP50 ~ 1.1774 sigma = 0.8326 drms (docs/sources.md#circular-normal-factors, Rayleigh median)
    assert fixed["cep50_m"] == pytest.approx(0.8326 * fixed["drms_m"], rel=0.15)
