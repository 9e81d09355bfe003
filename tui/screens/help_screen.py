"""The help screen (F1): every key and what each panel shows, from ``tui/help.md``."""

from __future__ import annotations

from pathlib import Path

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.widgets import Label, Markdown

from tui.screens.base import Dialog


HELP_FILE = Path(__file__).resolve().parent.parent / "help.md"


class HelpScreen(Dialog[None]):
    """Shows the help text; any of escape, F1 or q closes it."""

    BINDINGS = [
        Binding("escape,f1,q", "close", "Close"),
        Binding("down,j", "scroll(1)", show=False),
        Binding("up,k", "scroll(-1)", show=False),
        Binding("pagedown,space", "scroll(10)", show=False),
        Binding("pageup", "scroll(-10)", show=False),
    ]

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog help"):
            with VerticalScroll(id="help-scroll", can_focus=False):
                yield Markdown(HELP_FILE.read_text(encoding="utf-8"), id="help-text")
            yield Label("↑↓ scroll · esc close", classes="dialog-hint")

    def action_scroll(self, step: int) -> None:
        self.query_one("#help-scroll").scroll_relative(y=step, animate=False)

    def action_close(self) -> None:
        self.dismiss(None)
