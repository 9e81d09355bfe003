"""The flask panel: the ingredients of the mixture, one row each, with in-place amount editing.

The rows are painted line by line by one widget (not a widget per row): every
frame visits each widget that might overlap what changed, so ten ingredients
as forty small widgets made every keystroke's frames several times slower.
While an amount is edited, the rows above and below it are two such painters
and the edited row between them is a real entry.
"""

from __future__ import annotations

from dataclasses import dataclass

from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.content import Content
from textual.geometry import Region
from textual.message import Message
from textual.reactive import var
from textual.strip import Strip
from textual.timer import Timer
from textual.widget import Widget
from textual.widgets import Input, Label

import chem
from tui.text import printable
from tui.widgets.amount_input import AmountInput

HOLD_S = 0.15
"""Longest time a change of amounts waits for the numbers solved from it (see :meth:`FlaskList.propose`)."""


def _same_rows(a: chem.Mixture, b: chem.Mixture) -> bool:
    """The two mixtures list the same reagents in the same order (amounts may differ)."""
    return len(a.ingredients) == len(b.ingredients) and all(
        x.reagent == y.reagent for x, y in zip(a.ingredients, b.ingredients))


def _fit(text: str, width: int) -> str:
    """``text`` in exactly ``width`` cells: padded, or cut with an ellipsis."""
    if width <= 0:
        return ""
    if cell_len(text) > width:
        return set_cell_size(text, width - 1) + "…"
    return set_cell_size(text, width)


class _Rows(Widget):
    """Part of :class:`FlaskList`: paints a run of ingredient rows, name left and amount right.

    The row under the cursor is highlighted, more strongly while the list has focus.
    """

    COMPONENT_CLASSES = {"rows--amount", "rows--cursor", "rows--cursor-focused"}

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.styles.height = 0
        self.entries: tuple[tuple[str, str], ...] = ()
        """(name, amount) of each row painted."""
        self.first = 0
        """Index in the flask of the first row painted."""
        self.cursor = -1
        """Index in the flask of the selected row."""
        self.amount_width = 8

    def show(self, entries: tuple[tuple[str, str], ...], first: int, cursor: int, amount_width: int) -> None:
        """Paint ``entries`` (flask rows ``first`` onwards) with the cursor on flask row ``cursor``."""
        old_entries, old_first, old_cursor, old_width = self.entries, self.first, self.cursor, self.amount_width
        if (entries, first, cursor, amount_width) == (old_entries, old_first, old_cursor, old_width):
            return
        self.entries, self.first, self.cursor, self.amount_width = entries, first, cursor, amount_width
        if not self.is_mounted:                         # sized before the first layout
            self.styles.height = len(entries)
        elif len(entries) != len(old_entries):
            self.styles.height = len(entries)
            self.refresh(layout=True)
        elif (first, amount_width) == (old_first, old_width):
            for y, (now, before) in enumerate(zip(entries, old_entries)):   # only the rows that changed
                if now != before or first + y in (cursor, old_cursor):
                    self.refresh_line(y)
        else:
            self.refresh()

    def on_resize(self) -> None:
        # More or fewer rows have been laid out: keep the cursor in view (the scroll
        # asked for when the cursor moved may have come before this layout).
        if isinstance(self.parent, FlaskList):
            self.parent.call_after_refresh(self.parent.scroll_to_cursor)

    def refresh_line(self, y: int) -> None:
        if 0 <= y < len(self.entries):
            self.refresh(Region(0, y, self.size.width, 1))

    def render_lines(self, crop: Region) -> list[Strip]:
        base = self.rich_style                          # computed once per paint, not per line
        focused = self.parent is not None and self.parent.has_focus
        cursor = base + self.get_component_rich_style("rows--cursor-focused" if focused else "rows--cursor")
        self._styles = (base, cursor, self.get_component_rich_style("rows--amount", partial=True))
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        base, cursor, amount_style = self._styles
        width = self.size.width
        if y >= len(self.entries):
            return Strip.blank(width, base)
        name, amount = self.entries[y]
        style = cursor if self.first + y == self.cursor else base
        amount_width = min(self.amount_width, max(width - 4, 0))
        shown = _fit(amount, amount_width - 1).rstrip() if cell_len(amount) >= amount_width else amount
        pad = " " * max(amount_width - cell_len(shown), 0)
        return Strip([Segment(_fit(name, width - amount_width), style), Segment(pad, style),
                      Segment(shown, style + amount_style)])


