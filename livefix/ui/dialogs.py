"""Modal dialogs: help overlay, one-line text prompt, yes/no confirmation."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from livefix.ui.fmt import asciify


def _plain(app: object, text: str) -> str:
    """Dialog text folded to ASCII when the app draws ASCII only."""
    return asciify(text) if getattr(app, "ascii_only", False) else text


class HelpScreen(ModalScreen[None]):
    BINDINGS = [("escape", "dismiss", "close"), ("question_mark", "dismiss", "close"),
                ("q", "dismiss", "close")]

    def __init__(self, rows: list[tuple[str, str]]) -> None:
        super().__init__()
        self.rows = rows

    def on_mount(self) -> None:
        from livefix.ui.panel import ascii_scrollbars

        ascii_scrollbars(self.query_one("#help-box"))

    def compose(self) -> ComposeResult:
        text = "\n".join(f" {k:<10} {d}" for k, d in self.rows)
        with VerticalScroll(id="help-box"):  # scrolls where 24 rows are too few
            yield Label(_plain(self.app, "Keys — press Esc to close"), id="help-title")
            yield Static(_plain(self.app, text), id="help-text", markup=False)


class PromptScreen(ModalScreen[str | None]):
    """Ask for one line of text; Enter returns it, Esc returns None."""

    BINDINGS = [("escape", "cancel", "cancel")]

    def __init__(self, question: str, value: str = "", placeholder: str = "") -> None:
        super().__init__()
        self.question, self.value, self.placeholder = question, value, placeholder

    def compose(self) -> ComposeResult:
        with Vertical(id="prompt-box"):
            yield Label(_plain(self.app, self.question), markup=False)
            yield Input(value=self.value, placeholder=self.placeholder, id="prompt-input")
            yield Label("Enter to accept, Esc to cancel", classes="hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.dismiss(event.value)

    def action_cancel(self) -> None:
        self.dismiss(None)


class ConfirmScreen(ModalScreen[bool]):
    BINDINGS = [("y", "answer(True)", "yes"), ("n", "answer(False)", "no"),
                ("escape", "answer(False)", "no")]

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(id="prompt-box"):
            yield Label(_plain(self.app, self.question), markup=False)
            yield Label("y = yes   n / Esc = no", classes="hint")

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)
