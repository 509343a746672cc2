"""Sky obstruction map on constructed epochs: named sectors, clear-above elevation, visible share."""

from __future__ import annotations

import pytest

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.sky import SkyMap
from livefix.state.epoch import Epoch, SatObs


def _sweep(blocked) -> SkyMap:  # noqa: ANN001
    """Satellites visiting every az/el cell, untracked where blocked(az, el) says so."""
    m = SkyMap(AnalysisConfig())
    t = 0
    for el in range(0, 90, 5):
        for az in range(0, 360, 10):
            sats = tuple(SatObs("G", k + 1, "", el + 2, az + 3, None if blocked(az + 3, el + 2) else 42, False)
                         for k in range(4))
            sats += tuple(SatObs("E", k + 1, "", 87, 183, 45, True) for k in range(4))  # always tracked
            m.on_epoch(Epoch(mono=t, wall=t, utc=None, quality=1, sats=sats))
            t += 1
    return m


def test_building_sector_found() -> None:
    m = _sweep(lambda az, el: 300 <= az < 340 and el < 35)
    snap = m.snapshot()
    assert snap["obstructed"] == [{"az_from": 300, "az_to": 340, "below_el": 35,
                                   "text": "blocked 300°–340° below 35°"}]
    assert snap["clear_above_deg"] == 35.0
    # above the 5° mask: 17 rows × 36 cells swept plus 18 × 36 epochs of the zenith group, each
    # 4 satellites; 4 columns × 6 rows (5–35°) blocked
    assert snap["visible_share"] == pytest.approx(1 - 24 / (17 * 36 + 18 * 36), abs=1e-4)


def test_sector_across_north_wraps() -> None:
    m = _sweep(lambda az, el: (az >= 350 or az < 20) and el < 20)
    assert [(s["az_from"], s["az_to"], s["below_el"]) for s in m.sectors()] == [(350, 20, 20)]


def test_below_mask_ignored_and_clear_sky() -> None:
    m = _sweep(lambda az, el: el < 5)  # only under the 5° mask
    snap = m.snapshot()
    assert snap["obstructed"] == [] and snap["clear_above_deg"] == 5.0 and snap["visible_share"] == 1.0


def test_grid_shape_and_cn0() -> None:
    m = _sweep(lambda az, el: False)
    g = m.snapshot()["grid"]
    assert len(g["tracked"]) == 18 and len(g["tracked"][0]) == 36
    assert g["cn0"][3][5] == 42.0 and g["untracked"][3][5] == 0


def test_no_data() -> None:
    snap = SkyMap(AnalysisConfig()).snapshot()
    assert snap["obstructed"] == [] and snap["clear_above_deg"] is None and snap["visible_share"] is None
