"""Satellite table as a line-API widget: each visible row is one Strip, so a new snapshot
re-renders only rows whose text changed (no DataTable cell storm, no cursor reset)."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from rich.segment import Segment
from rich.style import Style
from textual.geometry import Size
from textual.scroll_view import ScrollView
from textual.strip import Strip

from livefix.ui.bands import BAND_WIDTH, band
from livefix.ui.fmt import asciify, bar, cn0_grade
from livefix.ui.panel import ascii_scrollbars

SYSTEM_ORDER = "GRECJIS"
# C/N0 moves by a dB or two every second; the C/N0 sort uses a value held until the signal moves
# by this much, so rows do not swap on noise (common practice: displays round C/N0 to 1 dB and
# epoch-to-epoch noise is about 1 dB)
CN0_HYSTERESIS_DB = 3.0


def _tie(o: Any) -> tuple[int, int, str]:
    """Every sort ends on constellation, satellite number and signal: equal keys never swap."""
    return (SYSTEM_ORDER.find(o.system), o.prn, o.signal)


# sort key name -> (label, key function over (SatObs, held C/N0)); cycled with the sort binding
SORTS: dict[str, tuple[str, Callable[[Any, float], Any]]] = {
    "system": ("system/PRN", lambda o, c: _tie(o)),
    "cn0": ("C/N0", lambda o, c: (-c, *_tie(o))),
    "elev": ("elevation", lambda o, c: (-(o.elev if o.elev is not None else -99), *_tie(o))),
    "used": ("used first", lambda o, c: (not o.used, o.cn0 is None, *_tie(o))),
}
HEAD = " S PRN band   elev azim C/N0 {bar} use  age"
BAR_W = 8
CN0_FULL = 55.0  # dB-Hz at a full bar (common practice: strong open-sky signals reach about 50)


class SatTable(ScrollView, can_focus=True):
    DEFAULT_CSS = "SatTable { height: 1fr; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.sort = "system"
        self.rows: list[tuple[str, Any]] = []  # (text, obs) in display order
        self.now = 0.0
        self.held: dict[tuple[str, int, str], float] = {}  # C/N0 the sort uses, per signal

    def _hold(self, sky: tuple[Any, ...]) -> None:
        """Move a held C/N0 only when the signal moved by the hysteresis; forget signals gone."""
        held: dict[tuple[str, int, str], float] = {}
        for o in sky:
            k = (o.system, o.prn, o.signal)
            new = -1.0 if o.cn0 is None else float(o.cn0)
            old = self.held.get(k)
            held[k] = new if old is None or abs(new - old) >= CN0_HYSTERESIS_DB or (new < 0) != (old < 0) else old
        self.held = held

    def on_mount(self) -> None:
        ascii_scrollbars(self)

    def cycle_sort(self) -> str:
        names = list(SORTS)
        self.sort = names[(names.index(self.sort) + 1) % len(names)]
        self._rebuild(self._obs)
        self.refresh()
        return SORTS[self.sort][0]

    _obs: tuple[Any, ...] = ()

    def show(self, sky: tuple[Any, ...], now: float) -> None:
        self._obs, self.now = sky, now
        self._rebuild(sky)

    def _row(self, o: Any, ascii_only: bool) -> str:
        cn0 = "—" if o.cn0 is None else f"{o.cn0:.0f}"
        age = max(0.0, self.now - o.last_seen_mono) if o.last_seen_mono else 0.0
        elev = "—" if o.elev is None else f"{o.elev:>2d}°"
        azim = "—" if o.azim is None else f"{o.azim:>3d}°"
        use = "USED" if o.used else ("trk " if o.cn0 is not None else "view")
        return (f" {o.system} {o.prn:>3d} {band(o.system, o.signal):<{BAND_WIDTH}} {elev:>4} {azim:>4} {cn0:>4} "
                f"{bar(o.cn0, CN0_FULL, BAR_W, ascii_only)} {use} {age:>3.0f}s")

    BAR_AT = 29  # column where the bar starts in a row

    def _rebuild(self, sky: tuple[Any, ...]) -> None:
        ascii_only = bool(getattr(self.app, "ascii_only", False))
        self._hold(sky)
        key, held = SORTS[self.sort][1], self.held
        ordered = sorted(sky, key=lambda o: key(o, held.get((o.system, o.prn, o.signal), -1.0)))
        new = [((asciify(r) if ascii_only else r), o) for o, r in ((o, self._row(o, ascii_only)) for o in ordered)]
        old = self.rows
        self.rows = new
        self.virtual_size = Size(len(HEAD) + 4, len(new) + 1)
        for i, (row, _) in enumerate(new):  # repaint only the changed lines
            if i >= len(old) or old[i][0] != row:
                self.refresh_line(i + 1 - int(self.scroll_offset.y))
        for i in range(len(new), len(old)):
            self.refresh_line(i + 1 - int(self.scroll_offset.y))

    def render_line(self, y: int) -> Strip:
        pal = self.app.palette  # type: ignore[attr-defined]
        w = self.size.width
        sx = int(self.scroll_offset.x)
        if y == 0:
            head = HEAD.format(bar="bar".center(BAR_W)) + f"   ↕ {SORTS[self.sort][0]}"
            if getattr(self.app, "ascii_only", False):
                head = asciify(head)
            return Strip([Segment(head, pal.style("head"))]).crop(sx, sx + w).extend_cell_length(
                w).apply_style(self.rich_style)
        i = y - 1 + int(self.scroll_offset.y)
        if i >= len(self.rows):
            return Strip.blank(w, self.rich_style)
        text, o = self.rows[i]
        grade = cn0_grade(o.cn0) if o.cn0 is not None else 0
        base: Style = pal.style("label-used" if o.used else "label-free")
        cut = self.BAR_AT
        segs = [Segment(text[:cut], base), Segment(text[cut:cut + BAR_W], pal.style(f"grade-{grade}")),
                Segment(text[cut + BAR_W:], base)]
        return Strip(segs).crop(sx, sx + w).extend_cell_length(w).apply_style(self.rich_style)
