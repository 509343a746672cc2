"""The dialect sweep: one short scenario through the whole pipeline once per receiver dialect,
as a recording (simulated host clocks) and as a plain NMEA log (receiver clocks only).

Every dialect says the same thing in another way, so the figures must be those of the clean
dialect: epochs, rate, duration, satellites in view per constellation, computed HDOP, fix
availability, TTFF, outages, scatter and mean height. The expected values come from the clean run
and from the scenario script (its timeline and the simulator's truth), never from the dialect run.
"""

from __future__ import annotations

import threading
from collections import Counter
from pathlib import Path
from typing import Any

import pytest

from livefix.analysis.config import AnalysisConfig
from livefix.commands.simulate import write_file
from livefix.pipeline import Pipeline
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source

DURATION = 240.0  # s of simulated time: first fix, RTK fixed, an outage and a second RTK chain
BASE_RATE = 1  # Hz of the clean run (rate dialects set their own)
SCENARIO = """
name = "sweep"
description = "Short open-sky run for the dialect sweep (invented site)."
start_utc = "2026-05-12T08:30:00Z"

[site]
lat = 46.9071234
lon = 7.6182345
h = 612.347
sep = 49.1

[receiver]
systems = ["G", "R", "E", "C"]

[fix]
ttff_s = 20
dgnss_after_s = 4
float_after_s = 10
fixed_after_s = 25

[restart]
hot = 3

[[faults]]
kind = "outage"
at = 120
duration = 20
"""
# Timeline from the script above (hand arithmetic): first fix at ttff_s = 20 s; the outage
# [120, 140) then a hot re-acquisition of 3 s gives no fix in [120, 143).
TTFF_S = 20.0
NO_FIX_S = 20.0 + 23.0
# CEP tolerance: the rate dialects sample the same error path (stepped on a 20 Hz grid, see
# livefix.sim.errors.GRID_HZ) more densely, rmc-only drops no horizontal position; a few percent
# covers the extra samples between whole seconds (the rate dialects' differences, measured).
CEP_REL = 0.10
H_ABS_M = 0.01  # mean height: 1 cm, below the RTK-fixed vertical noise (about 1.4 cm, 1 sigma)


@pytest.fixture(scope="module")
def scenario(tmp_path_factory: pytest.TempPathFactory) -> Scenario:
    p = tmp_path_factory.mktemp("sweep") / "sweep.toml"
    p.write_text(SCENARIO, encoding="utf-8")
    return Scenario.load(p)


def _analyse(path: Path) -> tuple[dict[str, Any], Any]:
    """What `livefix report FILE --json` computes (one process), plus the final sky."""
    src = open_source(str(path), speed=None)
    p = Pipeline(AnalysisConfig(), src.name)
    for item in src.items(threading.Event()):
        p.feed(item)
    p.finish()
    snap = p.snapshot()
    return snap.analysis, snap


def _run(scenario: Scenario, dialect: str, suffix: str, where: Path) -> dict[str, Any]:
    rx = SimReceiver(scenario, rate_hz=BASE_RATE, seed=1, dialect=None if dialect == "clean" else dialect)
    path = where / f"{dialect.replace(',', '+')}{suffix}"
    write_file(rx, path, DURATION)
    a, snap = _analyse(path)
    assert a["internal_errors"] == 0, a.get("last_error")
    truth_view = Counter(s.system for s in rx.last.sats)
    return {"a": a, "snap": snap, "rate": rx.rate, "truth_view": truth_view}


def figures(r: dict[str, Any]) -> dict[str, Any]:
    a, snap = r["a"], r["snap"]
    st, fx, pos = a["stream"], a["fix"], a["position"]
    fixed = (pos.get("by_fix") or {}).get("rtk_fixed") or {}
    return {
        "epochs": st["epochs"], "rate_hz": st["rate_hz"], "duration_s": st["duration_s"],
        "malformed": st["malformed"],
        "view": dict(Counter(s.system for s in snap.sky)),
        "hdop_computed": ((a["dop"].get("computed") or {}).get("hdop")),
        "availability": fx["availability"], "ttff_s": fx["ttff_s"],
        "start": fx["starts"][0]["start"] if fx.get("starts") else None,
        "outages": [round(o["duration_s"], 2) for o in fx["outages"]],
        "cep50": fixed.get("cep50_m"), "cep95": fixed.get("cep95_m"),
        "mean_h": (pos.get("mean") or {}).get("h"),
    }


