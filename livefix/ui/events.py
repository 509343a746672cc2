"""Event list, newest first (analysis["events"]); the kind is a word, never just a colour.

One clock story: an event stamped with receiver UTC shows that time; one that only has the host
clock is marked "h". Repeats collapse into one line ("reconnecting, 12 tries since 10:02:11"),
so a retry loop never pushes everything else off a small screen.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from typing import Any

from rich.text import Text

from livefix.dates import default_date
from livefix.report.escape import term_text
from livefix.ui.fmt import duration
from livefix.ui.panel import TextPanel

# event kind -> role; anything not listed is plain
KIND_ROLE: dict[str, str] = {
    "fix_lost": "bad", "jump": "warn", "interference": "warn", "stall": "stale", "link": "warn",
    "time_jump": "warn", "time_rollback": "warn", "receiver_restart": "warn", "checksum_burst": "warn",
    "time_fault": "warn", "receiver_date_invalid": "warn",
    "marker": "value", "recording": "value", "fix_regained": "ok",
}
RETRY_STATES = frozenset({"connecting", "lost", "reconnecting"})  # one reconnect loop
TRIES_STATE = "connecting"  # each try of the loop starts with this state
HOST_MARK = "h"  # after a time of day from the host clock
YEAR_S = 365.25 * 86400.0


@dataclass(slots=True)
class Row:
    """One displayed line: a single event or a collapsed run of repeats."""

    time: str  # HH:MM:SS of the first event of the run
    host: bool  # that time is from the host clock
    kind: str
    text: str
    count: int = 1
    tries: int = 0
    key: tuple[str, str] = ("", "")


def _clock(ev: dict[str, Any]) -> tuple[str, bool]:
    """(HH:MM:SS, from host clock); the JSON's 'clock' names the clock (receiver when absent)."""
    time = str(ev.get("time") or "")
    tod = time.partition("T")[2][:8]  # undated times come as "THH:MM:SS…Z" (livefix.timefmt.iso)
    return (tod or "—", ev.get("clock") == "host")


def _span(step: float) -> str:
    s = abs(step)
    return f"{s / YEAR_S:.1f} years" if s >= 2 * 86400 * 365 else (
        f"{s / 86400:.1f} days" if s >= 2 * 86400 else duration(s).replace("—", "0 s"))


def readable(ev: dict[str, Any]) -> str:
    """Plain words for a time step: a receiver that fell back to its default date says so,
    instead of a count of seconds nobody can read."""
    kind, text = str(ev.get("kind", "")), str(ev.get("text", ""))
    step = ev.get("step_s")
    if kind not in ("time_jump", "time_rollback") or not isinstance(step, (int, float)) or abs(step) < 60:
        return text
    way = "back" if step < 0 else "ahead"
    try:
        day = _dt.date.fromisoformat(str(ev.get("time") or "")[:10])
    except ValueError:
        day = None
    if day is not None and default_date(day):
        return f"receiver clock jumped {way} to its default date {day.isoformat()} ({_span(step)})"
    to = f" to {day.isoformat()}" if day is not None and abs(step) >= 86400 else ""
    return f"receiver clock went {way} {_span(step)}{to}"


def collapse(events: list[Any]) -> list[Row]:
    """Rows in time order: a reconnect loop is one row with its tries; identical repeats count."""
    rows: list[Row] = []
    for ev in events:
        if not isinstance(ev, dict):
            continue
        kind = str(ev.get("kind", "?"))
        time, host = _clock(ev)
        state = str(ev.get("state") or "")
        text = term_text(readable(ev))  # stream text: no raw ESC/OSC
        last = rows[-1] if rows else None
        if kind == "link" and state in RETRY_STATES:
            if last is not None and last.key == ("link", "retry"):
                last.tries += state == TRIES_STATE
                last.text = text
                continue
            rows.append(Row(time, host, kind, text, tries=int(state == TRIES_STATE), key=("link", "retry")))
            continue
        if last is not None and last.key == (kind, text):
            last.count += 1
            continue
        rows.append(Row(time, host, kind, text, key=(kind, text)))
    return rows


def row_text(r: Row) -> str:
    if r.key == ("link", "retry"):
        if r.tries > 1:
            return f"reconnecting, {r.tries} tries since {r.time}: {r.text}"
        return r.text
    return r.text if r.count == 1 else f"{r.text} ({r.count} times since {r.time})"


class EventList(TextPanel):
    DEFAULT_CSS = "EventList { height: 1fr; text-wrap: nowrap; text-overflow: ellipsis; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.events: list[Any] = []
        self.rows: list[Row] = []

    def show(self, events: Any) -> None:
        events = list(events) if isinstance(events, (list, tuple)) else []
        if events != self.events:
            self.events = events
            self.rows = collapse(events)
            self.refresh()

    def _text(self) -> Text:
        st = self.app.palette.style  # type: ignore[attr-defined]
        t = Text(no_wrap=True, overflow="ellipsis")
        if not self.rows:
            t.append("no events yet", st("dim"))
            return t
        for i, r in enumerate(reversed(self.rows[-max(1, self.size.height):])):
            if i:
                t.append("\n")
            t.append(f"{r.time:<8}{HOST_MARK if r.host else ' '} ", st("dim"))
            t.append(r.kind, st(KIND_ROLE.get(r.kind, "value")))
            t.append(" " * max(0, 14 - len(r.kind)))  # padding outside the emphasis
            t.append(f" {row_text(r)}")
        return t
