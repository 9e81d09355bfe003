"""The species panel: every species of the solved mixture, with the change against a pinned state."""

from __future__ import annotations

import math

from rich.text import Text
from textual.reactive import reactive
from textual.widgets import DataTable

import chem
from tui.widgets.readout import signed

_COLUMNS = ("species", "C / M", "log C", "α", "γ")
_PINNED_COLUMN = "Δlog C"


def _num(text: str, style: str = "") -> Text:
    """A right-aligned number with one space before it (the table has no cell padding, to fit 80 columns)."""
    return Text(f" {text}", style=style, justify="right")


def _log_c(value: float) -> str:
    return f"{value:.2f}" if math.isfinite(value) else "-inf"


class SpeciesTable(DataTable):
    """Name, concentration, log C, fraction of its system and activity coefficient of each species."""

    result: reactive[chem.Equilibrium | None] = reactive(None, init=False)
    """The solved mixture on display."""
    pinned: reactive[chem.Equilibrium | None] = reactive(None, init=False)
    """The state changes are measured against, or None."""

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id, cursor_type="row", zebra_stripes=True, cell_padding=0)

    def on_mount(self) -> None:
        self._set_columns()

    def _set_columns(self) -> None:
        self.clear(columns=True)
        self.add_column(_COLUMNS[0], key=_COLUMNS[0])
        for label in _COLUMNS[1:]:
            self.add_column(_num(label), key=label)
        if self.pinned is not None:
            self.add_column(_num(_PINNED_COLUMN), key=_PINNED_COLUMN)
        self.add_column("  system", key="system")

    def watch_pinned(self) -> None:
        self._set_columns()
        self._fill()

    def watch_result(self) -> None:
        self._fill()

    def _fill(self) -> None:
        eq = self.result
        if eq is None:
            return
        row = self.cursor_row
        self.clear()
        before = {(s.system, s.name): s for s in self.pinned.species} if self.pinned is not None else None
        for sp in eq.species:
            cells: list[Text | str] = [
                sp.name,
                _num(f"{sp.conc:.2e}"),
                _num(_log_c(sp.log_c)),
                _num("" if sp.fraction is None else f"{sp.fraction:.3f}"),
                _num(f"{sp.activity_coefficient:.3f}"),
            ]
            if before is not None:
                old = before.get((sp.system, sp.name))
                if old is None:
                    cells.append(_num("new", "italic"))
                elif math.isfinite(sp.log_c) and math.isfinite(old.log_c):
                    cells.append(_num(signed(sp.log_c - old.log_c, 2), "bold"))
                else:
                    cells.append(_num("—"))
            cells.append(Text(f"  {sp.system}", style="dim"))
            self.add_row(*cells, key=f"{sp.system}/{sp.name}")
        if self.row_count:
            self.move_cursor(row=min(row, self.row_count - 1), animate=False, scroll=False)
