"""The solids and gases panel: what could leave the solution, and what the air over it holds.

Shown in place of the species panel (key ``S``). For every candidate solid: may
it form (``[x]``), its saturation index drawn as a bar around 0, the amount
precipitated, and the change of SI against a pinned state. For every gas of the
library (and of the preset): whether it is held at a fixed partial pressure, the
partial pressure over the solution, and, for a toxic gas, its exposure limit and
the caution when the headspace would exceed it.

The panel only shows and asks: a key on a row posts a message, and the app
makes the edit (one undoable edit each).
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass

from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from rich.style import Style
from textual.binding import Binding
from textual.geometry import Region, Size
from textual.message import Message
from textual.reactive import var
from textual.scroll_view import ScrollView
from textual.strip import Strip

import chem
from chem import format_pressure
from tui.formula import shown_name, shown_unit
from tui.text import printable
from tui.widgets.readout import precipitation_label, signed

Piece = tuple[str, str]
"""A run of text and the name of its component style ("" for the panel's own)."""

#: Saturation index at either end of the bar; a larger one fills the bar and shows an arrow.
SI_SPAN = 2.0
#: Narrowest bar drawn (cells; odd, so 0 sits in the middle).
BAR_MIN = 7
#: Widest solid or gas name shown in full (cells).
NAME_MAX = 18


@dataclass(frozen=True)
class PanelRow:
    """One line of the panel: ``kind`` is "group", "head", "solid", "gas" or "note"; ``key`` names the item."""

    kind: str
    pieces: tuple[Piece, ...]
    key: str = ""

    @property
    def text(self) -> str:
        return "".join(text for text, _ in self.pieces)


def si_bar(si: float, width: int, utf8: bool) -> tuple[str, str, str]:
    """The saturation index as a bar ``width`` cells wide around a centre mark at 0.

    Returns the text left of the centre, the centre mark and the text right of it;
    each half spans :data:`SI_SPAN`, in half-cell steps. A value past the end fills
    its half and ends in an arrow.
    """
    half = max((width - 1) // 2, 1)
    full, left_half, right_half, centre = ("█", "▐", "▌", "│") if utf8 else ("=", "-", "-", "|")
    if not math.isfinite(si):
        return " " * half, centre, " " * half
    steps = round(min(abs(si), SI_SPAN) / SI_SPAN * half * 2)
    cells = full * (steps // 2)
    beyond = abs(si) > SI_SPAN
    if si >= 0:
        bar = cells + (right_half if steps % 2 else "")
        if beyond:
            bar = bar[:-1] + ("▸" if utf8 else ">")
        return " " * half, centre, bar.ljust(half)
    bar = (left_half if steps % 2 else "") + cells
    if beyond:
        bar = ("◂" if utf8 else "<") + bar[1:]
    return bar.rjust(half), centre, " " * half


def _fit(text: str, width: int) -> str:
    if cell_len(text) > width:
        return set_cell_size(text, max(width - 1, 0)) + "…"
    return text + " " * (width - cell_len(text))


def _si(value: float) -> str:
    """A saturation index in 5 cells: ``+0.39``, ``-12.3``."""
    if not math.isfinite(value):
        return "—"
    return f"{value:+.2f}" if abs(value) < 9.995 else f"{value:+.1f}" if abs(value) < 99.95 else f"{value:+.0f}"


def _delta(value: float) -> str:
    """A change of saturation index in 5 cells, its sign always written."""
    return signed(value, 2) if abs(value) < 9.995 else signed(value, 1) if abs(value) < 99.95 else signed(value, 0)


def panel_rows(eq: chem.Equilibrium, pinned: chem.Equilibrium | None, gases: tuple[chem.Gas, ...],
               width: int, utf8: bool) -> list[PanelRow]:
    """Every line of the panel for ``eq`` at ``width`` cells.

    Args:
        eq: The solved mixture.
        pinned: The state changes are shown against (ΔSI), or None.
        gases: Every gas that can be held over the solution (the library's and the preset's).
        width: Cells available.
        utf8: The terminal can draw sub- and superscripts and block characters.
    """
    width = max(width, 30)
    rows: list[PanelRow] = []
    mix = eq.mixture
    setting = precipitation_label(mix.precipitate)
    rows.append(PanelRow("group", ((f"Solids · precipitation {setting}", ""),)))
    if not eq.solids:
        rows.append(PanelRow("note", (("No solid can form from what is in the flask.", "dim"),)))
    else:
        old = {so.name: so for so in pinned.solids} if pinned is not None else None
        names = {so.name: printable(so.name) for so in eq.solids}
        name_w = min(max(cell_len(n) for n in names.values()), NAME_MAX)
        formula_w = 0
        delta_w = 6 if old is not None else 0               # " +0.03"
        amount_w = 8                                        # " 2.23 µM"
        fixed = 4 + 7 + 1 + amount_w + delta_w              # "[x] ", " +0.39 ", the bar's gap
        if width - fixed - name_w >= BAR_MIN + 14:          # room for the formula too
            formula_w = min(max(cell_len(shown_name(so.formula, utf8)) for so in eq.solids), 14) + 1
        bar_w = width - fixed - name_w - formula_w
        if bar_w < BAR_MIN:                                 # narrow: the names give way first
            name_w = max(8, name_w - (BAR_MIN - bar_w))
            bar_w = max(width - fixed - name_w - formula_w, 3)
        bar_w -= 1 - bar_w % 2                              # odd: 0 in the middle
        half = bar_w // 2
        scale = (_fit(f"-{SI_SPAN:g}", half) + "0" + f"+{SI_SPAN:g}".rjust(half)) if half >= 3 else " " * bar_w
        head = "    " + _fit("solid", name_w) + (_fit(" formula", formula_w) if formula_w else "")
        head += f" {'SI':>5} " + scale + f" {'formed':>{amount_w - 1}}" + (f" {'ΔSI':>5}" if old is not None else "")
        rows.append(PanelRow("head", ((head, ""),)))
        for so in eq.solids:
            allowed = mix.allows(so.name)
            mark = "[x] " if allowed else "[ ] "
            si = so.saturation_index
            formed = so.amount > 0
            tone = "present" if formed else "over" if si > 0 and not allowed else "warn" if si > 0 else "under"
            left, centre, right = si_bar(si, bar_w, utf8)
            if not allowed:
                amount = ("—", "dim")
            elif formed:
                amount = (shown_unit(chem.format_molar(so.amount, 3), utf8), "present")
            else:
                amount = ("none", "dim")
            pieces: list[Piece] = [(mark, "mark" if allowed else "dim"), (_fit(names[so.name], name_w), "")]
            if formula_w:
                pieces.append((_fit(" " + shown_name(so.formula, utf8), formula_w), "dim"))
            pieces += [(f" {_si(si):>5} ", tone if si > 0 or formed else ""),
                       (left, tone), (centre, "dim"), (right, tone),
                       (f" {amount[0]:>{amount_w - 1}}", amount[1])]
            if old is not None:
                before = old.get(so.name)
                delta = "new" if before is None else _delta(si - before.saturation_index)
                pieces.append((f" {delta:>5}", "delta"))
            rows.append(PanelRow("solid", tuple(pieces), so.name))
    rows.append(PanelRow("blank", (("", ""),)))
    rows.append(PanelRow("group", (("Gases over the solution", ""),)))
    state = {g.name: g for g in eq.gases}
    held = {f.gas.name: f for f in mix.gases}
    gas_w = min(max((cell_len(shown_name(g.formula or g.name, utf8)) for g in gases), default=4), 10)
    rows.append(PanelRow("head", (("    " + _fit("gas", gas_w) + f" {'pressure':>10}  ", ""),)))
    for gas in gases:
        mark = "[x] " if gas.name in held else "[ ] "
        name = _fit(shown_name(gas.formula or gas.name, utf8), gas_w)
        pieces = [(mark, "mark" if gas.name in held else "dim"), (name, "")]
        now = state.get(gas.name)
        if gas.name in held:
            pieces += [(f" {shown_unit(held[gas.name].label, utf8):>10}  ", "bold"), ("held", "mark")]
        elif now is None:                               # its system is not in the flask
            pieces.append((f" {'—':>10}  ", "dim"))
        else:
            pieces.append((f" {format_pressure(now.pressure_atm):>10}  ", ""))
        limit = gas.exposure_limit_ppm
        if limit is not None and gas.name not in held:
            over = now is not None and now.over_exposure_limit
            pieces.append(((" ⚠ over " if utf8 else " ! over ") + f"limit {limit:g} ppm" if over
                           else f"limit {limit:g} ppm", "bad" if over else "dim"))
        rows.append(PanelRow("gas", tuple(pieces), gas.name))
    toxic = [c for c in eq.cautions if c.code == "toxic-gas"]
    for caution in toxic:
        for line in textwrap.wrap(printable(caution.message), width - 2, break_on_hyphens=False):
            rows.append(PanelRow("note", ((line, "bad"),)))
    return rows


class PhasePanel(ScrollView, can_focus=True):
    """Candidate solids and gases, one per line, with a cursor; keys on a line post a request to the app."""

    BINDINGS = [
        Binding("up,k", "move(-1)", "Previous", show=False),
        Binding("down,j", "move(1)", "Next", show=False),
        Binding("home", "move_to(0)", "First", show=False),
        Binding("end", "move_to(-1)", "Last", show=False),
        Binding("pageup", "move(-8)", show=False),
        Binding("pagedown", "move(8)", show=False),
        Binding("space", "toggle", "May form / hold", show=False, tooltip="Let the solid under the cursor form, or not; "
                "hold the gas under the cursor, or release it", id="phase-toggle"),
        Binding("enter", "edit", "Pressure", show=False, tooltip="Type the partial pressure to hold the gas at",
                id="phase-edit"),
    ]

    COMPONENT_CLASSES = {"phase--group", "phase--head", "phase--dim", "phase--mark", "phase--over", "phase--warn",
                         "phase--under", "phase--present", "phase--bad", "phase--delta", "phase--bold",
                         "phase--cursor", "phase--cursor-focused"}

    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved mixture on display."""
    pinned: var[chem.Equilibrium | None] = var(None, init=False)
    """The state changes are measured against, or None."""

    @dataclass
    class ToggleSolid(Message):
        """Let solid ``name`` form, or stop it from forming."""

        name: str

    @dataclass
    class ToggleGas(Message):
        """Hold gas ``name`` over the solution (at its last or default pressure), or release it."""

        name: str

    @dataclass
    class EditGas(Message):
        """Ask for the partial pressure to hold gas ``name`` at."""

        name: str

    def __init__(self, gases: tuple[chem.Gas, ...] = (), *, utf8: bool = True, id: str | None = None) -> None:
        """Create the panel.

        Args:
            gases: The library's gases (a preset's own are added from the mixture).
            utf8: The terminal can draw sub- and superscripts and block characters.
            id: Widget id.
        """
        super().__init__(id=id)
        self.gases = gases
        self.utf8 = utf8
        self.rows: list[PanelRow] = []
        self._cursor_key = ""
        self._drawn_for: tuple = ()

    # -- data ----------------------------------------------------------------------------------
    def watch_result(self) -> None:
        self.redraw()

    def watch_pinned(self) -> None:
        self.redraw()

    def on_resize(self) -> None:
        self.redraw()

    def on_show(self) -> None:
        self.redraw()

    def _all_gases(self, eq: chem.Equilibrium) -> tuple[chem.Gas, ...]:
        names = {g.name for g in self.gases}
        own = tuple(g for g in eq.mixture.custom_gases if g.name not in names)
        return self.gases + own

    def redraw(self) -> None:
        """Rebuild the lines (only while the panel is shown: it is hidden most of the time)."""
        eq = self.result
        if eq is None or not self.display or not self.size.width:
            return
        key = (eq, self.pinned, self.size.width)
        if key == self._drawn_for:
            return
        self._drawn_for = key
        self.rows = panel_rows(eq, self.pinned, self._all_gases(eq), self.scrollable_content_region.width,
                               self.utf8)
        self.virtual_size = Size(self.scrollable_content_region.width, len(self.rows))
        items = self._items()
        if items and self._cursor_key not in {self.rows[i].key for i in items}:
            self._cursor_key = self.rows[items[0]].key
        self.refresh()

    # -- cursor --------------------------------------------------------------------------------
    def _items(self) -> list[int]:
        return [i for i, row in enumerate(self.rows) if row.kind in ("solid", "gas")]

    @property
    def cursor_row(self) -> PanelRow | None:
        """The solid or gas line under the cursor."""
        for row in self.rows:
            if row.key == self._cursor_key and row.kind in ("solid", "gas"):
                return row
        return None

    def _cursor_index(self) -> int:
        items = self._items()
        for n, i in enumerate(items):
            if self.rows[i].key == self._cursor_key:
                return n
        return 0

    def action_move(self, step: int) -> None:
        items = self._items()
        if not items:
            return
        n = max(0, min(self._cursor_index() + step, len(items) - 1))
        self._put_cursor(items, n)

    def action_move_to(self, index: int) -> None:
        items = self._items()
        if items:
            self._put_cursor(items, index % len(items))

    def _put_cursor(self, items: list[int], n: int) -> None:
        self._cursor_key = self.rows[items[n]].key
        line = items[n]
        top = line - 1 if n == 0 or self.rows[line - 1].kind == "head" else line
        self.scroll_to_region(Region(0, max(top - 1, 0), 1, line - max(top - 1, 0) + 1), animate=False,
                              immediate=True)
        self.refresh()

    def select(self, key: str) -> None:
        """Put the cursor on the solid or gas called ``key``."""
        items = self._items()
        for n, i in enumerate(items):
            if self.rows[i].key == key:
                self._put_cursor(items, n)
                return
        self._cursor_key = key

    def action_toggle(self) -> None:
        row = self.cursor_row
        if row is not None:
            self.post_message(self.ToggleSolid(row.key) if row.kind == "solid" else self.ToggleGas(row.key))

    def action_edit(self) -> None:
        row = self.cursor_row
        if row is None:
            return
        self.post_message(self.ToggleSolid(row.key) if row.kind == "solid" else self.EditGas(row.key))

    def on_focus(self) -> None:
        self.refresh()

    def on_blur(self) -> None:
        self.refresh()

    # -- painting ------------------------------------------------------------------------------
    @property
    def lines(self) -> list[str]:
        """Every line as plain text."""
        return [row.text for row in self.rows]

    def render_lines(self, crop: Region) -> list[Strip]:
        self._base = self.rich_style                    # computed once per paint, not per line
        self._tones: dict[str, Style] = {name.split("--")[1]: self.get_component_rich_style(name, partial=True)
                                         for name in self.COMPONENT_CLASSES}
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        base, tones = self._base, self._tones
        width = self.scrollable_content_region.width
        index = y + self.scroll_offset.y
        if index >= len(self.rows):
            return Strip.blank(width, base)
        row = self.rows[index]
        under = base
        if row.kind in ("solid", "gas") and row.key == self._cursor_key:
            under = base + tones["cursor-focused" if self.has_focus else "cursor"]
        elif row.kind in ("group", "head"):
            under = base + tones[row.kind]
        segments = [Segment(text, under + tones[tone] if tone else under) for text, tone in row.pieces]
        return Strip(segments).crop_extend(0, width, under)
