"""The monitor app: one main screen of panels plus two full pages, fed by Session snapshots.

The UI thread never waits on I/O or analysis: a timer (at most 5 Hz) reads `feed.latest`, an
immutable Snapshot, and repaints only when it changed. Control keys call the feed's methods;
whatever the feed does not offer (e.g. speed on a live port) is reported, not failed.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.filter import LineFilter, Monochrome, NoColor
from textual.screen import ModalScreen
from textual.widgets import Footer

from livefix.pipeline import Snapshot
from livefix.refpoint import parse_ref
from livefix.ui import bands
from livefix.ui import palette as pal_mod
from livefix.ui.dialogs import ConfirmScreen, HelpScreen, PromptScreen
from livefix.ui.events import EventList
from livefix.ui.fmt import dig
from livefix.ui.reflect import obstruction_page
from livefix.ui.sattable import SatTable
from livefix.ui.skyplot import SkyPlot
from livefix.ui.stability import Stability
from livefix.ui.status import Mode, StatusStrip
from livefix.ui.trends import Trends
from livefix.ui.views import PageScreen, signals_text

Verdict = Callable[[dict[str, Any]], list[Any]]
STALE_LINKS = frozenset({"stalled", "lost", "reconnecting"})
SPEED_RANGE = (0.25, 64.0)


class MonitorApp(App[int]):
    CSS_PATH = str(Path(__file__).with_name("app.tcss"))  # absolute: subclasses live elsewhere
    TITLE = "livefix"
    ENABLE_COMMAND_PALETTE = False  # the framework's palette offers its own themes, not livefix's
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (100, "-medium"), (140, "-wide")]
    VERTICAL_BREAKPOINTS = [(0, "-short"), (30, "-tall")]
    # footer words are short so that every key that works fits in 80 columns
    BINDINGS = [
        Binding("r", "record", "rec"),
        Binding("m", "marker", "mark"),
        Binding("space", "pause", "pause", key_display="spc"),
        Binding("plus", "speed(2.0)", "fast"),
        Binding("minus", "speed(0.5)", "slow"),
        Binding("greater_than_sign", "seek(30)", "seek +30s", show=False),
        Binding("less_than_sign", "seek(-30)", "seek -30s", show=False),
        Binding("1", "show_page('main')", "main", show=False),
        Binding("2", "show_page('sky')", "sky"),
        Binding("3", "show_page('signal')", "signal"),
        Binding("a", "anchor", "ref"),
        Binding("e", "enter_ref", "type ref", show=False),
        Binding("z", "reset", "reset stats", show=False),
        Binding("s", "sort", "sort", show=False),
        Binding("question_mark,f1", "help", "help", key_display="?"),
        Binding("q", "quit", "quit"),
        Binding("ctrl+q", "quit", "quit", show=False, priority=True),
    ]
    HELP_ROWS = [
        ("r", "start / stop recording (asks for a file name)"), ("m", "add a marker with a typed note"),
        ("space", "pause / resume (file replay, simulator)"),
        ("+  -", "speed up / down (file replay, simulator)"),
        (">  <", "seek 30 s forward / back (file replay)"), ("1  2  3", "main / obstruction map / signals"),
        ("a", "set the reference to the current mean position"),
        ("e", "type a reference: lat, lon, ellipsoidal height"), ("z", "reset statistics (asks first)"),
        ("s", "change the satellite table sort"), ("?  F1", "this help"),
        ("q", "quit (asks first while recording)"), ("Esc", "back / close"),
        ("band", "satellite table: band from the NMEA 4.11 GSV signal ID"), *bands.help_rows(),
    ]

    def __init__(self, feed: Any, *, palette: pal_mod.Palette | None = None, ascii_only: bool = False,
                 verdict: Verdict | None = None, profile_name: str = "", record_dir: str = ".",
                 clock: Callable[[], float] = time.monotonic, refresh_hz: float = 5.0,
                 quiet_after_s: float = 3.0) -> None:
        super().__init__()
        self.feed = feed
        self.palette = palette or pal_mod.load(pal_mod.DEFAULT_THEME)
        self.ascii_only = ascii_only
        self.verdict_fn, self.profile_name = verdict, profile_name
        self.record_dir = record_dir
        self.clock, self.refresh_s = clock, 1.0 / min(5.0, max(0.1, refresh_hz))
        self.quiet_after_s = quiet_after_s
        self.repaints = 0
        self.paused = False
        self.recording: str | None = getattr(feed, "recording", None) if isinstance(
            getattr(feed, "recording", None), str) else None
        self.snap: Snapshot | None = None
        self._seq: int | None = None
        self._changed_at = clock()
        self._frozen: float | None = None
        self._link: str | None = None
        self._rec_touched = False  # the operator toggled recording here: trust self.recording
        self._link_at = self._changed_at
        if ascii_only:
            self.add_class("-ascii")  # app.tcss: no ellipsis glyph, plain dialog borders
        self.register_theme(self.palette.textual)
        self.theme = self.palette.textual.name

    # -- layout --------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        extra = " -ascii" if self.ascii_only else ""
        yield StatusStrip(id="status")
        with Horizontal(id="middle"):
            with Vertical(id="sky-panel", classes="panel" + extra):
                yield SkyPlot(id="sky")
            with Vertical(id="sats-panel", classes="panel" + extra):
                yield SatTable(id="sats")
            with Vertical(id="stab-panel", classes="panel" + extra):
                yield Stability(id="stab")
        with Horizontal(id="bottom"):
            with Vertical(id="stab2-panel", classes="panel" + extra):
                yield Stability(id="stab2")
            with Vertical(id="trend-panel", classes="panel" + extra):
                yield Trends(id="trends")
            with Vertical(id="event-panel", classes="panel" + extra):
                yield EventList(id="events")
        yield Footer(compact=True)

    TITLES = {"sky-panel": "Sky, N up, CAPS used", "sats-panel": "Satellites", "stab-panel": "Stability",
              "stab2-panel": "Stability",
              "trend-panel": "Trends", "event-panel": "Events"}

    SUBTITLES = {"event-panel": "receiver UTC; h = host clock"}

    def on_mount(self) -> None:
        # keep references: App.query_one searches the *active* screen, which may be a page or dialog
        self.panels = {pid: self.query_one(f"#{pid}") for pid in self.TITLES}
        self.status_strip = self.query_one(StatusStrip)
        self.sky_plot = self.query_one(SkyPlot)
        self.sat_table = self.query_one(SatTable)
        self.stabs = list(self.query(Stability))
        self.trends = self.query_one(Trends)
        self.event_list = self.query_one(EventList)
        for pid, title in self.TITLES.items():
            self.panels[pid].border_title = title
        # the legend fits the 80-column sky panel (about 26 cells of border)
        self.panels["sky-panel"].border_subtitle = (
            "#@Oo strong>weak - none" if self.ascii_only else "◉●◐○ strong→weak ◌ none")
        self.install_screen(PageScreen(obstruction_page, "sky"), "sky")  # with reflections (ui/reflect.py)
        self.install_screen(PageScreen(signals_text, "signal"), "signal")
        self.tick()
        self.set_interval(self.refresh_s, self.tick)

    # -- the refresh timer ---------------------------------------------------------------
    def tick(self) -> None:
        """Read the newest snapshot and repaint if anything visible changed (<= 5 Hz)."""
        snap = getattr(self.feed, "latest", None)
        if snap is None:
            return
        now = self.clock()
        changed = snap.seq != self._seq
        if changed:
            self._seq, self._changed_at = snap.seq, now
        if snap.link != self._link:
            self._link, self._link_at = snap.link, now
        quiet = now - self._changed_at
        if snap.link in STALE_LINKS:
            stale: float | None = now - self._link_at
        elif quiet > self.quiet_after_s and not snap.finished and not self.paused:
            stale = quiet
        else:
            stale = None
        was, self._frozen = self._frozen, stale
        if not changed and stale is None and was is None:
            return
        if not changed and stale is not None and was is not None and int(stale) == int(was):
            return  # nothing new to show; the stale counter moves once a second
        self.render_snapshot(snap)

    def get_line_filters(self) -> list[LineFilter]:
        """NO_COLOR means no colour codes at all (bold/reverse/underline stay), not greyscale."""
        filters = list(super().get_line_filters())
        if self.no_color:
            filters = [f for f in filters if not isinstance(f, Monochrome)] + [NoColor()]
        return filters

    def source(self) -> Any:
        """The object that paces the data: the session's source, or the feed itself."""
        return getattr(self.feed, "source", self.feed)

    def can(self, what: str) -> bool:
        """Whether the current source supports a control (the footer shows only those keys)."""
        src = self.source()
        if what == "speed":
            return hasattr(self.feed, "set_speed") and self.current_speed() is not None
        if not callable(getattr(self.feed, what, None)):
            return False
        return what not in self.SOURCE_CONTROLS or callable(getattr(src, what, None))

    def mode(self) -> Mode:
        src = self.source()
        pos, length = getattr(src, "position_s", None), getattr(src, "length_s", None)
        return Mode(replay=self.can("seek"), speed=self.current_speed() if self.can("speed") else None,
                    position_s=pos if isinstance(pos, (int, float)) else None,
                    length_s=length if isinstance(length, (int, float)) else None)

    def render_snapshot(self, snap: Snapshot) -> None:
        self.snap = snap
        self.repaints += 1
        if self.recording is None and snap.recording and not self._rec_touched:
            self.recording = snap.recording  # e.g. started with --record
        rec = self.recording
        session = dig(snap.analysis, "stream", "duration_s")  # stream time since the first byte
        self.status_strip.show(snap, session if isinstance(session, (int, float)) else None,
                               self.verdict_text(snap.analysis), self._frozen, rec, self.paused, self.mode())
        stale = self._frozen is not None
        for pid, panel in self.panels.items():
            panel.set_class(stale, "-stale")
            if pid != "sky-panel":
                panel.border_subtitle = "STALE — last data" if stale else self.SUBTITLES.get(pid, "")
        self.sky_plot.show(snap.sky, dig(snap.analysis, "sky", "grid"))
        self.sat_table.show(snap.sky, snap.mono)
        for stab in self.stabs:
            stab.show(snap.analysis)
        self.trends.show(snap.analysis.get("trend"))
        self.event_list.show(snap.analysis.get("events"))
        if isinstance(self.screen, PageScreen):
            self.screen.show(snap)

    def verdict_text(self, analysis: dict[str, Any]) -> tuple[str, str]:
        if self.verdict_fn is None:
            return ("none: no profile to judge against (--profile NAME)", "dim")
        try:
            results = list(self.verdict_fn(analysis))
        except Exception as exc:  # a profile bug must not take the monitor down
            return (f"profile error: {exc}", "bad")
        failed = [r for r in results if not getattr(r, "passed", False)]
        label = f"vs {self.profile_name}: " if self.profile_name else ""
        if not results:
            return (f"{label}no checks", "dim")
        if failed:
            names = ", ".join(str(getattr(r, "name", "?")) for r in failed[:3])
            return (f"{label}FAIL {len(failed)} of {len(results)} ({names})", "bad")
        return (f"{label}PASS {len(results)}/{len(results)}", "ok")

    # -- actions -------------------------------------------------------------------------
    SOURCE_CONTROLS = frozenset({"pause", "seek"})  # the session passes these to its source
    ACTION_NEEDS = {"pause": "pause", "speed": "speed", "seek": "seek", "record": "start_recording",
                    "marker": "add_marker"}

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if isinstance(self.screen, ModalScreen):
            return False
        need = self.ACTION_NEEDS.get(action)
        return need is None or self.can(need)

    def _call(self, name: str, *args: Any) -> bool:
        fn = getattr(self.feed, name, None)
        if fn is None:
            self.notify(f"not available for this source ({name})", severity="warning")
            return False
        try:
            ok = fn(*args)
        except Exception as exc:  # the session reports trouble as one line; keep running
            self.notify(f"{name}: {exc}", severity="error")
            return False
        if ok is False:  # the session's way of saying "this source cannot do that"
            self.notify(f"{name.replace('_', ' ')} is not available for this source", severity="warning")
            return False
        return True

    def action_record(self) -> None:
        self._rec_touched = True
        if self.recording:
            path = self.recording
            if self._call("stop_recording"):
                self.recording = None
                self.notify(f"recording stopped: {path}")
            self._repaint()
            return
        stamp = time.strftime("%Y%m%dT%H%M%SZ", time.gmtime())
        default = f"{self.record_dir.rstrip('/')}/livefix-{stamp}.lfr"

        def done(path: str | None) -> None:
            if path and path.strip() and self._call("start_recording", path.strip()):
                self.recording = path.strip()
                self.notify(f"recording to {self.recording}")
            self._repaint()

        self.push_screen(PromptScreen("Record to file:", default), done)

    def action_marker(self) -> None:
        def done(note: str | None) -> None:
            if note is not None and self._call("add_marker", note.strip()):
                self.notify(f"marker added: {note.strip() or '(no note)'}")

        self.push_screen(PromptScreen("Marker note:", placeholder="e.g. antenna moved 1 m north"), done)

    def action_pause(self) -> None:
        if self._call("resume" if self.paused else "pause"):
            self.paused = not self.paused
            self.notify("paused — data keeps being read and recorded" if self.paused else "resumed")
            self._repaint()

    def current_speed(self) -> float | None:
        """Replay speed of the feed's source (0 = as fast as possible), None if it has none."""
        src = getattr(self.feed, "source", self.feed)
        cur = getattr(src, "speed", None)
        return float(cur) if isinstance(cur, (int, float)) and not isinstance(cur, bool) else None

    def action_speed(self, factor: float) -> None:
        cur = self.current_speed()
        if cur is None or not hasattr(self.feed, "set_speed"):
            self.notify("speed applies to file replay only", severity="warning")
            return
        if cur <= 0:  # as fast as possible: slower steps down from the top of the range
            new = SPEED_RANGE[1] if factor < 1 else 0.0
        else:
            new = max(SPEED_RANGE[0], min(SPEED_RANGE[1], cur * factor))
        if self._call("set_speed", new or None):
            self.notify("replay speed: as fast as possible" if not new else f"replay speed ×{new:g}")
            self._repaint()

    def action_seek(self, delta: float) -> None:
        if self._call("seek", float(delta)):
            self.notify(f"seek {delta:+.0f} s")

    def action_show_page(self, name: str) -> None:
        while len(self.screen_stack) > 1:
            self.pop_screen()
        if name != "main":
            self.push_screen(name)
            if self.snap is not None and isinstance(self.screen, PageScreen):
                self.screen.show(self.snap)

    def action_anchor(self) -> None:
        if self._call("set_reference_to_mean"):
            self.notify("reference set to the current mean position")

    def action_enter_ref(self) -> None:
        def done(text: str | None) -> None:
            if not text:
                return
            try:
                lat, lon, h = parse_ref(text)
            except ValueError as exc:
                self.notify(str(exc), severity="error")
                return
            if self._call("set_reference", lat, lon, h):
                self.notify(f"reference set to {lat:.8f}, {lon:.8f}, {h:.3f} m")

        self.push_screen(PromptScreen("Reference (lat, lon, ellipsoidal h in m):",
                                      placeholder="51.5, -0.12, 45.0"), done)

    def action_reset(self) -> None:
        def done(yes: bool | None) -> None:
            if yes and self._call("reset_statistics"):
                self.notify("statistics reset")

        self.push_screen(ConfirmScreen("Reset all statistics (CEP, drift, availability …)?"), done)

    def action_sort(self) -> None:
        self.notify(f"satellites sorted by {self.sat_table.cycle_sort()}")

    def action_help(self) -> None:
        self.push_screen(HelpScreen(self.HELP_ROWS))

    async def action_quit(self) -> None:
        if not self.recording:
            self.exit(0)
            return

        def done(yes: bool | None) -> None:
            if yes:
                self._call("stop_recording")
                self.recording = None
                self.exit(0)

        self.push_screen(ConfirmScreen(f"Recording to {self.recording} is running. Stop it and quit?"), done)

    def _repaint(self) -> None:
        if self.snap is not None:
            self.render_snapshot(self.snap)