class _EditRow(Vertical):
    """The row being edited: its name, an amount entry and (when the entry is refused) why."""

    def __init__(self, ingredient: chem.Ingredient) -> None:
        super().__init__(id="flask-edit")
        self.reagent_name = ingredient.reagent.name
        self.editor = AmountInput(ingredient.label, molar_mass=ingredient.reagent.molar_mass, classes="flask-editor")

    def compose(self) -> ComposeResult:
        with Horizontal(classes="flask-line"):
            yield Label(Content(printable(self.reagent_name)), classes="flask-name")
            yield self.editor
        yield Label("", id="flask-error")


class FlaskList(VerticalScroll, can_focus=True):
    """The ingredients of the flask with a row cursor.

    Data comes down through :attr:`mixture`; edits go up as messages, and the
    app decides what the new mixture is.
    """

    BINDINGS = [
        Binding("up,k", "move(-1)", "Previous", show=False),
        Binding("down,j", "move(1)", "Next", show=False),
        Binding("home", "move_to(0)", "First", show=False),
        Binding("end", "move_to(-1)", "Last", show=False),
        Binding("enter,e", "edit", "Edit", tooltip="Type a new amount for the selected ingredient",
                id="edit-amount"),
        Binding("escape", "cancel_edit", "Cancel", show=False),
        Binding("right", "app.nudge(1, 0)", "More", show=False),
        Binding("left", "app.nudge(-1, 0)", "Less", show=False),
        Binding("shift+right", "app.nudge(1, 1)", "A little more", show=False),
        Binding("shift+left", "app.nudge(-1, 1)", "A little less", show=False),
        Binding("pageup", "page_up", show=False),
        Binding("pagedown", "page_down", show=False),
    ]

    mixture: var[chem.Mixture | None] = var(None, init=False)
    """The mixture shown. Replaced, never mutated."""
    cursor: var[int] = var(0, init=False)
    """Index of the selected ingredient."""

    class Selected(Message):
        """The cursor moved to another ingredient (read :attr:`FlaskList.cursor`)."""

    @dataclass
    class AmountEntered(Message):
        """A valid amount was typed for ingredient ``index``."""

        index: int
        conc: float
        """mol/L"""
        text: str
        """The amount as typed, kept for display and saving."""

    def __init__(self, mixture: chem.Mixture | None = None, *, id: str | None = None) -> None:
        """Create the panel.

        Args:
            mixture: What the flask holds at first (painted at once).
            id: Widget id.
        """
        super().__init__(id=id)
        self._ingredients: tuple[chem.Ingredient, ...] = mixture.ingredients if mixture else ()
        self._above = _Rows(id="flask-rows")
        self._below = _Rows(id="flask-rows-below")
        self._edited: int | None = None
        """Index of the ingredient whose amount is being typed, or None."""
        self._error: str | None = None
        self._held: chem.Mixture | None = None
        self._hold_timer: Timer | None = None

    def compose(self) -> ComposeResult:
        self._paint()
        yield Label("Empty flask: pure water. Press n to add an ingredient.", id="flask-empty")
        yield self._above
        yield self._below

    # -- what is shown -----------------------------------------------------------------------
    @property
    def editing(self) -> bool:
        return self._edited is not None

    @property
    def editor(self) -> AmountInput | None:
        """The amount entry while an amount is being typed, else None."""
        found = self.query(AmountInput)
        return found.first() if self.editing and found else None

    @property
    def error(self) -> str | None:
        """Why the amount being typed is refused (as shown under it), or None."""
        return self._error

    def propose(self, mixture: chem.Mixture) -> None:
        """Show ``mixture``; a change of amounts only waits for :meth:`release` (at most :data:`HOLD_S`).

        The app releases it when the numbers solved from the new amounts are
        ready, so the amounts, the pH, the species and the plot change in the
        same frame (one frame per edit instead of two; each costs 10-20 ms at
        120x40). Any other change (rows added, removed or replaced) shows at once.
        """
        if self.mixture is not None and not self.editing and _same_rows(self.mixture, mixture):
            self._held = mixture
            if self._hold_timer is None:
                self._hold_timer = self.set_timer(HOLD_S, self.release)
        else:
            self._held = None
            self.mixture = mixture

    def release(self) -> None:
        """Show the mixture held back by :meth:`propose`, if any."""
        if self._hold_timer is not None:
            self._hold_timer.stop()
            self._hold_timer = None
        if self._held is not None:
            mixture, self._held = self._held, None
            self.mixture = mixture

    def watch_mixture(self, mixture: chem.Mixture | None) -> None:
        self._ingredients = mixture.ingredients if mixture is not None else ()
        self._end_edit()
        empty = self.query_one("#flask-empty")
        if empty.display != (not self._ingredients):    # setting a style, even unchanged, re-renders the list
            empty.display = not self._ingredients
        cursor = max(0, min(self.cursor, len(self._ingredients) - 1))
        if cursor != self.cursor:
            self.cursor = cursor                        # paints (watch_cursor)
        else:
            self._paint()

    def watch_cursor(self) -> None:
        self._paint()
        self.call_after_refresh(self.scroll_to_cursor)
        self.post_message(self.Selected())

    def _paint(self) -> None:
        entries = tuple((printable(i.reagent.name), printable(i.label)) for i in self._ingredients)
        amount_width = max((cell_len(label) for _, label in entries), default=0) + 1
        split = len(entries) if self._edited is None else self._edited
        self._above.show(entries[:split], 0, self.cursor, amount_width)
        self._below.show(entries[split + 1:], split + 1, self.cursor, amount_width)

    def on_resize(self) -> None:
        self.call_after_refresh(self.scroll_to_cursor)

    def scroll_to_cursor(self) -> None:
        """Scroll so that the selected row is in view."""
        if self._edited is not None or not self._ingredients:
            return
        top = self._above.virtual_region.y
        self.scroll_to_region(Region(0, top + self.cursor, 1, 1), animate=False, immediate=True)

    def on_focus(self) -> None:
        self._above.refresh_line(self.cursor)

    def on_blur(self) -> None:
        self._above.refresh_line(self.cursor)

    def select(self, index: int) -> None:
        """Put the cursor on ingredient ``index`` (negative counts from the end)."""
        n = len(self._ingredients)
        if n:
            self.cursor = index % n

    def action_move(self, step: int) -> None:
        if self._ingredients:
            self.cursor = max(0, min(self.cursor + step, len(self._ingredients) - 1))

    def action_move_to(self, index: int) -> None:
        self.select(index)

    # -- editing -----------------------------------------------------------------------------
    async def action_edit(self) -> None:
        """Start editing the selected amount in place."""
        self.release()                                  # edit the amount as it is now
        if not self._ingredients or self.editing:
            return
        index = self.cursor
        ingredient = self._ingredients[index]
        self._edited = index
        row = _EditRow(ingredient)
        self._paint()
        await self.mount(row, after=self._above)
        row.editor.focus()

    def action_cancel_edit(self) -> None:
        self._end_edit()
        self.focus()

    def _end_edit(self) -> None:
        if self._edited is None:
            return
        self._edited = None
        self._error = None
        for row in self.query(_EditRow):
            row.remove()
        self._paint()

    def _show_error(self, message: str | None) -> None:
        if message == self._error or not self.editing:
            return
        self._error = message
        row = self.query_one(_EditRow)
        row.set_class(message is not None, "-error")
        row.query_one("#flask-error", Label).update(Content(printable(message or "")))
        if message is not None:
            self.call_after_refresh(self.scroll_to_widget, row, animate=False)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "cancel_edit":
            return self.editing
        if action == "edit":
            return bool(self._ingredients) and not self.editing
        return True

    @on(Input.Changed, ".flask-editor")
    def _live_check(self, event: Input.Changed) -> None:
        result = event.validation_result
        self._show_error(None if result is None or result.is_valid else result.failure_descriptions[0])

    @on(Input.Submitted, ".flask-editor")
    def _submit(self, event: Input.Submitted) -> None:
        event.stop()
        editor = event.input
        assert isinstance(editor, AmountInput) and self._edited is not None
        index = self._edited
        conc = editor.concentration
        if conc is None:
            self._show_error(editor.problem)
            return
        text = editor.value.strip()
        self.action_cancel_edit()
        self.post_message(self.AmountEntered(index, conc, text))

    @on(Input.Blurred, ".flask-editor")
    def _abandon(self, event: Input.Blurred) -> None:
        if self.editing and self.screen.focused is not self:
            self._end_edit()
