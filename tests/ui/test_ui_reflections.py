"""Reflections on the obstruction page (livefix/ui/reflect.py), through Textual's run_test pilot.

Fed by snapshots of a simulated rooftop session whose truth is its scenario file: a roof plane
1.8 m below the antenna seen at azimuth 60-210° (livefix/sim/scenarios/rooftop.toml; H = f·λ/2,
the GNSS-IR software paper, GPS Solutions 22:80 (2018)).
"""

from __future__ import annotations

import dataclasses
import functools
import re
import tomllib
from pathlib import Path

import pytest
from rich.style import Style
from uikit import screen_text, sync

from livefix.pipeline import Pipeline, Snapshot
from livefix.sim.receiver import SimReceiver
from livefix.sim.scenario import Scenario
from livefix.sources import Chunk
from livefix.ui.app import MonitorApp
from livefix.ui.feed import SnapshotFeed
from livefix.ui.reflect import reflection_text, sector_rows, summary

ROOF = tomllib.loads((Path(__file__).resolve().parents[2] / "livefix/sim/scenarios/rooftop.toml").read_text())
TRUTH = ROOF["reflector"][0]
ROW = re.compile(r"^\s+(\d+)–(\d+)°\s+\w+\s+(\d+)\s+(?:collecting \()?(\d+\.\d+) m")


@functools.lru_cache(maxsize=1)
def snapshots() -> tuple[Snapshot, ...]:
    """Rooftop, GPS/Galileo/BeiDou (GLONASS has no known carrier in NMEA), 1 Hz for 75 minutes of
    simulated time: a snapshot at 4 min (before any arc can close) and at the end."""
    sc = dataclasses.replace(Scenario.load("rooftop"), systems=("G", "E", "C"))
    p = Pipeline(source="sim:rooftop")
    out = []
    for t, data in SimReceiver(sc, rate_hz=1, seed=1).epochs(75 * 60.0):
        p.feed(Chunk(t, sc.start_utc + t, data))
        if t == 240.0:
            out.append(p.snapshot())
    p.finish()
    out.append(p.snapshot())
    assert p.analyzer.internal_errors == 0
    return tuple(out)


def page(step: int, size: tuple[int, int]) -> str:
    async def run() -> str:
        feed = SnapshotFeed(snapshots(), "sim:rooftop")
        feed.step(step)
        app = MonitorApp(feed, clock=lambda: 0.0)
        async with app.run_test(size=size) as pilot:
            await pilot.press("2")
            await pilot.pause()
            return screen_text(app)
    return sync(run)()


def test_early_snapshot_says_collecting_above_the_fold_at_80x24() -> None:
    top = page(0, (80, 24)).splitlines()[:12]  # issue 15: conclusions above the fold at 80x24
    line = next(ln for ln in top if "reflections:" in ln)
    assert "collecting: 0 arcs accepted" in line  # 4 min: no satellite crossed 5-25° yet


def test_final_snapshot_shows_the_roof_by_sector_at_160x50() -> None:
    text = page(1, (160, 50))
    line = next(ln for ln in text.splitlines() if "reflections:" in ln)
    h = float(re.search(r"(\d+\.\d+) m below the antenna", line).group(1))
    assert h == pytest.approx(TRUTH["height_m"], abs=0.05), line  # the roof's height
    rows = [m for m in (ROW.match(ln) for ln in text.splitlines()) if m]
    assert rows, text
    refl = snapshots()[-1].analysis["reflection"]
    assert sum(int(m.group(3)) for m in rows) == refl["arcs"]  # every accepted arc counted on screen
    for m in rows:
        a0, a1, h = int(m.group(1)), int(m.group(2)), float(m.group(4))
        assert a1 > TRUTH["az_from"] and a0 < TRUTH["az_to"], m.group(0)  # the roof's azimuths
        assert h == pytest.approx(TRUTH["height_m"], abs=0.05), m.group(0)  # the roof's height


def _st(role: str) -> Style:
    return Style()


def test_sector_lines_say_collecting_until_enough_arcs() -> None:
    # hand-made snapshot: one sector under min_arcs_sector (tentative), one over it
    refl = {"status": "estimated", "arcs": 5, "arcs_evaluated": 9, "arcs_in_progress": 2, "height_m": 2.5,
            "mp_db": 2.0, "config": {"el_min_deg": 5, "el_max_deg": 25, "min_arcs_sector": 3},
            "sectors": [{"az_from": 0, "az_to": 30, "arcs": 2, "height_m": 2.4, "spread_m": 0.01, "mp_db": 1.5,
                         "tentative": True},
                        {"az_from": 180, "az_to": 210, "arcs": 3, "height_m": 2.5, "spread_m": 0.02, "mp_db": 2.1,
                         "tentative": False}]}
    rows = [r[0] for r in sector_rows(refl)]
    assert "collecting (2.40 m so far)" in rows[0] and " 2  " in rows[0]
    assert "2.50 m" in rows[1] and "2.1 dB" in rows[1] and "collecting" not in rows[1]
    text, role = summary(refl)
    assert "2.50 m below" in text and "(S)" in text and role == "warn"  # 180-210°: south (compass octant)
    assert "a sector needs 3 arcs" in reflection_text(refl, _st).plain
    none, _ = summary({"status": "none found", "arcs": 0, "arcs_evaluated": 7, "mp_db": 0.0})
    assert none.startswith("none found in 7 arcs")
    assert summary(None)[0] == "—" and "no reflection analysis" in reflection_text(None, _st).plain
