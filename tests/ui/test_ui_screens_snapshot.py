"""Screen snapshots (pytest-textual-snapshot) of the monitor fed by a fixed recording with a
fixed clock: the demo recording pushed through the real Pipeline, no live threads.
Regenerate after an intended change with `pytest tests/ui --snapshot-update`."""

from __future__ import annotations

import pytest
from uikit import snapshots

from livefix.ui.app import MonitorApp
from livefix.ui.feed import SnapshotFeed
from livefix.ui.palette import load


def app_at(step: int, theme: str = "dark", ascii_only: bool = False) -> MonitorApp:
    feed = SnapshotFeed(snapshots(), "building-5min.lfr")
    feed.step(step)
    return MonitorApp(feed, palette=load(theme), ascii_only=ascii_only, clock=lambda: 0.0)


@pytest.mark.parametrize("size", [(160, 50), (100, 30), (80, 24)])
def test_main_screen(snap_compare, size: tuple[int, int]) -> None:  # noqa: ANN001
    assert snap_compare(app_at(100), terminal_size=size)


def test_main_screen_daylight_ascii(snap_compare) -> None:  # noqa: ANN001
    assert snap_compare(app_at(4, "daylight", ascii_only=True), terminal_size=(120, 40))


def test_obstruction_page(snap_compare) -> None:  # noqa: ANN001
    assert snap_compare(app_at(100, "mono"), press=["2"], terminal_size=(100, 30))


def test_signal_page(snap_compare) -> None:  # noqa: ANN001
    assert snap_compare(app_at(100), press=["3"], terminal_size=(100, 30))
