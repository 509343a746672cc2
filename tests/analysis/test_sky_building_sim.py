"""The simulator's `building` scenario through the whole pipeline: the wall is found as a sector."""

from __future__ import annotations

from livefix.pipeline import run_items
from livefix.sim import Scenario, SimReceiver
from livefix.sources.base import Chunk


def _angle_diff(a: float, b: float) -> float:
    return abs((a - b + 180.0) % 360.0 - 180.0)


def test_building_wall_sector_within_10_degrees() -> None:
    sc = Scenario.load("building")
    wall = sc.masks[0]  # the scenario's own wall (in view but not tracked below el_below)

    def items():  # noqa: ANN202
        # short sessions spread over a day so satellites visit most of the sky; only the last
        # seconds of each (after the first fix) are fed
        mono = 0.0
        for k in range(24):
            start = sc.start_utc + k * 3600.0
            rx = SimReceiver(sc, rate_hz=1, seed=k + 1, start_utc=start)
            for t, data in rx.epochs(duration=50):
                if t >= 44:
                    mono += 1.0
                    yield Chunk(mono, start + t, data)

    snap = run_items(items()).snapshot().analysis
    assert snap["internal_errors"] == 0, snap["last_error"]
    sky = snap["sky"]
    assert len(sky["obstructed"]) == 1, sky["obstructed"]
    sec = sky["obstructed"][0]
    assert _angle_diff(sec["az_from"], wall.az_from) <= 10 and _angle_diff(sec["az_to"], wall.az_to) <= 10
    assert abs(sec["below_el"] - wall.el_below) <= 10
    assert sky["clear_above_deg"] is not None and sky["clear_above_deg"] >= wall.el_below - 10
