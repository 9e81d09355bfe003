"""The chart panel: shows a plot drawn and turned into painted lines in a worker, for its current size."""

from __future__ import annotations

from dataclasses import dataclass

from rich.color import Color
from rich.segment import Segment
from rich.style import Style
from textual.content import Content
from textual.geometry import Size
from textual.message import Message
from textual.strip import Strip
from textual.widget import Widget

from tui.text import printable
from tui.widgets.plot_kinds import RGB, SGR, Drawing


@dataclass(frozen=True)
class PlotImage:
    """A finished plot: lines ready to paint, and the same as plain text."""

    strips: tuple[Strip, ...]
    plain: str


def _color(rgb: RGB | None, base: Style) -> Style:
    return base if rgb is None else base + Style(color=Color.from_rgb(*rgb))


def prepare(drawing: Drawing, width: int, base: Style) -> PlotImage:
    """Paint ``drawing`` over ``base`` (the panel's colours) in lines ``width`` cells wide.

    plotext marks colour with 24-bit SGR codes and resets only, which are read
    here directly (several times faster than a general ANSI parser). Runs in the
    worker thread.
    """
    styles: dict[str, Style] = {}
    body = base + Style(dim=True) if drawing.note else base
    strips = []
    for raw in drawing.canvas.split("\n"):
        segments, style, pos = [], body, 0
        for code in SGR.finditer(raw):
            if code.start() > pos:
                segments.append(Segment(printable(raw[pos:code.start()]), style))
            params = code.group(1)
            style = styles.get(params)
            if style is None:
                parts = params.split(";")
                rgb = tuple(int(p) for p in parts[2:5]) if parts[:2] == ["38", "2"] else None
                style = styles[params] = _color(rgb, body)   # type: ignore[arg-type]
            pos = code.end()
        if pos < len(raw):
            segments.append(Segment(printable(raw[pos:]), style))
        strips.append(Strip(segments).crop_extend(0, width, base))
    for line in drawing.legend:
        strips.append(Strip([Segment(printable(text), _color(rgb, base)) for text, rgb in line])
                      .crop_extend(0, width, base))
    return PlotImage(tuple(strips), drawing.plain)


class PlotArea(Widget):
    """Paints a finished plot; it never builds one (that happens off the UI thread).

    It reports its size when resized so the app can ask for a plot that fits.
    """

    @dataclass
    class Resized(Message):
        """The drawing area (inside border and padding) changed size."""

        size: Size

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.image = PlotImage((), "")

    def on_resize(self) -> None:
        self.post_message(self.Resized(self.content_size))

    def show(self, image: PlotImage, title: str) -> None:
        """Show a finished plot and name it in the border."""
        self.image = image
        self.border_title = Content(printable(title))       # names from a file: no markup, no controls
        self.refresh()

    def render_line(self, y: int) -> Strip:
        strips = self.image.strips
        if y < len(strips) and strips[y].cell_length == self.size.width:
            return strips[y]
        line = strips[y] if y < len(strips) else Strip.blank(0)
        return line.crop_extend(0, self.size.width, None).apply_style(self.rich_style)
