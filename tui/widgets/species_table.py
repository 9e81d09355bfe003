"""The species panel: every species of the solved mixture, with the change against a pinned state.

Two views (key ``l``): the flat list of every species, complexes with the
systems they hold; and *by system*, each metal, ligand or acid–base system with
every form that holds it (complexes and precipitated solids included) and its
share of the system's total.

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
from tui.formula import shown_name, shown_unit
from tui.text import printable
from tui.widgets.readout import signed

#: (heading, width) of each column after the species name; numbers are right-aligned, and every
#: column is led by a space, so that even the widest number never runs into its neighbour
#: ("5.45e-11 -10.26", not "5.45e-11-10.26").
COLUMNS = (("C / M", 8), ("log C", 6), ("α", 5), ("γ", 5))
DELTA_COLUMN = ("Δlog C", 6)
#: Columns of the by-system view: the form's share of its system's total, then its amount.
SYSTEM_COLUMNS = (("share", 6), ("C / M", 8), ("log C", 6))


#: Widest species name shown in full; a longer one is cut with an ellipsis, so the numbers stay in view.
NAME_WIDTH_MAX = 16

Row = tuple[str, ...]
"""A line of the panel: (numbers part, dimmed tail) and, for a group heading, a third item "group"."""


def _pad(text: str, width: int) -> str:
    """``text`` in exactly ``width`` terminal cells: padded, or cut with an ellipsis (wide characters count double)."""
    if cell_len(text) > width:
        return set_cell_size(text, width - 1) + "…"
    return text + " " * (width - cell_len(text))


def _gamma(value: float) -> str:
    return f"{value:.3f}" if value < 10 else f"{value:.2g}"


def _log_c(value: float) -> str:
    return f"{value:.2f}" if math.isfinite(value) else "-inf"


def _log(value: float) -> float:
    return math.log10(value) if value > 0 else -math.inf


def _delta_log(now: float, before: float | None) -> str:
    if before is None:
        return "new"
    if math.isfinite(now) and math.isfinite(before):
        return signed(now - before, 2)
    return "—"


def _delta(now: chem.Species, before: chem.Species | None) -> str:
    return _delta_log(now.log_c, None if before is None else before.log_c)


def share_text(fraction: float) -> str:
    """A share of a system's total as a percentage that fits 6 cells: ``92.1%``, ``0.04%``, ``3e-05%``."""
    percent = 100.0 * fraction
    if percent >= 0.1:
        return f"{percent:.1f}%"
    if percent >= 0.001:
        return f"{percent:.3f}%"
    return f"{percent:.0e}%" if percent > 0 else "0%"


def _held_by(sp: chem.Species) -> str:
    """What a complex holds, for the flat list's system column: ``calcium+carbonate``."""
    return "+".join(printable(name) for name, _ in sp.holds) or printable(sp.system)


def species_rows(eq: chem.Equilibrium, pinned: chem.Equilibrium | None, *,
                 utf8: bool = False) -> tuple[str, list[Row]]:
    """The heading and, per species, (numbers part, system) as fixed-width text.

    A complex's system column names the systems it holds.
    """
    columns = COLUMNS + ((DELTA_COLUMN,) if pinned is not None else ())
    names = [shown_name(sp.name, utf8) for sp in eq.species]    # names can come from a shared preset
    name_width = min(max(7, *(cell_len(n) for n in names)), NAME_WIDTH_MAX)
    heading = _pad("species", name_width) + "".join(f" {t:>{w}}" for t, w in columns) + "  system"
    before = {(s.system, s.name): s for s in pinned.species} if pinned is not None else None
    rows: list[Row] = []
    for sp, name in zip(eq.species, names):
        cells = [f"{sp.conc:.2e}", _log_c(sp.log_c),
                 "" if sp.fraction is None else f"{sp.fraction:.3f}", _gamma(sp.activity_coefficient)]
        if before is not None:
            cells.append(_delta(sp, before.get((sp.system, sp.name))))
        system = _held_by(sp) if sp.holds else printable(sp.system)
        rows.append((_pad(name, name_width) + "".join(f" {c:>{w}}" for c, (_, w) in zip(cells, columns)),
                     f"  {system}"))
    return heading, rows


