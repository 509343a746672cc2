"""Base of the text panels: each builds one rich Text in `_text()`; ASCII mode folds it to ASCII."""

from __future__ import annotations

from rich.text import Text
from textual.widget import Widget

from livefix.ui.fmt import asciify_text


class TextPanel(Widget):
    def render(self) -> Text:
        t = self._text()
        return asciify_text(t) if getattr(self.app, "ascii_only", False) else t

    def _text(self) -> Text:  # pragma: no cover - every panel overrides it
        raise NotImplementedError
