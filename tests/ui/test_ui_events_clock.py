"""Issue 15 item 3 (one clock story) and item 8 (readable rollback): the event list shows
receiver UTC or host time marked as such, collapses retry loops and repeats, and words a jump to
a receiver's default date."""

from __future__ import annotations

import pytest
from uikit import screen_text, snapshots, sync

from livefix.state.epoch import Event
from livefix.ui.app import MonitorApp
from livefix.ui.events import collapse, readable, row_text
from livefix.ui.feed import SnapshotFeed

GPS_EPOCH = 315964800.0  # 1980-01-06T00:00:00Z, the GPS time origin (IS-GPS-200)


def link(t: str, state: str, text: str) -> dict:
    return {"time": f"2026-05-12T{t}.000Z", "kind": "link", "text": text, "clock": "host", "state": state}


def test_event_json_names_its_clock() -> None:
    with_utc = Event(mono=1.0, wall=1_800_000_000.0, kind="note", text="x", utc=1_800_000_001.0)
    host_only = Event(mono=1.0, wall=1_800_000_000.0, kind="note", text="x")
    # hand arithmetic: 1 800 000 000 s = 20 833 days + 28 800 s -> 08:00:00 UTC
    assert with_utc.to_json()["clock"] == "receiver" and with_utc.to_json()["time"].endswith("T08:00:01.000Z")
    assert host_only.to_json()["clock"] == "host" and host_only.to_json()["time"].endswith("T08:00:00.000Z")


def test_a_reconnect_loop_is_one_row_with_its_tries() -> None:
    evs = [link("10:02:10", "streaming", "link streaming")]
    for k in range(12):  # twelve tries: connecting, lost, reconnecting (the TCP source's cycle)
        s = f"10:02:{11 + 3 * k:02d}"
        evs += [link(s, "connecting", "connecting"), link(s, "lost", "refused"), link(s, "reconnecting", "retry")]
    rows = collapse(evs)
    assert len(rows) == 2
    assert row_text(rows[1]) == "reconnecting, 12 tries since 10:02:11: retry"


def test_identical_repeats_count_and_different_ones_stay() -> None:
    ev = {"time": "2026-05-12T10:00:00.000Z", "kind": "checksum_burst", "text": "5 bad lines", "clock": "receiver"}
    rows = collapse([ev, dict(ev, time="2026-05-12T10:00:05.000Z"), dict(ev, text="9 bad lines")])
    assert [row_text(r) for r in rows] == ["5 bad lines (2 times since 10:00:00)", "9 bad lines"]


def test_jump_to_the_default_date_is_worded() -> None:
    step = GPS_EPOCH - 1778594629.9  # from 2026-05-12 back to 1980-01-06
    ev = {"time": "1980-01-06T00:00:00.000Z", "kind": "time_rollback", "step_s": step,
          "text": f"receiver time went back {-step:.3f} s"}
    # hand arithmetic: 1462629829.9 s / (365.25 * 86400 s) = 46.35 years
    assert readable(ev) == "receiver clock jumped back to its default date 1980-01-06 (46.3 years)"
    small = dict(ev, time="2026-05-12T10:00:00.000Z", step_s=-0.1, text="receiver time went back 0.100 s")
    assert readable(small) == "receiver time went back 0.100 s"  # a re-aligned fix time keeps its figure
    hours = dict(small, step_s=-7380.0)
    assert readable(hours) == "receiver clock went back 2 h 03 m"  # 7380 s = 2 h 3 min


@pytest.mark.parametrize("size", [(80, 24), (160, 50)])
@sync
async def test_host_times_are_marked_on_screen(size: tuple[int, int]) -> None:
    feed = SnapshotFeed(snapshots(), "building-5min.lfr")
    feed.step(1000)
    app = MonitorApp(feed, clock=lambda: 0.0)
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        text = screen_text(app)
    # link events carry only the (recorded) host clock; fix changes carry receiver UTC
    assert "13:10:00h link" in text and "13:07:30  fix_change" in text
    assert "h = host clock" in text


def test_undated_event_times_show_the_time_of_day_only() -> None:
    from livefix.timefmt import iso

    ev = {"time": iso(3600.5), "kind": "note", "text": "x", "clock": "receiver"}  # 01:00:00.5, no date
    assert collapse([ev])[0].time == "01:00:00"