def system_rows(eq: chem.Equilibrium, pinned: chem.Equilibrium | None, *,
                utf8: bool = False) -> tuple[str, list[Row]]:
    """The heading and the rows of the by-system view.

    Each system gets a heading row (its name and total) and then every species and
    solid holding it with its share of the total (counting the units it holds),
    largest first, as :attr:`chem.SystemState.distribution` gives them. H+, OH- and
    the strong ions follow under a heading of their own.
    """
    columns = SYSTEM_COLUMNS + ((DELTA_COLUMN,) if pinned is not None else ())
    species = {sp.name: sp for sp in eq.species}
    solids = {so.name: so for so in eq.solids}
    in_systems = [name for st in eq.systems for name, _ in st.distribution]
    loose = [sp for sp in eq.species if sp.system in ("water", "strong")]
    names = {name: shown_name(name, utf8) for name in [*in_systems, *(sp.name for sp in loose)]}
    name_width = min(max(9, *(cell_len(n) + 2 for n in names.values())), NAME_WIDTH_MAX + 2)
    heading = _pad("system/form", name_width) + "".join(f" {t:>{w}}" for t, w in columns)
    old_species = {sp.name: sp for sp in pinned.species} if pinned is not None else {}
    old_solids = {so.name: so for so in pinned.solids} if pinned is not None else {}

    def line(name: str, share: str, conc: float, before: float | None, tail: str = "") -> Row:
        cells = [share, f"{conc:.2e}", _log_c(_log(conc))]
        if pinned is not None:
            cells.append(_delta_log(_log(conc), before))
        return (_pad("  " + names[name], name_width) + "".join(f" {c:>{w}}" for c, (_, w) in zip(cells, columns)),
                tail)

    rows: list[Row] = []
    for st in eq.systems:
        rows.append((f"{printable(st.name)}  {shown_unit(chem.format_molar(st.total, 4), utf8)}", "", "group"))
        for name, fraction in st.distribution:
            if name in solids:
                old = old_solids.get(name)
                rows.append(line(name, share_text(fraction), solids[name].amount,
                                 None if old is None else _log(old.amount), "  solid"))
            elif name in species:
                old = old_species.get(name)
                rows.append(line(name, share_text(fraction), species[name].conc,
                                 None if old is None else old.log_c))
    if loose:
        rows.append(("water and strong ions", "", "group"))
        for sp in loose:
            old = old_species.get(sp.name)
            rows.append(line(sp.name, "", sp.conc, None if old is None else old.log_c))
    return heading, rows


class SpeciesLines(Widget):
    """Part of :class:`SpeciesTable`: paints rows of text, every other one on a tinted background, the tail dimmed.

    A row whose third item is ``"group"`` is a group heading (the by-system view). A
    row too long for the panel keeps its numbers and ends its tail with an ellipsis.
    """

    COMPONENT_CLASSES = {"lines--stripe", "lines--dim", "lines--head", "lines--group"}

    def __init__(self, *, heading: bool = False, id: str | None = None) -> None:
        super().__init__(id=id)
        self.heading = heading
        self.rows: list[Row] = []

    def show(self, rows: list[Row]) -> None:
        resized = len(rows) != len(self.rows)
        self.rows = rows
        if resized:
            self.styles.height = len(rows)
        self.refresh(layout=resized)

    def render_lines(self, crop: Region) -> list[Strip]:
        base = self.rich_style                          # computed once per paint, not per line
        self._styles = (base, base + self.get_component_rich_style("lines--stripe"),
                        base + self.get_component_rich_style("lines--head"),
                        self.get_component_rich_style("lines--dim"),
                        base + self.get_component_rich_style("lines--group"))
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        base, stripe, head, dim, group = self._styles
        width = self.size.width
        if y >= len(self.rows):
            return Strip.blank(width, base)
        row = self.rows[y]
        if len(row) > 2 and row[2] == "group":
            style = group
        else:
            style = head if self.heading else stripe if y % 2 == 0 else base
        text, tail = row[0], row[1]
        room = width - cell_len(text)
        if tail and 0 < room < cell_len(tail):
            tail = set_cell_size(tail, room - 1) + "…"
        return Strip([Segment(text, style), Segment(tail, style + dim)]).crop_extend(0, width, style)


class SpeciesTable(Vertical):
    """Name, concentration, log C, fraction of its system (α) and activity coefficient (γ) of each species.

    While a state is pinned, a Δlog C column shows the change against it. With
    :attr:`by_system`, each system is listed with every form holding it and its share.
    """

    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved mixture on display."""
    pinned: var[chem.Equilibrium | None] = var(None, init=False)
    """The state changes are measured against, or None."""
    by_system: var[bool] = var(False, init=False)
    """List by system (each form with its share of the system's total) instead of one flat list."""

    def __init__(self, *, utf8: bool = True, id: str | None = None) -> None:
        """Create the panel.

        Args:
            utf8: The terminal can draw sub- and superscripts (names like HPO₄²⁻); else ASCII names.
            id: Widget id.
        """
        super().__init__(id=id)
        self.utf8 = utf8

    def compose(self) -> ComposeResult:
        yield SpeciesLines(heading=True, id="species-head")
        with VerticalScroll(id="species-body-scroll"):
            yield SpeciesLines(id="species-body")

    def watch_result(self) -> None:
        self._fill()

    def watch_pinned(self) -> None:
        self._fill()

    def watch_by_system(self, by_system: bool) -> None:
        self.border_title = "Species by system" if by_system else "Species"
        self._fill()

    @property
    def header(self) -> str:
        """The column headings as plain text."""
        rows = self.query_one("#species-head", SpeciesLines).rows
        return rows[0][0] + rows[0][1] if rows else ""

    @property
    def lines(self) -> list[str]:
        """The rows as plain text, one per line shown."""
        return [row[0] + row[1] for row in self.query_one("#species-body", SpeciesLines).rows]

    def _fill(self) -> None:
        if self.result is None:
            return
        make = system_rows if self.by_system else species_rows
        heading, rows = make(self.result, self.pinned, utf8=self.utf8)
        self.query_one("#species-head", SpeciesLines).show([(heading, "")])
        self.query_one("#species-body", SpeciesLines).show(rows)
