"""A one-line text entry whose keys take effect in the order they were typed.

Textual's ``Input`` inserts a printable key as soon as it reaches the entry,
but runs its editing keys (backspace, delete, cursor moves, ctrl+u, ...) as
bindings only after the key has bubbled back up to the app.  When several keys
arrive in one read (fast typing, a paste without bracketed paste, or a burst
after a pause on a slow SSH link), "backspace 8" then becomes "8 backspace": the
typed character is deleted again and the entry ends up wrong.  This entry runs
its own bindings where the key arrives, so every key keeps its place.
"""

from __future__ import annotations

from textual import events
from textual.widgets import Input


class Entry(Input):
    """``Input`` with its editing keys applied in typing order (see the module docstring)."""

    async def _on_key(self, event: events.Key) -> None:
        if not event.is_printable:
            for binding in self._bindings.key_to_bindings.get(event.key, ()):
                event.stop()
                event.prevent_default()
                await self.run_action(binding.action)
                return
        await super()._on_key(event)
