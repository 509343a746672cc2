"""Base of the text panels: each builds one rich Text in `_text()`; ASCII mode folds it to ASCII."""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual.scrollbar import ScrollBarRender
from textual.widget import Widget

from livefix.ui.fmt import asciify_text


class AsciiScrollBar(ScrollBarRender):
    """Scrollbar without eighth-block glyphs: the thumb is reverse-video blanks, readable with
    NO_COLOR and in ASCII-only terminals alike."""

    VERTICAL_BARS: ClassVar[list[str]] = [" "] * 8
    HORIZONTAL_BARS: ClassVar[list[str]] = [" "] * 8


def ascii_scrollbars(widget: Widget) -> None:
    """Give a scrolling widget ASCII scrollbars when the app draws ASCII only."""
    if getattr(widget.app, "ascii_only", False):
        widget.vertical_scrollbar.renderer = AsciiScrollBar
        widget.horizontal_scrollbar.renderer = AsciiScrollBar


class TextPanel(Widget):
    def render(self) -> Text:
        t = self._text()
        if getattr(self.app, "ascii_only", False):
            t.overflow = "crop"  # Rich's overflow mark is a non-ASCII ellipsis
            return asciify_text(t)
        return t

    def _text(self) -> Text:  # pragma: no cover - every panel overrides it
        raise NotImplementedError
