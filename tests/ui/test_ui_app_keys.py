"""Every key binding and screen of the monitor, driven with Textual's run_test pilot at 80×24
and 160×50, fed by snapshots made by pushing a demo recording through the real Pipeline."""

from __future__ import annotations

from pathlib import Path

import pytest
from uikit import screen_text, snapshots, sync

from livefix.ui.app import MonitorApp
from livefix.ui.dialogs import ConfirmScreen, HelpScreen, PromptScreen
from livefix.ui.feed import SnapshotFeed
from livefix.ui.sattable import SatTable
from livefix.ui.views import PageScreen

SIZES = [(80, 24), (160, 50)]


def make(step: int = 100, **kw) -> tuple[MonitorApp, SnapshotFeed]:  # noqa: ANN003
    feed = SnapshotFeed(snapshots(), "building-5min.lfr")
    feed.step(step)
    return MonitorApp(feed, clock=lambda: 0.0, **kw), feed


def names(feed: SnapshotFeed) -> list[str]:
    return [n for n, _ in feed.calls]


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_main_screen_shows_the_essentials(size: tuple[int, int]) -> None:
    app, feed = make()
    final = feed.latest
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        text = screen_text(app)
    assert "END OF DATA" in text and "RTK FIXED" in text
    assert "no profile" in text and "not recording" in text
    used = sum(1 for s in {(o.system, o.prn): o for o in final.sky if o.used}.values())
    assert f"used/trk/view {used}/" in text  # issue 15: used/tracked/in view on the status strip
    assert "N" in text and "Satellites" in text
    if size[0] >= 140:
        assert "Stability" in text and "Trends" in text and "Events" in text
        assert "CEP50/95" in text
    else:
        assert "CEP50" in text  # folded into the status strip
        assert "Trends" not in text


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_record_toggle_and_marker(size: tuple[int, int], tmp_path: Path) -> None:
    app, feed = make(record_dir=str(tmp_path))
    async with app.run_test(size=size) as pilot:
        await pilot.press("r")
        await pilot.pause()
        assert isinstance(app.screen, PromptScreen)
        await pilot.press("enter")
        await pilot.pause()
        assert feed.calls[-1][0] == "start_recording"
        assert str(feed.calls[-1][1][0]).startswith(str(tmp_path))
        assert "● REC" in screen_text(app)
        await pilot.press("r")
        await pilot.pause()
        assert feed.calls[-1][0] == "stop_recording" and "not recording" in screen_text(app)
        await pilot.press("m", *"bolt", "enter")
        await pilot.pause()
        assert feed.calls[-1] == ("add_marker", ("bolt",))
        await pilot.press("m", "escape")  # cancelled: no marker
        await pilot.pause()
        assert names(feed).count("add_marker") == 1


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_pause_speed_and_seek(size: tuple[int, int]) -> None:
    app, feed = make(step=3)
    async with app.run_test(size=size) as pilot:
        await pilot.press("space")
        await pilot.pause()
        assert "PAUSED" in screen_text(app)
        await pilot.press("space")
        await pilot.pause()
        assert "PAUSED" not in screen_text(app)
        await pilot.press("plus", "plus")
        await pilot.pause()
        assert "REPLAY ×4" in screen_text(app)  # issue 15: the header names the mode and speed
        await pilot.press("minus")
        await pilot.press("greater_than_sign", "less_than_sign")
        await pilot.pause()
    assert names(feed) == ["pause", "resume", "set_speed", "set_speed", "set_speed", "seek", "seek"]
    speeds = [a[0] for n, a in feed.calls if n == "set_speed"]
    assert speeds == [2.0, 4.0, 2.0]
    assert [a[0] for n, a in feed.calls if n == "seek"] == [30.0, -30.0]


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_pages_switch_and_come_back(size: tuple[int, int]) -> None:
    app, feed = make(step=3)
    async with app.run_test(size=size) as pilot:
        await pilot.press("2")
        await pilot.pause()
        assert isinstance(app.screen, PageScreen)
        text = screen_text(app)
        assert "Obstruction — where satellites" in text  # issue 15: conclusion first
        feed.step()  # new data while a page is up: the page follows it, the main screen too
        app.tick()
        await pilot.pause()
        assert app.screen.page.snap is feed.latest and app.snap is feed.latest
        await pilot.press("3")
        await pilot.pause()
        assert "C/N0 by elevation, 10° bands" in screen_text(app)  # issue 15: one band width
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, PageScreen)
        await pilot.press("2", "1")
        await pilot.pause()
        assert not isinstance(app.screen, PageScreen)


