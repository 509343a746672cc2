"""What the receiver says about itself: the distinct TXT texts it sent (snapshot `receiver.texts`)
and, where a text says so in generic words, its model, firmware and hardware.

Why generic words only: a site record must not guess a product from a brand or a banner layout.
A text counts when it names the item by a key the trade uses for it ("FW", "firmware", "SW",
"version" for firmware; "model", "MOD" for the model; "HW", "hardware" for the hardware, which
stands in for the model when no text names one), followed by its value. The first text that
names an item wins, so the guess does not flicker as status texts repeat.
"""

from __future__ import annotations

import re
from typing import Any

from livefix.state.epoch import Epoch, Event
from livefix.state.texts import MAX_CHARS, MAX_TEXTS, clean_text

_KEYS = r"(?:firmware|fw|software|sw|hardware|hw|model|mod|ver|version)"
# "KEY: v", "KEY=v" or "KEY v"; the value runs up to a comma, a semicolon or the next key word
_VALUE = r"\s*(?:[:=]\s*|\s)(?P<v>[^\s,;:=](?:(?!\s+" + _KEYS + r"\b)[^,;])*)"
# (item, pattern): the one table of generic announcement keys (common practice), tried in this order
# on each text; a match is cut out before the next rule, so "HW version 2" is no firmware version.
RULES: tuple[tuple[str, re.Pattern[str]], ...] = (
    ("hardware", re.compile(r"\b(?:hardware|hw)(?:[\s_-]*ver(?:sion)?)?" + _VALUE, re.I)),
    ("model", re.compile(r"\b(?:model|mod)" + _VALUE, re.I)),
    ("firmware", re.compile(r"\b(?:firmware|fw|software|sw)(?:[\s_-]*ver(?:sion)?)?" + _VALUE, re.I)),
    ("firmware", re.compile(r"\bver(?:sion)?" + _VALUE, re.I)),
)
MAX_VALUE = 60  # characters of a guessed value


def guess(texts: list[str]) -> dict[str, str | None]:
    """{'model', 'firmware', 'hardware'} from the texts in order of first sight (None: not said)."""
    out: dict[str, str | None] = {"model": None, "firmware": None, "hardware": None}
    for text in texts:
        for item, rule in RULES:
            if m := rule.search(text):
                if out[item] is None:
                    out[item] = m.group("v").strip()[:MAX_VALUE] or None
                text = text[:m.start()] + " " + text[m.end():]
    return out


class ReceiverInfo:
    """Collects the receiver's first-sight texts (state model events `note` with data `first`)."""

    def __init__(self) -> None:
        self.texts: list[str] = []

    def on_epoch(self, ep: Epoch) -> None:  # the stage interface; epochs say nothing about identity
        pass

    def on_event(self, ev: Event) -> None:
        if ev.kind == "note" and ev.data.get("first") and len(self.texts) < MAX_TEXTS:
            text = clean_text(ev.data.get("receiver_text", ""))
            if text and text not in self.texts:
                self.texts.append(text)

    def reset(self) -> None:
        """Kept on a statistics reset: the receiver is the same one, and its banner will not repeat."""

    def snapshot(self) -> dict[str, Any]:
        g = guess(self.texts)
        return {"texts": list(self.texts), "model": g["model"] or g["hardware"], "firmware": g["firmware"],
                "hardware": g["hardware"], "max_texts": MAX_TEXTS, "max_chars": MAX_CHARS}
