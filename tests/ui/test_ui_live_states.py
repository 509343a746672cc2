"""Stale/lost data, live resizing, NO_COLOR, profile verdicts and a real Session feeding the app."""

from __future__ import annotations

import dataclasses
import time
from pathlib import Path

import pytest
from uikit import screen_text, snapshots, sync

from livefix.ui.app import MonitorApp
from livefix.ui.feed import SnapshotFeed


def feed_of(*snaps) -> SnapshotFeed:  # noqa: ANN002
    return SnapshotFeed(list(snaps), "building-5min.lfr")


@sync
async def test_lost_receiver_is_loud_and_last_data_stays() -> None:
    base = snapshots()[3]
    lost = dataclasses.replace(base, seq=base.seq + 1, link="lost", link_detail="device vanished")
    feed = feed_of(base, lost)
    now = [0.0]
    app = MonitorApp(feed, clock=lambda: now[0])
    async with app.run_test(size=(160, 50)) as pilot:
        await pilot.pause()
        # issue 15: a feed that can seek is a replay and says so (LIVE only for live sources)
        assert "REPLAY" in screen_text(app) and not app.query_one("#sats-panel").has_class("-stale")
        feed.step()
        now[0] = 12.0
        app.tick()
        await pilot.pause()
        now[0] = 20.0
        app.tick()
        await pilot.pause()
        text = screen_text(app)
        assert app.query_one("#sats-panel").has_class("-stale")
    assert "LOST" in text and "device vanished" in text
    assert "8 s — last data kept, marked stale" in text
    assert "STALE" in text  # border subtitles: not colour alone
    assert "USED" in text and "CEP50/95" in text  # the last figures are still on screen


@sync
async def test_quiet_feed_without_new_snapshots_is_marked() -> None:
    base = snapshots()[3]
    assert base.link == "streaming" and not base.finished
    now = [0.0]
    app = MonitorApp(feed_of(base), clock=lambda: now[0], quiet_after_s=3.0)
    async with app.run_test(size=(160, 50)) as pilot:
        now[0] = 2.0
        app.tick()
        await pilot.pause()
        assert "NO UPDATES" not in screen_text(app)
        now[0] = 7.0
        app.tick()
        await pilot.pause()
        assert "NO UPDATES 7 s" in screen_text(app)


@sync
async def test_live_resize_folds_and_unfolds_panels() -> None:
    feed = feed_of(*snapshots())
    feed.step(100)
    app = MonitorApp(feed, clock=lambda: 0.0)
    async with app.run_test(size=(160, 50)) as pilot:
        stab, stab2 = app.query_one("#stab-panel"), app.query_one("#stab2-panel")
        trend = app.query_one("#trend-panel")
        assert stab.display and not stab2.display and trend.display
        await pilot.resize_terminal(100, 30)
        await pilot.pause()
        assert not stab.display and stab2.display and not trend.display
        await pilot.resize_terminal(80, 24)
        await pilot.pause()
        # issue 15: at 80x24 the bottom row stays for the last events; stability is in the strip
        assert not stab.display and not stab2.display and app.query_one("#event-panel").display
        assert "CEP50" in screen_text(app)
        await pilot.resize_terminal(60, 16)  # below the supported size: still no crash
        await pilot.pause()
        await pilot.resize_terminal(160, 50)
        await pilot.pause()
        assert stab.display
        regions = [app.query_one(f"#{p}").region for p in ("sky-panel", "sats-panel", "stab-panel")]
        for a, b in zip(regions, regions[1:], strict=False):
            assert not a.overlaps(b)


@sync
async def test_no_color_keeps_every_state_readable(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("NO_COLOR", "1")
    base = snapshots()[3]
    lost = dataclasses.replace(base, link="lost")
    app = MonitorApp(feed_of(lost), clock=lambda: 0.0)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        text = screen_text(app)
    assert app.no_color
    assert "LOST" in text and "USED" in text and "trk" in text and "view" in text


@sync
async def test_verdict_from_a_real_profile() -> None:
    from livefix.check.profile import builtin_names, evaluate, load_profile

    prof = load_profile(builtin_names()[0])
    final = snapshots()[-1]
    results = evaluate(prof, final.analysis)
    failed = [r for r in results if not r.passed]
    app = MonitorApp(feed_of(final), clock=lambda: 0.0,
                     verdict=lambda a: evaluate(prof, a), profile_name="p")
    async with app.run_test(size=(160, 50)) as pilot:
        await pilot.pause()
        text = screen_text(app)
    if failed:
        assert f"p: FAIL {len(failed)} of {len(results)}" in text
    else:
        assert f"p: PASS {len(results)}/{len(results)}" in text


@sync
async def test_a_broken_profile_does_not_take_the_monitor_down() -> None:
    def boom(analysis: dict) -> list:
        raise KeyError("position")

    app = MonitorApp(feed_of(snapshots()[-1]), clock=lambda: 0.0, verdict=boom)
    async with app.run_test(size=(160, 50)) as pilot:
        await pilot.pause()
        assert "profile error" in screen_text(app)


@sync
async def test_real_session_over_the_simulator_with_recording_key(tmp_path: Path) -> None:
    import threading

    from livefix.pipeline import run_items
    from livefix.record.reader import is_recording
    from livefix.session import Session
    from livefix.sources.sim import SimSource

    def source() -> SimSource:  # 60 s of the rooftop scenario, as fast as possible, finite
        return SimSource("rooftop", rate_hz=10, speed=0, duration=60.0)

    session = Session(source()).start()
    try:
        app = MonitorApp(session, record_dir=str(tmp_path))
        async with app.run_test(size=(160, 50)) as pilot:
            await pilot.press("r", "enter")  # the prompt offers a new file in record_dir
            await pilot.pause()
            assert app.recording and app.recording.startswith(str(tmp_path))
            out = Path(app.recording)
            deadline = time.monotonic() + 30
            while not session.done and time.monotonic() < deadline:
                await pilot.pause(0.1)
            await pilot.pause(0.3)
            app.tick()
            await pilot.pause()
            text = screen_text(app)
            await pilot.press("2")  # pages keep working with live ticks underneath
            await pilot.pause(0.3)
            await pilot.press("1", "r")
            await pilot.pause()
    finally:
        session.stop()
    assert session.done and "END OF DATA" in text
    # the screen agrees with an independent headless pass of the same simulated stream
    ref = run_items(source().items(threading.Event())).snapshot()
    ttff = ref.analysis["fix"]["ttff_s"]
    assert ttff is not None and f"TTFF          {ttff:.0f} s" in text
    assert out.exists() and is_recording(str(out))
