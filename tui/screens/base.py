"""The base of every dialog: a modal screen that closes at most once.

``Screen.dismiss`` pops whatever screen is on top. Two quick keys (``q`` then
``d d``, or enter twice) can both reach a dialog before it is gone, and the
second dismiss then popped the screen *under* it: the explorer's own screen,
which ends in ``ScreenStackError`` and a traceback. A dialog here ignores any
dismiss after the first, and any dismiss while it is not the screen on top.
"""

from __future__ import annotations

from typing import TypeVar

from textual import on
from textual.await_complete import AwaitComplete
from textual.screen import ModalScreen
from textual.content import Content
from textual.widgets import Input, Label

from tui.text import printable

T = TypeVar("T")


class Dialog(ModalScreen[T]):
    """A modal screen whose :meth:`dismiss` acts once, and only while it is the screen on top."""

    _dismissed_once = False

    def dismiss(self, result: T | None = None) -> AwaitComplete:
        if self._dismissed_once or not self.is_attached or self.app.screen is not self:
            return AwaitComplete.nothing()
        self._dismissed_once = True
        return super().dismiss(result)


def show_text(label: Label, text: str) -> None:
    """Show ``text`` in ``label`` as it is (never read as markup), redrawing only when it changed."""
    text = printable(text)
    if str(label.content) != text:
        label.update(Content(text))


def first_problem(problems: dict[str, str], screen: Dialog, prefix: str) -> str:
    """The problem of the field being typed in (id ``prefix`` + key), else the first one, else ""."""
    focused = screen.focused.id if screen.focused is not None and screen.focused.id else ""
    return problems.get(focused.removeprefix(prefix)) or next(iter(problems.values()), "")


class CheckedForm(Dialog[T]):
    """A dialog of entry fields checked as they are typed; enter accepts once every field is valid.

    Subclasses give :attr:`field_prefix` (the fields' ids are ``{prefix}-{key}`` and the error
    line's ``{prefix}-error``), :attr:`FIELDS` (tuples led by each field's key),
    :meth:`problems` (the problems, keyed by field, in field order) and :meth:`current` (the
    value the form dismisses with); :meth:`accept` may do something else with a valid form.
    """

    field_prefix = ""
    FIELDS: tuple[tuple[str, ...], ...] = ()

    def problems(self) -> dict[str, str]:
        raise NotImplementedError

    def current(self) -> T:
        raise NotImplementedError

    def _check(self) -> dict[str, str]:
        """Mark the fields with a problem and show the first one; returns them all."""
        problems = self.problems()
        for field in self.FIELDS:
            self.query_one(f"#{self.field_prefix}-{field[0]}", Input).set_class(field[0] in problems, "-invalid")
        show_text(self.query_one(f"#{self.field_prefix}-error", Label),
                  first_problem(problems, self, f"{self.field_prefix}-"))
        return problems

    @on(Input.Changed)
    def _changed(self) -> None:
        self._check()

    def on_descendant_focus(self) -> None:
        self._check()                                   # show the problem of the field now being typed in

    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.submitted(event.input)

    def submitted(self, entry: Input) -> None:
        """Enter in ``entry``: accept the form (a subclass may first use the key itself)."""
        self.action_accept()

    def action_accept(self) -> None:
        problems = self._check()
        if problems:
            self.query_one(f"#{self.field_prefix}-{next(iter(problems))}", Input).focus()
            self.app.bell()
            return
        self.accept()

    def accept(self) -> None:
        """What a valid form does: close with its value."""
        self.dismiss(self.current())

    def action_cancel(self) -> None:
        self.dismiss(None)
