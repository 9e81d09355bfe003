"""The flask panel: the ingredients of the mixture, one row each, with in-place amount editing."""

from __future__ import annotations

from dataclasses import dataclass

from textual.content import Content
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.message import Message
from textual.reactive import var
from textual.widgets import Input, Label

import chem
from tui.widgets.amount_input import AmountInput


class _FlaskRow(Vertical):
    """One ingredient: its name and amount; while edited, an amount entry and its error line."""

    def __init__(self, ingredient: chem.Ingredient) -> None:
        super().__init__(classes="flask-row")
        self.ingredient = ingredient
        self.error: str | None = None
        """Why the amount being typed is refused, or None."""
        self.name_label = Label(ingredient.reagent.name, classes="flask-name")
        self.amount = Label(ingredient.label, classes="flask-amount")

    def compose(self) -> ComposeResult:
        with Horizontal(classes="flask-line"):
            yield self.name_label
            yield self.amount
        yield Label("", classes="flask-error")

    def fit_amount(self, width: int) -> None:
        """Give the amount column ``width`` cells."""
        if self.amount.styles.width is None or self.amount.styles.width.value != width:
            self.amount.styles.width = width

    def show(self, ingredient: chem.Ingredient) -> None:
        """Display ``ingredient`` (same row, new amount or reagent)."""
        self.ingredient = ingredient
        self.name_label.update(ingredient.reagent.name, layout=False)
        self.amount.update(ingredient.label, layout=False)

    @property
    def editor(self) -> AmountInput | None:
        found = self.query(AmountInput)
        return found.first() if found else None

    def start_edit(self) -> AmountInput:
        """Swap the amount for an entry holding the current amount text."""
        editor = AmountInput(self.ingredient.label, molar_mass=self.ingredient.reagent.molar_mass,
                             classes="flask-editor")
        self.add_class("-editing")
        self.query_one(".flask-line").mount(editor)
        return editor

    def end_edit(self) -> None:
        """Remove the entry and any error; show the amount again."""
        if not self.has_class("-editing"):
            return
        self.remove_class("-editing")
        self.show_error(None)
        if self.editor is not None:
            self.editor.remove()

    def show_error(self, message: str | None) -> None:
        if message == self.error:
            return
        self.error = message
        self.set_class(message is not None, "-error")
        self.query_one(".flask-error", Label).update(Content(message or ""))
        if message is not None and self.parent is not None:
            self.call_after_refresh(self.parent.scroll_to_widget, self, animate=False)


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
            mixture: What the flask holds at first (composed at once, saving a later mount).
            id: Widget id.
        """
        super().__init__(id=id)
        self._rows = [_FlaskRow(ingredient) for ingredient in (mixture.ingredients if mixture else ())]

    def compose(self) -> ComposeResult:
        yield Label("Empty flask: pure water. Press n to add an ingredient.", id="flask-empty")
        yield from self._rows

    @property
    def rows(self) -> list[_FlaskRow]:
        """The ingredient rows, in flask order."""
        return self._rows

    @property
    def editing(self) -> bool:
        return any(row.has_class("-editing") for row in self.rows)

    def watch_mixture(self, mixture: chem.Mixture | None) -> None:
        ingredients = mixture.ingredients if mixture is not None else ()
        rows = self.rows
        for row in rows:
            row.end_edit()
        if len(rows) == len(ingredients):
            for row, ingredient in zip(rows, ingredients):
                if row.ingredient != ingredient:
                    row.show(ingredient)
        else:
            for row in rows:
                row.remove()
            self._rows = [_FlaskRow(ing) for ing in ingredients]
            self.mount_all(self._rows)
        empty = self.query_one("#flask-empty")
        if empty.display != (not ingredients):          # setting a style, even unchanged, re-renders the list
            empty.display = not ingredients
        self._fit_amounts(ingredients)
        self.cursor = max(0, min(self.cursor, len(ingredients) - 1))
        self.call_after_refresh(self._mark_cursor)

    def watch_cursor(self) -> None:
        self._mark_cursor()
        self.post_message(self.Selected())

    def _fit_amounts(self, ingredients) -> None:
        """Make the amount column as wide as its widest amount (a relayout only when that changes)."""
        width = max((len(i.label) for i in ingredients), default=0) + 1
        for row in self.rows:
            row.fit_amount(width)

    def _mark_cursor(self) -> None:
        for i, row in enumerate(self.rows):
            if row.has_class("-cursor") != (i == self.cursor):
                row.set_class(i == self.cursor, "-cursor")
                if i == self.cursor:
                    self.scroll_to_widget(row, animate=False)

    def select(self, index: int) -> None:
        """Put the cursor on ingredient ``index`` (negative counts from the end)."""
        n = len(self.rows)
        if n:
            self.cursor = index % n

    def action_move(self, step: int) -> None:
        if self.rows:
            self.cursor = max(0, min(self.cursor + step, len(self.rows) - 1))

    def action_move_to(self, index: int) -> None:
        self.select(index)

    def action_edit(self) -> None:
        """Start editing the selected amount in place."""
        rows = self.rows
        if not rows or self.editing:
            return
        rows[self.cursor].start_edit().focus()

    def action_cancel_edit(self) -> None:
        self._finish_edit()

    def _finish_edit(self) -> None:
        for row in self.rows:
            row.end_edit()
        self.focus()

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "cancel_edit":
            return self.editing
        if action == "edit":
            return bool(self.rows) and not self.editing
        return True

    @on(Input.Changed, ".flask-editor")
    def _live_check(self, event: Input.Changed) -> None:
        row = next(r for r in self.rows if r.editor is event.input)
        result = event.validation_result
        row.show_error(None if result is None or result.is_valid else result.failure_descriptions[0])

    @on(Input.Submitted, ".flask-editor")
    def _submit(self, event: Input.Submitted) -> None:
        event.stop()
        editor = event.input
        assert isinstance(editor, AmountInput)
        index = next(i for i, r in enumerate(self.rows) if r.editor is editor)
        conc = editor.concentration
        if conc is None:
            self.rows[index].show_error(editor.problem)
            return
        text = editor.value.strip()
        self._finish_edit()
        self.post_message(self.AmountEntered(index, conc, text))

    @on(Input.Blurred, ".flask-editor")
    def _abandon(self, event: Input.Blurred) -> None:
        if self.editing and self.screen.focused is not self:
            for row in self.rows:
                row.end_edit()
