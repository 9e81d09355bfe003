"""A modal list filtered as you type: the shared shape of the ingredient finder and the preset picker."""

from __future__ import annotations

from functools import partial
from typing import Generic, TypeVar

from textual import events, on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.widgets import Input, Label, OptionList
from textual.widgets.option_list import Option

from tui.widgets.entry import Entry
from tui.screens.base import Dialog


T = TypeVar("T")


class QueryInput(Entry):
    """The filter entry. Enter picks at once, and keys already on their way here go where the focus went.

    Textual routes each key to the widget focused when the app reads it, so
    in a burst (typing ahead over SSH) the keys after enter are queued for
    the filter before the pick moves the focus. Picking inside the entry's
    own enter handler moves the focus first; the keys still queued here are
    then handed on to the newly focused widget, in order.
    """

    async def action_submit(self) -> None:
        screen = self.screen
        if isinstance(screen, PickerScreen):
            screen.pick_highlighted()
        else:                                   # pragma: no cover - the entry lives in a picker
            await super().action_submit()

    async def _on_key(self, event: events.Key) -> None:
        target = self.screen.focused if self.is_attached else None
        if target is not None and target is not self:
            event.stop()
            event.prevent_default()
            target.post_message(events.Key(event.key, event.character))
            return
        if event.key == "enter":
            # Taken here, not by the binding: a binding acts only once the key has bubbled up to
            # the app, after this entry has already typed the keys that followed it.
            event.stop()
            event.prevent_default()
            await self.action_submit()
            return
        await super()._on_key(event)

#: Wait before refilling the list after a keystroke (s): one frame, so the keystroke shows first.
REFILL_DELAY = 1 / 60


class PickerScreen(Dialog[T], Generic[T]):
    """A filter entry over an option list; up/down move through the list while you type.

    Subclasses provide :meth:`options` (what matches a query) and :meth:`picked`
    (what to do with the chosen option id).
    """

    BINDINGS = [
        Binding("escape", "cancel", "Close", tooltip="Close without choosing"),
        Binding("down", "move(1)", "Next", show=False),
        Binding("up", "move(-1)", "Previous", show=False),
        Binding("pagedown", "move(8)", "Page down", show=False),
        Binding("pageup", "move(-8)", "Page up", show=False),
    ]

    AUTO_FOCUS = "#picker-query"

    heading = ""
    placeholder = "type to filter"

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog picker"):
            yield Label(self.heading, classes="dialog-heading")
            yield QueryInput(placeholder=self.placeholder, id="picker-query")
            yield OptionList(id="picker-list")
            yield Label("", id="picker-count", classes="dialog-hint")
            yield from self.compose_extra()

    def compose_extra(self) -> ComposeResult:
        """Widgets under the list (none by default)."""
        yield from ()

    def __init__(self) -> None:
        super().__init__()
        self._query = ""
        """What is typed in the filter."""
        self._shown: str | None = None
        """The filter the list was last filled for."""

    def on_mount(self) -> None:
        self.refill("")

    def options(self, query: str) -> list[Option]:
        """The options matching ``query``, best first."""
        raise NotImplementedError

    def picked(self, option_id: str) -> None:
        """Act on the chosen option."""
        raise NotImplementedError

    def refill(self, query: str) -> None:
        self._shown = query
        listing = self.query_one("#picker-list", OptionList)
        found = self.options(query)
        listing.set_options(found)
        if found:
            listing.highlighted = 0
        self.query_one("#picker-count", Label).update(
            f"{len(found)} match{'es' * (len(found) != 1)} · ↑↓ choose · enter pick · esc close")

    @on(Input.Changed, "#picker-query")
    def _filter(self, event: Input.Changed) -> None:
        # Refill a frame later, so the typed character shows at once; a newer keystroke
        # makes an older refill moot.
        self._query = event.value
        self.set_timer(REFILL_DELAY, partial(self._refill_latest, event.value))

    def _refill_latest(self, query: str) -> None:
        if query == self._query:
            self.refill(query)

    def pick_highlighted(self) -> None:
        """Pick the highlighted option (enter in the filter)."""
        # what the entry holds now: in a burst its Changed messages have not reached us yet
        self._query = self.query_one("#picker-query", Input).value
        if self._shown != self._query:                 # enter came before the list caught up
            self.refill(self._query)
        listing = self.query_one("#picker-list", OptionList)
        if listing.highlighted is not None:
            option = listing.get_option_at_index(listing.highlighted)
            if not option.disabled and option.id is not None:
                self.picked(option.id)

    @on(OptionList.OptionSelected, "#picker-list")
    def _pick_selected(self, event: OptionList.OptionSelected) -> None:
        if event.option.id is not None:
            self.picked(event.option.id)

    def action_move(self, step: int) -> None:
        listing = self.query_one("#picker-list", OptionList)
        if listing.option_count:
            current = listing.highlighted if listing.highlighted is not None else 0
            listing.highlighted = max(0, min(current + step, listing.option_count - 1))

    def action_cancel(self) -> None:
        self.dismiss(None)
