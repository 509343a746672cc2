"""Event list, newest first (analysis["events"]); the kind is a word, never just a colour."""

from __future__ import annotations

from typing import Any

from rich.text import Text

from livefix.report.escape import term_text
from livefix.ui.panel import TextPanel

# event kind -> role; anything not listed is plain
KIND_ROLE: dict[str, str] = {
    "fix_lost": "bad", "jump": "warn", "interference": "warn", "stall": "stale", "link": "warn",
    "time_jump": "warn", "time_rollback": "warn", "receiver_restart": "warn", "checksum_burst": "warn",
    "time_fault": "warn", "receiver_date_invalid": "warn",
    "marker": "value", "recording": "value", "fix_regained": "ok",
}


class EventList(TextPanel):
    DEFAULT_CSS = "EventList { height: 1fr; text-wrap: nowrap; text-overflow: ellipsis; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.events: list[Any] = []

    def show(self, events: Any) -> None:
        events = list(events) if isinstance(events, (list, tuple)) else []
        if events != self.events:
            self.events = events
            self.refresh()

    def _text(self) -> Text:
        st = self.app.palette.style  # type: ignore[attr-defined]
        t = Text(no_wrap=True, overflow="ellipsis")
        if not self.events:
            t.append("no events yet", st("dim"))
            return t
        for i, ev in enumerate(reversed(self.events[-max(1, self.size.height):])):
            if not isinstance(ev, dict):
                continue
            if i:
                t.append("\n")
            time = str(ev.get("time") or "")
            t.append(f"{time[11:19] or '—':<8} ", st("dim"))
            kind = str(ev.get("kind", "?"))
            t.append(f"{kind:<14}", st(KIND_ROLE.get(kind, "value")))
            t.append(f" {term_text(ev.get('text', ''))}")  # stream text: no raw ESC/OSC
        return t
