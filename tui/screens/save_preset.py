"""The save form: a name for the preset file and a title for the mixture."""

from __future__ import annotations

from dataclasses import dataclass

from textual.content import Content
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.widgets import Input, Label

from tui.widgets.entry import Entry
from tui import storage
from tui.screens.base import Dialog
from tui.screens.choice import Choice
from tui.text import printable


@dataclass(frozen=True)
class SaveRequest:
    """Where and how to save: the preset name, the mixture title, and whether replacing is confirmed."""

    name: str
    title: str
    overwrite: bool


class SavePreset(Dialog["SaveRequest | None"]):
    """Asks for a preset name (and title); confirms before replacing an existing preset."""

    BINDINGS = [Binding("escape", "cancel", "Close", tooltip="Close without saving")]
    AUTO_FOCUS = "#save-name"

    def __init__(self, name: str, title: str) -> None:
        super().__init__()
        self.initial_name = printable(name)
        self.initial_title = printable(title)         # a title from a shared file: shown (and kept) escaped

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Label("Save the mixture as a preset", classes="dialog-heading")
            yield Label("name (file in your preset folder)", classes="dialog-hint")
            yield Entry(self.initial_name, placeholder="e.g. rinse buffer 37C", id="save-name")
            yield Label("title (shown in the preset list)", classes="dialog-hint")
            yield Entry(self.initial_title, placeholder="what this mixture is for", id="save-title")
            yield Label("", id="save-error", classes="dialog-error")
            yield Label(Content(printable(f"folder: {self._folder()}")), classes="dialog-hint")
            yield Label("enter save · tab next field · esc close", classes="dialog-hint")

    @on(Input.Changed, "#save-name")
    def _check_name(self, event: Input.Changed) -> None:
        try:
            storage.preset_path(event.value)
        except storage.StorageError as exc:
            self.query_one("#save-error", Label).update(Content(printable(exc)))
        else:
            self.query_one("#save-error", Label).update("")

    @on(Input.Submitted)
    def _submit(self) -> None:
        name = self.query_one("#save-name", Input).value.strip()
        title = self.query_one("#save-title", Input).value.strip()
        try:
            path = storage.preset_path(name)
        except storage.StorageError as exc:
            self.query_one("#save-error", Label).update(Content(printable(exc)))
            self.query_one("#save-name", Input).focus()
            return
        if not path.exists():
            self.dismiss(SaveRequest(name, title, overwrite=False))
            return

        def replace(answer: bool | None) -> None:
            if answer:
                self.dismiss(SaveRequest(name, title, overwrite=True))

        self.app.push_screen(Choice(f"A preset called '{name}' already exists. Replace it?",
                                    [("y", "replace it", True), ("n", "keep it", False)], on_escape=False),
                             replace)

    @staticmethod
    def _folder() -> str:
        try:
            return str(storage.presets_dir())
        except storage.StorageError as exc:
            return f"none ({exc})"

    def action_cancel(self) -> None:
        self.dismiss(None)
