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
from textual.widgets import Input

T = TypeVar("T")


class Dialog(ModalScreen[T]):
    """A modal screen whose :meth:`dismiss` acts once, and only while it is the screen on top."""

    _dismissed_once = False

    def dismiss(self, result: T | None = None) -> AwaitComplete:
        if self._dismissed_once or not self.is_attached or self.app.screen is not self:
            return AwaitComplete.nothing()
        self._dismissed_once = True
        return super().dismiss(result)


class CheckedForm(Dialog[T]):
    """A dialog of entry fields checked as they are typed; enter accepts once every field is valid.

    Subclasses give :attr:`field_prefix` (the fields' ids are ``{prefix}-{key}``),
    :meth:`_check` (the problems, keyed by field, in field order; shown by the
    subclass) and :meth:`current` (the value the form dismisses with).
    """

    field_prefix = ""

    def _check(self) -> dict[str, str]:
        raise NotImplementedError

    def current(self) -> T:
        raise NotImplementedError

    @on(Input.Changed)
    def _changed(self) -> None:
        self._check()

    def on_descendant_focus(self) -> None:
        self._check()                                   # show the problem of the field now being typed in

    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.action_accept()

    def action_accept(self) -> None:
        problems = self._check()
        if problems:
            self.query_one(f"#{self.field_prefix}-{next(iter(problems))}", Input).focus()
            self.app.bell()
            return
        self.dismiss(self.current())

    def action_cancel(self) -> None:
        self.dismiss(None)
