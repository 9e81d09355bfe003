"""The base of every dialog: a modal screen that closes at most once.

``Screen.dismiss`` pops whatever screen is on top. Two quick keys (``q`` then
``d d``, or enter twice) can both reach a dialog before it is gone, and the
second dismiss then popped the screen *under* it: the explorer's own screen,
which ends in ``ScreenStackError`` and a traceback. A dialog here ignores any
dismiss after the first, and any dismiss while it is not the screen on top.
"""

from __future__ import annotations

from typing import TypeVar

from textual.await_complete import AwaitComplete
from textual.screen import ModalScreen

T = TypeVar("T")


class Dialog(ModalScreen[T]):
    """A modal screen whose :meth:`dismiss` acts once, and only while it is the screen on top."""

    _dismissed_once = False

    def dismiss(self, result: T | None = None) -> AwaitComplete:
        if self._dismissed_once or not self.is_attached or self.app.screen is not self:
            return AwaitComplete.nothing()
        self._dismissed_once = True
        return super().dismiss(result)