MODES = {"recording": ".lfr", "plain": ".nmea"}


@pytest.fixture(scope="module")
def clean(scenario: Scenario, tmp_path_factory: pytest.TempPathFactory) -> dict[str, dict[str, Any]]:
    where = tmp_path_factory.mktemp("clean")
    return {m: _run(scenario, "clean", sfx, where) for m, sfx in MODES.items()}


def test_clean_run_matches_the_scenario_script(clean: dict[str, dict[str, Any]], scenario: Scenario) -> None:
    """The reference itself against the script: otherwise the sweep would compare with nonsense."""
    scenario_start = "2026-05-12T08:30:00.000Z"  # start_utc in SCENARIO
    for mode, r in clean.items():
        f = figures(r)
        assert f["epochs"] == DURATION * BASE_RATE, mode  # one epoch per second for 240 s
        assert f["rate_hz"] == pytest.approx(BASE_RATE), mode
        assert f["ttff_s"] == pytest.approx(TTFF_S, abs=1.0 / BASE_RATE), mode
        assert f["availability"]["none"] == pytest.approx(NO_FIX_S / DURATION, abs=1.0 / DURATION), mode
        assert f["view"] == dict(r["truth_view"]), mode  # the simulator's own sky at the end
        assert f["start"] == scenario_start, mode


# Every dialect that can be combined, at once: a receiver with all the quirks (one rate).
ALL_AT_ONCE = ",".join(n for n in DIALECTS if n not in ("rate-5hz", "rate-20hz", "gga-2hz-zda-1hz",
                                                        "rmc-10hz-gga-1hz", "gns-only"))


@pytest.mark.parametrize("mode", list(MODES))
@pytest.mark.parametrize("dialect", [*DIALECTS, ALL_AT_ONCE], ids=[*DIALECTS, "all-at-once"])
def test_dialect_gives_the_clean_figures(dialect: str, mode: str, scenario: Scenario,
                                         clean: dict[str, dict[str, Any]],
                                         tmp_path: Path) -> None:
    r = _run(scenario, dialect, MODES[mode], tmp_path)
    got, ref = figures(r), figures(clean[mode])
    k = r["rate"] // BASE_RATE  # a rate dialect gives k epochs for each clean one
    assert got["epochs"] == ref["epochs"] * k
    assert got["rate_hz"] == pytest.approx(r["rate"])
    # the last epoch is 1/rate before the end of the run (script: DURATION)
    assert got["duration_s"] == pytest.approx(DURATION - 1.0 / r["rate"], abs=1e-6)
    assert got["malformed"] == ref["malformed"]  # dialects add no NMEA damage (binary is not NMEA)
    assert got["view"] == ref["view"] == dict(r["truth_view"])
    assert got["hdop_computed"] == pytest.approx(ref["hdop_computed"], abs=0.01)
    assert got["ttff_s"] == pytest.approx(ref["ttff_s"], abs=1e-6)
    assert got["start"] == ref["start"]  # placed at the receiver's real date, not a default one
    assert set(got["availability"]) == set(ref["availability"])
    for fix, share in ref["availability"].items():
        assert got["availability"][fix] == pytest.approx(share, abs=1.0 / DURATION), fix
    assert got["outages"] == pytest.approx(ref["outages"], abs=1.0 / BASE_RATE)
    assert got["cep50"] == pytest.approx(ref["cep50"], rel=CEP_REL)
    assert got["cep95"] == pytest.approx(ref["cep95"], rel=CEP_REL)
    assert got["mean_h"] == pytest.approx(ref["mean_h"], abs=H_ABS_M)
