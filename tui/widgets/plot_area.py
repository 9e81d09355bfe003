"""The chart panel: shows plot text built in a worker for its current size."""

from __future__ import annotations

from dataclasses import dataclass

from rich.text import Text
from textual.geometry import Size
from textual.message import Message
from textual.widgets import Static


class PlotArea(Static):
    """Displays a finished plot; it never builds one (that happens off the UI thread).

    It reports its size when resized so the app can ask for a plot that fits.
    """

    @dataclass
    class Resized(Message):
        """The drawing area (inside border and padding) changed size."""

        size: Size

    def on_resize(self) -> None:
        self.post_message(self.Resized(self.content_size))

    def show(self, image: Text, title: str) -> None:
        """Show a finished plot and name it in the border."""
        self.border_title = title
        self.update(image)
