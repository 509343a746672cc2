"""Issue 15 items 1 and 4: 80x24 is the design size. Every answer to "is this installation good?"
is on screen without scrolling at 80x24, 120x40 and 160x50; the footer holds only keys that work
and fits; dialogs fit; NO_COLOR emits no colour codes; ASCII mode draws ASCII only. The screen is
read back from the pilot (the compositor's strips), which is what the terminal receives."""

from __future__ import annotations

import re
from types import SimpleNamespace

import pytest
from rich.color import ColorSystem
from uikit import screen_text, snapshots, sync

from livefix.ui.app import MonitorApp
from livefix.ui.dialogs import ConfirmScreen
from livefix.ui.feed import SnapshotFeed

SIZES = [(80, 24), (120, 40), (160, 50)]
SGR = re.compile(r"\x1b\[([0-9;]*)m")


def feed(name: str = "building-5min.lfr", step: int = 1000) -> SnapshotFeed:
    f = SnapshotFeed(snapshots(name), name)
    f.step(step)  # default: the last snapshot, every panel has figures
    return f


def passing(analysis: dict) -> list:  # noqa: ANN001
    return [SimpleNamespace(name="cep95", passed=True), SimpleNamespace(name="availability", passed=True)]


def colour_params(app: MonitorApp) -> list[str]:
    """Every colour SGR parameter the screen would send to a truecolor terminal (30-38, 40-48,
    90-97, 100-107: ECMA-48 / xterm colour codes; 39 and 49 are 'default colour' and allowed)."""
    out = []
    for strip in app.screen._compositor.render_strips():
        for seg in strip:
            if seg.style is None:
                continue
            for m in SGR.finditer(seg.style.render("x", color_system=ColorSystem.TRUECOLOR)):
                params = m.group(1).split(";")
                i = 0
                while i < len(params):
                    p = int(params[i] or 0)
                    if p in (38, 48):
                        out.append(";".join(params[i:i + (3 if params[i + 1] == "5" else 5)]))
                        i += 3 if params[i + 1] == "5" else 5
                        continue
                    if 30 <= p <= 37 or 40 <= p <= 47 or 90 <= p <= 97 or 100 <= p <= 107:
                        out.append(str(p))
                    i += 1
    return out


@pytest.mark.parametrize("size", SIZES)
@sync
async def test_every_essential_is_on_screen(size: tuple[int, int]) -> None:
    f = feed(step=8)  # one snapshot every 30 s (uikit): the ninth is at 270 s, still streaming
    app = MonitorApp(f, clock=lambda: 0.0, verdict=passing, profile_name="rooftop")
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        text = screen_text(app)
    final = f.latest
    used = len({(o.system, o.prn) for o in final.sky if o.used})
    view = len({(o.system, o.prn) for o in final.sky})
    assert "verdict vs rooftop: PASS 2/2" in text  # the verdict says what it is judged against
    assert "RTK FIXED" in text and "age 0.1 s" in text  # 10 Hz recording: last epoch 0.1 s old
    assert re.search(rf"used/trk/view {used}/\d+/{view}\b", text)
    assert "DOP P " in text
    assert re.search(r"CEP50/95 0\.\d{3}/0\.\d{3} m", text) and "drift mm/h e " in text
    # the last event of the recording (recordings/README.md: RTK fixed after 150 s)
    assert "fix rtk_float -> rtk_fixed" in text
    assert "q quit" in text and "? help" in text and "palette" not in text  # no framework palette
    # 270 s since the first byte of a 299.9 s recording (5 min at 10 Hz: last epoch at 299.9 s)
    assert "REPLAY ×1 0:04:30/0:04:59" in text and "session 0:04:30" in text


@sync
async def test_footer_offers_only_keys_the_source_has() -> None:
    class LiveFeed(SnapshotFeed):  # a live port: no pause, speed or seek
        pause = resume = set_speed = seek = None  # type: ignore[assignment]

    live = LiveFeed(snapshots(), "tcp")
    live.step(1000)
    del live.speed
    app = MonitorApp(live, clock=lambda: 0.0)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        footer = screen_text(app).splitlines()[-1]
        await pilot.press("space", "plus")
        await pilot.pause()
        text = screen_text(app)
    assert "PAUSED" not in text and live.calls == []  # the keys do nothing, and say nothing
    assert "pause" not in footer and "fast" not in footer and "slow" not in footer
    assert "rec" in footer and "q quit" in footer


@sync
async def test_quit_dialog_text_fits_at_80x24() -> None:
    f = feed()
    f.recording = "/srv/site-survey/recordings/roof-north/livefix-20260512T130000Z.lfr"
    app = MonitorApp(f, clock=lambda: 0.0)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("q")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        box = app.screen.query_one("#prompt-box").region
        lines = screen_text(app).splitlines()[box.y:box.y + box.height]
        inside = "".join(ln[box.x + 1:box.x + box.width - 1] for ln in lines)
    assert box.right <= 80 and box.bottom <= 24
    whole = f"Recording to {f.recording} is running. Stop it and quit?"
    assert "".join(whole.split()) in "".join(inside.split())  # every character, wrapped not cut


@sync
async def test_no_color_sends_no_colour_codes(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("NO_COLOR", "1")
    app = MonitorApp(feed(), clock=lambda: 0.0)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        codes = colour_params(app)
        text = screen_text(app)
    assert codes == []  # no-color.org: NO_COLOR set -> no colour; bold/reverse stay
    assert "USED" in text and "END OF DATA" in text
    assert re.search(r"drift mm/h e -?\d+\.\d±\d", text)  # the slope with its 95 % half-width


@sync
async def test_colour_is_sent_without_no_color(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("NO_COLOR", raising=False)
    app = MonitorApp(feed(), clock=lambda: 0.0)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert colour_params(app)  # the scan can fail: with colour it finds codes


@pytest.mark.parametrize("keys", [(), ("2",), ("3",), ("question_mark",), ("m",), ("plus", "s")])
@pytest.mark.parametrize("name", ["building-5min.lfr", "rooftop-5min.lfr"])
@sync
async def test_ascii_mode_draws_ascii_only(name: str, keys: tuple[str, ...]) -> None:
    app = MonitorApp(feed(name), clock=lambda: 0.0, ascii_only=True)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        for k in keys:
            await pilot.press(k)
        await pilot.pause()
        text = screen_text(app)
    bad = sorted({ch for ch in text if ord(ch) > 127})
    assert bad == [], bad
