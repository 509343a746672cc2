"""Secondary screens: the obstruction map in full and signal levels by elevation."""

from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widget import Widget
from textual.widgets import Footer

from livefix.pipeline import Snapshot
from livefix.ui.fmt import DASH, asciify_text, bar, dig, num

SHADES_UNICODE = (" ", "·", "░", "▒", "▓", "█")  # no data, clear, then rising untracked share
SHADES_ASCII = (" ", ".", ":", "x", "X", "#")
COMPASS = ("N", "NE", "E", "SE", "S", "SW", "W", "NW")


def compass(az: float) -> str:
    return COMPASS[int(((az % 360) + 22.5) // 45) % 8]


def sector_name(s: dict[str, Any]) -> str:
    a0, a1 = s.get("az_from"), s.get("az_to")
    if not isinstance(a0, (int, float)) or not isinstance(a1, (int, float)):
        return DASH
    mid = (a0 + ((a1 - a0) % 360) / 2) % 360
    return f"{compass(mid)} sector {a0:.0f}°–{a1:.0f}° blocked below {num(s.get('below_el'), '.0f', '°')}"


def grid_lines(grid: Any, ascii_only: bool) -> list[str]:
    """Elevation rows (top = high) × azimuth columns; shade = share of in-view time not tracked."""
    if not isinstance(grid, dict) or not grid.get("tracked"):
        return ["no obstruction data yet"]
    shades = SHADES_ASCII if ascii_only else SHADES_UNICODE
    az_step, el_step = grid.get("az_step") or 10, grid.get("el_step") or 10
    tr, un = grid.get("tracked") or [], grid.get("untracked") or []  # [el_row][az_col]
    n_az = max((len(r) for r in tr), default=0)
    out = []
    for j in reversed(range(len(tr))):
        row = []
        for i in range(n_az):
            t = (tr[j][i] if i < len(tr[j]) else 0) or 0
            u = (un[j][i] if j < len(un) and i < len(un[j]) else 0) or 0
            row.append(shades[0] if t + u == 0 else shades[1 + min(4, int(u / (t + u) * 5))])
        out.append(f"{j * el_step:>3.0f}° |" + "".join(row) + "|")
    out.append("     +" + "-" * n_az + "+")
    axis = [" "] * n_az
    for az in range(0, 360, 90):
        k = int(az // az_step)
        if k < len(axis):
            axis[k] = compass(az)[0]
    out.append("      " + "".join(axis) + f"   az {az_step:.0f}° per column")
    return out


class _Page(Widget):
    DEFAULT_CSS = "_Page { height: auto; padding: 0 1; text-wrap: nowrap; }"

    def __init__(self, builder: Any, **kw: Any) -> None:
        super().__init__(**kw)
        self.builder, self.snap = builder, None

    def render(self) -> Text:
        t = self.builder(self.snap, self.app)
        return asciify_text(t) if getattr(self.app, "ascii_only", False) else t


def obstruction_text(snap: Snapshot | None, app: Any) -> Text:
    st, ascii_only = app.palette.style, bool(getattr(app, "ascii_only", False))
    t = Text(no_wrap=True)
    t.append("Obstruction map — where satellites in view went untracked\n\n", st("head"))
    sky = dig(snap.analysis if snap else None, "sky") or {}
    for ln in grid_lines(sky.get("grid"), ascii_only):
        t.append(ln + "\n")
    shades = SHADES_ASCII if ascii_only else SHADES_UNICODE
    t.append(f"\nkey: '{shades[1]}' clear  '{shades[2]}'…'{shades[5]}' rising untracked share  "
             "blank = never in view\n\n", st("dim"))
    t.append("clear above ", st("dim"))
    t.append(num(sky.get("clear_above_deg"), ".0f", "°"), st("value"))
    t.append("   visible share ", st("dim"))
    vs = sky.get("visible_share")
    t.append(DASH if vs is None else f"{vs * 100:.1f} %", st("value"))
    t.append("\n\nBlocked sectors\n", st("head"))
    sectors = sky.get("obstructed") or []
    for s in sectors:
        if isinstance(s, dict):
            t.append("  " + sector_name(s) + "\n", st("warn"))
    if not sectors:
        t.append("  none found\n", st("dim"))
    return t


def signals_text(snap: Snapshot | None, app: Any) -> Text:
    st, ascii_only = app.palette.style, bool(getattr(app, "ascii_only", False))
    t = Text(no_wrap=True)
    t.append("Signal levels by elevation — mean C/N0 (dB-Hz) per constellation, now\n\n", st("head"))
    bands = list(range(0, 90, 15))
    per: dict[str, dict[int, list[int]]] = {}
    for o in snap.sky if snap else ():
        if o.cn0 is not None and o.elev is not None:
            per.setdefault(o.system, {}).setdefault(min(75, max(0, o.elev) // 15 * 15), []).append(o.cn0)
    t.append("sys  " + "".join(f"{b:>2}–{b + 15:<2}°      " for b in bands) + "\n", st("dim"))
    for sysl in sorted(per, key=lambda s: "GRECJIS".find(s)):
        t.append(f" {sysl}   ", st("head"))
        for b in bands:
            v = per[sysl].get(b)
            mean = sum(v) / len(v) if v else None
            t.append(f"{num(mean, '4.1f'):>5} ", st("value"))
            t.append(bar(mean, 55.0, 5, ascii_only), st("spark"))
            t.append(" ")
        t.append("\n")
    if not per:
        t.append("  no tracked satellites\n", st("dim"))
    sig = dig(snap.analysis if snap else None, "signal") or {}
    t.append("\nWhole session, all constellations\n", st("head"))
    for b in sig.get("by_elevation") or []:
        if isinstance(b, dict):
            t.append(f"  {num(b.get('from'), '.0f'):>3}–{num(b.get('to'), '.0f') + '°':<4} ", st("dim"))
            t.append(f"{num(b.get('mean'), '5.1f')} ", st("value"))
            t.append(bar(b.get("mean"), 55.0, 20, ascii_only) + "\n", st("spark"))
    t.append("  by system: ", st("dim"))
    t.append("  ".join(f"{k} {num(v, '.1f')}" for k, v in (sig.get("by_system") or {}).items()) or DASH)
    t.append("\n  weak for their elevation: ", st("dim"))
    weak = [w.get("sat", "?") for w in sig.get("weak") or [] if isinstance(w, dict)]
    t.append(", ".join(map(str, weak)) or "none", st("warn" if weak else "value"))
    return t


class PageScreen(Screen):
    """A full-screen page that the app feeds each tick through `show`."""

    BINDINGS = [("escape", "app.show_page('main')", "back")]

    def __init__(self, builder: Any, name: str) -> None:
        super().__init__(name=name)
        self.page = _Page(builder, id=f"page-{name}")

    def compose(self) -> ComposeResult:
        with VerticalScroll():
            yield self.page
        yield Footer()

    def show(self, snap: Snapshot) -> None:
        if snap is not self.page.snap:
            self.page.snap = snap
            self.page.refresh()
