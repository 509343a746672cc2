"""The header and the controls over real sources (issue 15 item 2): a file replay says REPLAY
with speed, position and length and pauses; the simulator says LIVE and pauses; a source that
cannot pause keeps the key out of the footer. Real Session threads, real files (demo recordings
made by our simulator)."""

from __future__ import annotations

import asyncio
import time
from pathlib import Path

from uikit import screen_text, sync

from livefix.session import Session
from livefix.sources.file import FileSource
from livefix.sources.sim import SimSource
from livefix.ui.app import MonitorApp

REC = Path(__file__).resolve().parents[2] / "recordings" / "rooftop-5min.lfr"


async def _until(pilot, app, needle: str, limit_s: float = 8.0) -> str:  # noqa: ANN001
    end = time.monotonic() + limit_s
    while True:
        app.tick()
        await pilot.pause()
        text = screen_text(app)
        if needle in text or time.monotonic() > end:
            return text
        await asyncio.sleep(0.1)


@sync
async def test_file_replay_says_replay_and_pauses() -> None:
    src = FileSource(str(REC), speed=2.0)
    session = Session(src).start()
    try:
        app = MonitorApp(session)
        async with app.run_test(size=(80, 24)) as pilot:
            # length: the recording runs from its first link event at 0 s to the end event at 300 s
            text = await _until(pilot, app, "/0:05:00")
            assert "REPLAY ×2 0:0" in text and "/0:05:00" in text, text.splitlines()[0]
            await pilot.press("space")
            text = await _until(pilot, app, "PAUSED")
            assert "PAUSED" in text and src.paused
            await pilot.press("space")
            text = await _until(pilot, app, "REPLAY")
            assert not src.paused and "REPLAY" in text
            assert "spc pause" in text.splitlines()[-1]
    finally:
        session.stop()
        src.close()
    assert session.pipeline.analyzer.internal_errors == 0


@sync
async def test_simulator_says_live_and_speed_keys_never_freeze_it() -> None:
    src = SimSource("rooftop", rate_hz=10, speed=1.0)
    session = Session(src).start()
    try:
        app = MonitorApp(session)
        async with app.run_test(size=(80, 24)) as pilot:
            text = await _until(pilot, app, "LIVE")
            assert "LIVE" in text and "REPLAY" not in text
            await pilot.press("plus", "plus")
            text = await _until(pilot, app, "LIVE ×4")
            assert "LIVE ×4" in text
            await pilot.press("minus", "minus")
            before = src.position_s
            text = await _until(pilot, app, "LIVE ")
            await asyncio.sleep(0.6)
            assert src.position_s > before  # still running at ×1 after + + - -
            await pilot.press("space")
            assert "PAUSED" in await _until(pilot, app, "PAUSED") and src.paused
    finally:
        session.stop()
    assert session.pipeline.analyzer.internal_errors == 0
