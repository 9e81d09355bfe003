"""A short question answered with one key."""

from __future__ import annotations

from typing import Generic, TypeVar

from textual import events
from textual.app import ComposeResult
from textual.containers import Vertical
from textual.content import Content
from textual.widgets import Label

from tui.screens.base import Dialog
from tui.text import printable

T = TypeVar("T")


class Choice(Dialog[T], Generic[T]):
    """Asks ``question``; each answer is a (key, label, value) triple. Escape dismisses with ``on_escape``.

    The question may quote text from a file (a title): it is shown as plain text, with
    control characters escaped and no markup read from it.
    """

    def __init__(self, question: str, answers: list[tuple[str, str, T]], *, on_escape: T,
                 escape_label: str = "back") -> None:
        super().__init__()
        self.question = question
        self.answers = answers
        self.on_escape = on_escape
        self.escape_label = escape_label

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog choice"):
            yield Label(Content(printable(self.question, newlines=True)), classes="dialog-text")
            keys: list[str | tuple[str, str]] = []
            for key, label, _ in self.answers:
                keys += [(f" {key} ", "bold reverse"), f" {label}    "]
            keys += [(" esc ", "bold reverse"), f" {self.escape_label}"]
            yield Label(Content.assemble(*keys), classes="dialog-keys")

    def on_key(self, event: events.Key) -> None:
        event.stop()
        event.prevent_default()
        if event.key == "escape":
            self.dismiss(self.on_escape)
            return
        for key, _, value in self.answers:
            if event.key == key:
                self.dismiss(value)
                return
