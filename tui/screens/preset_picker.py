"""The preset picker: shipped and saved presets by title, filtered as you type."""

from __future__ import annotations

from textual.content import Content
from textual.widgets.option_list import Option

from tui.screens.picker import PickerScreen
from tui.storage import PresetEntry
from tui.text import one_line, printable


class PresetPicker(PickerScreen["PresetEntry | None"]):
    """Lists presets with their titles; dismisses with the chosen :class:`PresetEntry`."""

    heading = "Open a preset"
    placeholder = "filter by title or file name"

    def __init__(self, entries: list[PresetEntry]) -> None:
        super().__init__()
        self.entries = {str(e.path): e for e in entries}

    def options(self, query: str) -> list[Option]:
        q = query.strip().casefold()
        out = []
        for key, entry in self.entries.items():
            if q and q not in entry.title.casefold() and q not in entry.name.casefold():
                continue
            origin = ("shipped", "$secondary") if entry.shipped else ("saved", "$success")
            parts: list[str | tuple[str, str]] = [(printable(entry.title), "bold"), "\n  ", origin, " · ",
                                                  (printable(entry.path.name), "dim")]
            if entry.problem:
                parts += ["\n  ", (f"cannot open: {one_line(entry.problem, 300)}", "$error")]
            out.append(Option(Content.assemble(*parts), id=key, disabled=entry.problem is not None))
        return out

    def picked(self, option_id: str) -> None:
        self.dismiss(self.entries[option_id])
