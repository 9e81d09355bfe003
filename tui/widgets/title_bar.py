"""The title bar: what is in the flask, where it came from and whether it has changed."""

from __future__ import annotations

from textual.content import Content
from textual.reactive import var
from textual.widgets import Static

from tui.text import printable


class TitleBar(Static):
    """``protomix ● changed ◆ pinned <title> │ <source>``, the markers only when they apply."""

    heading: var[str] = var("", init=False)
    """The mixture's title."""
    source: var[str] = var("", init=False)
    """Where the mixture came from (a preset name, "demo", "restored session")."""
    dirty: var[bool] = var(False, init=False)
    """The mixture differs from what was opened or last saved."""
    pinned: var[bool] = var(False, init=False)
    """A state is pinned for comparison."""

    def on_mount(self) -> None:
        self._redraw()

    def watch_heading(self) -> None:
        self._redraw()

    def watch_source(self) -> None:
        self._redraw()

    def watch_dirty(self) -> None:
        self._redraw()

    def watch_pinned(self) -> None:
        self._redraw()

    def _redraw(self) -> None:
        parts: list[str | tuple[str, str]] = [(" protomix ", "bold reverse $primary"), " "]
        if self.dirty:
            parts += [("● changed", "$warning"), " "]
        if self.pinned:
            parts += [("◆ pinned", "bold $accent"), " "]
        parts += [" ", (printable(self.heading) or "untitled mixture", "bold")]
        if self.source:
            parts += ["  │ ", (printable(self.source), "dim")]
        self.update(Content.assemble(*parts), layout=False)