@sync
async def test_obstruction_page_names_the_wall_of_the_building_recording() -> None:
    # recordings/README.md: the building scenario blocks azimuth 250-330° below 60°.
    app, _ = make()
    async with app.run_test(size=(160, 50)) as pilot:
        await pilot.press("2")
        await pilot.pause()
        text = screen_text(app)
    line = next(ln for ln in text.splitlines() if "sector" in ln and "blocked below" in ln)
    az_from = int(line.split("sector ")[1].split("°")[0])
    assert 240 <= az_from <= 280 and "330°" in line and "60°" in line


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_reference_keys(size: tuple[int, int]) -> None:
    app, feed = make()
    async with app.run_test(size=size) as pilot:
        await pilot.press("a")
        await pilot.press("e", *"1,2,3.5", "enter")
        await pilot.press("e", *"91, 7, 1", "enter")  # out of range: refused, no call
        await pilot.pause()
    assert feed.calls == [("set_reference_to_mean", ()), ("set_reference", (1.0, 2.0, 3.5))]


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_reset_asks_first(size: tuple[int, int]) -> None:
    app, feed = make()
    async with app.run_test(size=size) as pilot:
        await pilot.press("z")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("n", "z", "y")
        await pilot.pause()
    assert names(feed) == ["reset_statistics"]


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_sort_cycles_the_table(size: tuple[int, int]) -> None:
    app, feed = make()
    async with app.run_test(size=size) as pilot:
        table = app.query_one(SatTable)
        assert table.rows[0][1].system == "G"
        await pilot.press("s")  # by C/N0, strongest first
        await pilot.pause()
        cn0s = [o.cn0 for _, o in table.rows if o.cn0 is not None]
        assert cn0s == sorted(cn0s, reverse=True) and table.rows[0][1].cn0 == max(cn0s)
        await pilot.press("s")  # by elevation
        elevs = [o.elev for _, o in table.rows if o.elev is not None]
        assert elevs == sorted(elevs, reverse=True)
        await pilot.press("s", "s")
        assert table.sort == "system"


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_help_overlay(size: tuple[int, int]) -> None:
    app, _ = make()
    async with app.run_test(size=size) as pilot:
        await pilot.press("question_mark")
        await pilot.pause()
        assert isinstance(app.screen, HelpScreen)
        assert "reset statistics" in screen_text(app)
        await pilot.press("q")  # closes help, does not quit
        await pilot.pause()
        assert not isinstance(app.screen, HelpScreen) and app.is_running
        await pilot.press("f1", "escape")
        await pilot.pause()
        assert not isinstance(app.screen, HelpScreen)


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_quit_asks_while_recording(size: tuple[int, int], tmp_path: Path) -> None:
    app, feed = make(record_dir=str(tmp_path))
    async with app.run_test(size=size) as pilot:
        await pilot.press("r", "enter", "q")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("n")
        await pilot.pause()
        assert app.is_running and app.recording
        await pilot.press("q", "y")
        await pilot.pause()
    assert names(feed) == ["start_recording", "stop_recording"]
    assert app.return_code == 0


@sync
async def test_quit_without_recording_exits_at_once() -> None:
    app, feed = make()
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("q")
        await pilot.pause()
    assert app.return_code == 0 and feed.calls == []
