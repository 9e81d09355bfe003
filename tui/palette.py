"""The command palette (ctrl+p), guarded against two races in the framework's own palette.

* ``ctrl+p`` then a quick PageDown: the list of commands is filled but not laid
  out yet (no lines, no height), and paging through it raised ``KeyError``
  inside the framework's option list. Paging now waits until the list is laid out.
* ``ctrl+p``, enter, enter: the first enter picks a command and closes the
  palette; the second, already on its way to the palette, closed it again, which
  popped the explorer's own screen (``ScreenStackError``). The palette now
  closes once.

Both ended the explorer with a traceback. The guards use two private methods
of textual's ``CommandPalette`` (textual is pinned to 8.2.x in pyproject.toml);
``tests/app/test_trust.py`` drives both races.
"""

from __future__ import annotations

from textual import on
from textual.await_complete import AwaitComplete
from textual.command import CommandList, CommandPalette
from textual.widgets import Button, Input


class GuardedCommandPalette(CommandPalette):
    """The framework's command palette, closing at most once and paging only a laid-out list."""

    _dismissed_once = False

    def dismiss(self, result=None) -> AwaitComplete:
        if self._dismissed_once or not self.is_attached or self.app.screen is not self:
            return AwaitComplete.nothing()
        self._dismissed_once = True
        return super().dismiss(result)

    def _action_command_list(self, action: str) -> None:
        if action in ("page_up", "page_down"):
            listing = self.query_one(CommandList)
            if not listing.option_count or not listing.scrollable_content_region:
                return                                  # not laid out yet: nothing to page through
        super()._action_command_list(action)

    @on(Input.Submitted)
    @on(Button.Pressed)
    def _ignore_once_dismissed_once(self, event: Input.Submitted | Button.Pressed) -> None:
        """A second enter while the first one closes the palette: drop it (it would run the command twice)."""
        if self._dismissed_once:
            event.stop()
            event.prevent_default()                     # the framework's handler (a base class's) is skipped
