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
from livefix.ui.panel import ascii_scrollbars

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


def weak_name(z: dict[str, Any]) -> str:
    a0, a1 = z.get("az_from"), z.get("az_to")
    if not isinstance(a0, (int, float)) or not isinstance(a1, (int, float)):
        return DASH
    mid = (a0 + ((a1 - a0) % 360 or 360) / 2) % 360
    return (f"{compass(mid)} sector {a0:.0f}°–{a1:.0f}° at {num(z.get('el_from'), '.0f')}–"
            f"{num(z.get('el_to'), '.0f', '°')}: {num(z.get('below_curve_db'), '.1f')} dB under the curve")


def obstruction_text(snap: Snapshot | None, app: Any) -> Text:
    """The conclusion first (it must be above the fold at 80x24), then the map."""
    st, ascii_only = app.palette.style, bool(getattr(app, "ascii_only", False))
    t = Text(no_wrap=True)
    t.append("Obstruction — where satellites in view went untracked or weak\n", st("head"))
    sky = dig(snap.analysis if snap else None, "sky") or {}
    sig = dig(snap.analysis if snap else None, "signal") or {}
    t.append("clear above ", st("dim"))
    t.append(num(sky.get("clear_above_deg"), ".0f", "°"), st("value"))
    t.append("   visible share ", st("dim"))
    vs = sky.get("visible_share")
    t.append(DASH if vs is None else f"{vs * 100:.1f} %", st("value"))
    t.append("\nblocked: ", st("dim"))
    sectors = [x for x in sky.get("obstructed") or [] if isinstance(x, dict)]
    t.append("; ".join(sector_name(x) for x in sectors) or "none found", st("warn" if sectors else "value"))
    t.append(f"\nweak (≥ {num(sig.get('weak_sector_db'), '.0f')} dB under the C/N0 curve): ", st("dim"))
    weak = [x for x in sig.get("weak_sectors") or [] if isinstance(x, dict)]
    if not weak:
        t.append("none found", st("value"))
    for x in weak:
        t.append("\n  " + weak_name(x), st("warn"))
    t.append("\n\n")
    for ln in grid_lines(sky.get("grid"), ascii_only):
        t.append(ln + "\n")
    shades = SHADES_ASCII if ascii_only else SHADES_UNICODE
    t.append(f"\nkey: '{shades[1]}' clear  '{shades[2]}'…'{shades[5]}' rising untracked share  "
             "blank = never in view\n", st("dim"))
    return t


BAND_DEG = 10  # one elevation band width on this page, the same as the session's by_elevation


def signals_text(snap: Snapshot | None, app: Any) -> Text:
    st, ascii_only = app.palette.style, bool(getattr(app, "ascii_only", False))
    t = Text(no_wrap=True)
    t.append(f"C/N0 by elevation, {BAND_DEG}° bands — mean dB-Hz per constellation now\n\n", st("head"))
    bands = list(range(0, 90, BAND_DEG))
    per: dict[str, dict[int, list[float]]] = {}
    for o in snap.sky if snap else ():
        if o.cn0 is not None and o.elev is not None:
            b = min(bands[-1], max(0, o.elev) // BAND_DEG * BAND_DEG)
            per.setdefault(o.system, {}).setdefault(b, []).append(o.cn0)
    t.append("sys " + "".join(f"{b:>2}-{b + BAND_DEG:<3}" for b in bands) + "\n", st("dim"))
    for sysl in sorted(per, key=lambda s: "GRECJIS".find(s)):
        t.append(f" {sysl}  ", st("head"))
        for b in bands:
            v = per[sysl].get(b)
            t.append(f"{num(sum(v) / len(v) if v else None, '4.1f'):>5} ", st("value"))
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
    t.append("\n  weak sectors: ", st("dim"))
    zones = [weak_name(z) for z in sig.get("weak_sectors") or [] if isinstance(z, dict)]
    t.append("none" if not zones else "", st("value"))
    for z in zones:
        t.append("\n    " + z, st("warn"))
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
        yield Footer(compact=True)

    def on_mount(self) -> None:
        ascii_scrollbars(self.query_one(VerticalScroll))

    def show(self, snap: Snapshot) -> None:
        if snap is not self.page.snap:
            self.page.snap = snap
            self.page.refresh()
