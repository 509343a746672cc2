"""Receiver texts (NMEA 0183 4.10 TXT: total, number, text identifier, text): the distinct texts a
receiver sends, kept so that its start-up announcement (model, firmware) survives the TXT rate cap.

Why here: a receiver announces itself in a burst of TXT lines at power-up, faster than the state
model's cap on TXT events (TXT_PER_S), and repeats status texts (antenna OK) forever after. The
first sight of each distinct text, up to MAX_TEXTS of them, is therefore passed on regardless of
the cap; repeats and anything beyond stay under it. Bounded: a week of texts keeps MAX_TEXTS.
"""

from __future__ import annotations

MAX_TEXTS = 20  # distinct texts kept per session: a start-up banner is a handful of lines
MAX_CHARS = 120  # characters kept per text: NMEA 0183 sentences are at most 82 characters


def clean_text(raw: object) -> str:
    """The text as printable characters only (control characters would move a terminal's cursor
    or forge report lines), whitespace runs folded, capped at MAX_CHARS."""
    text = "".join(c if c.isprintable() else " " for c in str(raw))
    return " ".join(text.split())[:MAX_CHARS]


class ReceiverTexts:
    """The first MAX_TEXTS distinct cleaned texts, in order of first sight."""

    def __init__(self) -> None:
        self.texts: list[str] = []
        self._seen: set[str] = set()

    def add(self, raw: object) -> str | None:
        """The cleaned text when it is new and there is room, else None."""
        if len(self.texts) >= MAX_TEXTS:
            return None
        text = clean_text(raw)
        if not text or text in self._seen:
            return None
        self._seen.add(text)
        self.texts.append(text)
        return text
