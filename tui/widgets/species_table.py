"""The species panel: every species of the solved mixture, with the change against a pinned state.

Drawn line by line from plain text rather than as a data grid: it is redrawn
after every edit, and painting prepared lines is several times cheaper than
laying out a grid or styled text.
"""

from __future__ import annotations

import math

from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from textual.app import ComposeResult
from textual.containers import Vertical, VerticalScroll
from textual.geometry import Region
from textual.reactive import var
from textual.strip import Strip
from textual.widget import Widget

import chem
from tui.text import printable
from tui.widgets.readout import signed

#: (heading, width) of each column after the species name; numbers are right-aligned, and every
#: column is led by a space, so that even the widest number never runs into its neighbour
#: ("5.45e-11 -10.26", not "5.45e-11-10.26").
COLUMNS = (("C / M", 8), ("log C", 6), ("α", 5), ("γ", 5))
DELTA_COLUMN = ("Δlog C", 6)


#: Widest species name shown in full; a longer one is cut with an ellipsis, so the numbers stay in view.
NAME_WIDTH_MAX = 16


def _pad(text: str, width: int) -> str:
    """``text`` in exactly ``width`` terminal cells: padded, or cut with an ellipsis (wide characters count double)."""
    if cell_len(text) > width:
        return set_cell_size(text, width - 1) + "…"
    return text + " " * (width - cell_len(text))


def _gamma(value: float) -> str:
    return f"{value:.3f}" if value < 10 else f"{value:.2g}"


def _log_c(value: float) -> str:
    return f"{value:.2f}" if math.isfinite(value) else "-inf"


def _delta(now: chem.Species, before: chem.Species | None) -> str:
    if before is None:
        return "new"
    if math.isfinite(now.log_c) and math.isfinite(before.log_c):
        return signed(now.log_c - before.log_c, 2)
    return "—"


def species_rows(eq: chem.Equilibrium, pinned: chem.Equilibrium | None) -> tuple[str, list[tuple[str, str]]]:
    """The heading and, per species, (numbers part, system) as fixed-width text."""
    columns = COLUMNS + ((DELTA_COLUMN,) if pinned is not None else ())
    names = [printable(sp.name) for sp in eq.species]          # names can come from a shared preset
    name_width = min(max(7, *(cell_len(n) for n in names)), NAME_WIDTH_MAX)
    heading = _pad("species", name_width) + "".join(f" {t:>{w}}" for t, w in columns) + "  system"
    before = {(s.system, s.name): s for s in pinned.species} if pinned is not None else None
    rows = []
    for sp, name in zip(eq.species, names):
        cells = [f"{sp.conc:.2e}", _log_c(sp.log_c),
                 "" if sp.fraction is None else f"{sp.fraction:.3f}", _gamma(sp.activity_coefficient)]
        if before is not None:
            cells.append(_delta(sp, before.get((sp.system, sp.name))))
        rows.append((_pad(name, name_width) + "".join(f" {c:>{w}}" for c, (_, w) in zip(cells, columns)),
                     f"  {printable(sp.system)}"))
    return heading, rows


class SpeciesLines(Widget):
    """Part of :class:`SpeciesTable`: paints rows of text, every other one on a tinted background, the system name dimmed."""

    COMPONENT_CLASSES = {"lines--stripe", "lines--dim", "lines--head"}

    def __init__(self, *, heading: bool = False, id: str | None = None) -> None:
        super().__init__(id=id)
        self.heading = heading
        self.rows: list[tuple[str, str]] = []

    def show(self, rows: list[tuple[str, str]]) -> None:
        resized = len(rows) != len(self.rows)
        self.rows = rows
        if resized:
            self.styles.height = len(rows)
        self.refresh(layout=resized)

    def render_lines(self, crop: Region) -> list[Strip]:
        base = self.rich_style                          # computed once per paint, not per line
        self._styles = (base, base + self.get_component_rich_style("lines--stripe"),
                        base + self.get_component_rich_style("lines--head"),
                        self.get_component_rich_style("lines--dim"))
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        base, stripe, head, dim = self._styles
        if y >= len(self.rows):
            return Strip.blank(self.size.width, base)
        style = head if self.heading else stripe if y % 2 == 0 else base
        text, system = self.rows[y]
        return Strip([Segment(text, style), Segment(system, style + dim)]).crop_extend(0, self.size.width, style)


class SpeciesTable(Vertical):
    """Name, concentration, log C, fraction of its system (α) and activity coefficient (γ) of each species.

    While a state is pinned, a Δlog C column shows the change against it.
    """

    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved mixture on display."""
    pinned: var[chem.Equilibrium | None] = var(None, init=False)
    """The state changes are measured against, or None."""

    def compose(self) -> ComposeResult:
        yield SpeciesLines(heading=True, id="species-head")
        with VerticalScroll(id="species-body-scroll"):
            yield SpeciesLines(id="species-body")

    def watch_result(self) -> None:
        self._fill()

    def watch_pinned(self) -> None:
        self._fill()

    @property
    def header(self) -> str:
        """The column headings as plain text."""
        rows = self.query_one("#species-head", SpeciesLines).rows
        return rows[0][0] + rows[0][1] if rows else ""

    @property
    def lines(self) -> list[str]:
        """The rows as plain text, one per species."""
        return [a + b for a, b in self.query_one("#species-body", SpeciesLines).rows]

    def _fill(self) -> None:
        if self.result is None:
            return
        heading, rows = species_rows(self.result, self.pinned)
        self.query_one("#species-head", SpeciesLines).show([(heading, "")])
        self.query_one("#species-body", SpeciesLines).show(rows)
