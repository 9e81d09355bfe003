"""The readout panel: pH in large digits, with the conditions and the state of the solve.

One widget paints every line (the pH changes with almost every edit, and each
extra widget in the panel made every such frame slower).
"""

from __future__ import annotations

import re
import textwrap
from dataclasses import dataclass

from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from rich.style import Style
from textual.geometry import Region
from textual.message import Message
from textual.reactive import var
from textual.renderables.digits import Digits
from textual.strip import Strip
from textual.widget import Widget

import chem
from chem import format_pressure
from tui.formula import shown_name, shown_unit
from tui.text import printable

Piece = tuple[str, str]
"""A run of text and the name of its component style ("" for the panel's own)."""

_LABEL_WIDTH = 3        # "pH" beside the large digits
_GAP = 2                # between the digits and the numbers beside them
#: Lines always shown: three rows of large digits, the conditions and the state of the solve.
CORE_LINES = 5
#: Systems whose presence makes a mixture a water sample, with alkalinity and hardness shown.
WATER_SYSTEMS = ("calcium", "magnesium", "carbonate")
_CHARGE = re.compile(r"\^?[0-9]*[+-]$")


def signed(value: float, digits: int) -> str:
    """``+0.123`` / ``-0.123`` / ``±0.000``: a change with its sign always written."""
    text = f"{value:+.{digits}f}"
    return "±" + text[1:] if float(text) == 0.0 else text


def big_digits(text: str) -> list[str]:
    """``text`` in the three-row bold digit font, one string per row."""
    rows = "".join(segment.text for segment in Digits(text).render(Style(bold=True))).split("\n")
    return rows[:3]


def metal_symbol(ion: str) -> str:
    """The free ion's name without its charge, for the pM label: ``Ca^2+`` -> ``Ca``."""
    return _CHARGE.sub("", ion) or ion


def _mg_l(value: float) -> str:
    return f"{value:.0f}" if abs(value) >= 100 else f"{value:.1f}" if abs(value) >= 10 else f"{value:.2f}"


def precipitation_label(setting: bool | tuple[str, ...]) -> str:
    """``off``, ``all`` or ``N chosen``: a mixture's precipitation setting in a word or two."""
    if setting is True:
        return "all"
    if not setting:
        return "off"
    return f"{len(setting)} chosen"


def speciation_lines(eq: chem.Equilibrium, pinned: chem.Equilibrium | None, width: int,
                     utf8: bool) -> list[list[Piece]]:
    """The readout's lines on full speciation, each flowed to ``width`` cells.

    * each metal's free-ion level pM = -log a (``pCa 3.35``), with its change against ``pinned``;
    * for a water (calcium, magnesium or carbonate present): alkalinity and hardness as mg/L CaCO3;
    * how many solids are supersaturated, how many precipitated, the precipitation setting;
    * the gases held over the solution.
    """
    lines: list[list[Piece]] = []
    levels: list[list[Piece]] = []
    old = {st.name for st in pinned.systems} if pinned is not None else set()
    for st in eq.systems:
        if not st.is_metal:
            continue
        ion = eq.species_of(st.name)[0].name
        level = eq.free_level(st.name)
        item: list[Piece] = [(f"p{shown_name(metal_symbol(ion), utf8)} ", "readout--bold"), (f"{level:.2f}", "")]
        if pinned is not None and st.name in old:
            item.append((f" Δ{signed(level - pinned.free_level(st.name), 2)}", "readout--delta"))
        levels.append(item)
    lines += _flow(levels, width)
    names = {st.name for st in eq.systems}
    if any(name in names for name in WATER_SYSTEMS):
        unit = " mg/L CaCO₃" if utf8 else " mg/L CaCO3"
        water: list[list[Piece]] = [[("alk. ", "readout--dim"), (_mg_l(eq.alkalinity_mg_l), "")]]
        if eq.hardness_mg_l is not None:
            water.append([("hardness ", "readout--dim"), (_mg_l(eq.hardness_mg_l), "")])
        water[-1].append((unit, "readout--dim"))
        lines += _flow(water, width, " ")
    rest: list[list[Piece]] = []
    if eq.solids:
        n = len(eq.supersaturated)
        formed = sum(1 for so in eq.solids if so.amount > 0)
        rest.append([(f"{n} supersaturated", "readout--warn" if n else "readout--dim")])
        if formed:
            rest.append([(f"{formed} precipitated", "readout--bold")])
        rest.append([("precip. ", "readout--dim"), (precipitation_label(eq.mixture.precipitate), "")])
    for fixed in eq.mixture.gases:
        rest.append([(shown_name(fixed.gas.formula or fixed.gas.name, utf8), "readout--bold"),
                     (f" held {shown_unit(fixed.label, utf8)}", "")])
    for gas in eq.gases:
        if gas.over_exposure_limit:
            rest.append([(f"⚠ {shown_name(gas.name, utf8)} {format_pressure(gas.pressure_atm)}", "readout--bad")])
    lines += _flow(rest, width)
    return lines


def _flow(items: list[list[Piece]], width: int, gap: str = "  ") -> list[list[Piece]]:
    """``items`` packed into lines of at most ``width`` cells, ``gap`` between two on a line."""
    lines: list[list[Piece]] = []
    used = 0
    for item in items:
        size = sum(cell_len(text) for text, _ in item)
        if lines and used + len(gap) + size <= width:
            lines[-1] += [(gap, ""), *item]
            used += len(gap) + size
        else:
            lines.append(list(item))
            used = size
    return lines


@dataclass
class ReadoutRows(Message):
    """The readout needs ``rows`` lines to show everything but the extras of a tall terminal."""

    rows: int


class Readout(Widget):
    """pH (large), pOH, temperature, ionic strength, buffer capacity, activity model, convergence and notices.

    While a state is pinned, the change of pH against it is shown too. Where there is
    room (class ``-more`` on the screen: tall terminals), pKw, the remaining
    charge-balance error and each system's total follow.
    """

    COMPONENT_CLASSES = {"readout--big", "readout--bold", "readout--delta", "readout--dim", "readout--ok",
                         "readout--bad", "readout--warn"}

    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved mixture on display."""
    pinned: var[chem.Equilibrium | None] = var(None, init=False)
    """The state changes are measured against, or None."""
    capacity: var[float | None] = var(None, init=False)
    """Buffer capacity β at the current pH, mol/(L·pH), or None."""
    ph_sd: var[float | None] = var(None, init=False)
    """Standard uncertainty of the pH from the constants (shown as ±), or None when not shown."""

    def __init__(self, *, utf8: bool = True, id: str | None = None) -> None:
        """Create the readout.

        Args:
            utf8: The terminal can draw sub- and superscripts (CaCO₃); else ASCII.
            id: Widget id.
        """
        super().__init__(id=id)
        self.utf8 = utf8
        self._lines: list[list[Piece]] = [[("solving…", "")]]
        self._width = 0
        self._rows = CORE_LINES

    def watch_result(self) -> None:
        self._redraw()

    def watch_pinned(self) -> None:
        self._redraw()

    def watch_capacity(self) -> None:
        self._redraw()

    def watch_ph_sd(self) -> None:
        self._redraw()

    def on_resize(self) -> None:
        self._redraw()

    def _redraw(self) -> None:
        eq = self.result
        if eq is None:
            return
        width = self.content_size.width
        # not laid out yet (width 0, or a terminal below the minimum size): draw now; on_resize
        # draws again once there is room (rescheduling here would spin while the terminal is small)
        digits = big_digits(f"{eq.pH:.2f}")
        side: list[list[Piece]] = [[(f"pH  {eq.pH:.3f}", "readout--bold")], [(f"pOH {eq.pOH:.3f}", "")], []]
        if self.ph_sd is not None:
            sd = self.ph_sd
            side[0].append((f" ± {sd:.3f}" if sd >= 0.0005 else " ± <0.001", "readout--delta"))
        if self.pinned is not None:
            side[2] = [(f"ΔpH {signed(eq.pH - self.pinned.pH, 3)}", "readout--delta")]
        lines: list[list[Piece]] = []
        for row, (big, beside) in enumerate(zip(digits, side)):
            label = "pH" if row == 1 else ""
            lines.append([(label.ljust(_LABEL_WIDTH), "readout--big"), (big, "readout--big"), (" " * _GAP, ""),
                          *beside])
        mix = eq.mixture
        beta = "" if self.capacity is None else f"  β {chem.format_molar(self.capacity, 3)}/pH"
        lines.append([(f"{mix.temperature_c:.1f} °C  I {eq.ionic_strength:.3g} M{beta}", "")])
        state: list[Piece] = [("✓ converged", "readout--ok") if eq.converged else ("✗ NOT converged", "readout--bad"),
                              (f"  {mix.activity}", "")]
        if eq.cautions:
            n = len(eq.cautions)
            state += [("  ", ""), (f"{n} caution{'s' * (n > 1)}", "readout--bad")]
        n = len(eq.warnings)
        more = [("  ", ""), (f"{n} warning{'s' * (n != 1)}", "readout--warn" if n else "readout--dim")]
        if n or not eq.cautions or sum(cell_len(t) for t, _ in state + more) <= width:
            state += more                               # "0 warnings" gives way to the cautions when narrow
        lines.append(state)
        if width:                                       # flowed to the panel's width, once it has one
            lines += speciation_lines(eq, self.pinned, width, self.utf8)
        if width and len(lines) != self._rows:          # more or fewer lines than before: ask for room
            self._rows = len(lines)
            self.post_message(ReadoutRows(len(lines)))
        lines.append([])
        lines.append([("pKw ", "readout--dim"), (f"{eq.pKw:.3f}", ""), ("   balance error ", "readout--dim"),
                      (f"{abs(eq.balance_error):.1e} M", "")])
        totals = ", ".join(f"{printable(st.name)} {shown_unit(chem.format_molar(st.total), self.utf8)}"
                           for st in eq.systems) or "none"
        wrapped = textwrap.wrap(f"systems {totals}", max(width, 20), break_on_hyphens=False) or [""]
        lines.append([("systems", "readout--dim"), (wrapped[0][len("systems"):], "")])
        lines += [[(more, "")] for more in wrapped[1:]]
        self._repaint_changed(lines, width)

    def _repaint_changed(self, lines: list[list[Piece]], width: int) -> None:
        """Keep ``lines`` and repaint only the lines that differ from those shown."""
        old, self._lines = self._lines, lines
        if width != self._width:
            self._width = width
            self.refresh()
            return
        for y in range(max(len(old), len(lines))):
            if y >= len(old) or y >= len(lines) or old[y] != lines[y]:
                self.refresh(Region(0, y, self.size.width, 1))

    def render_lines(self, crop: Region) -> list[Strip]:
        base = self.rich_style                          # computed once per paint, not per line
        self._styles = {"": base, **{name: base + self.get_component_rich_style(name, partial=True)
                                     for name in self.COMPONENT_CLASSES}}
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        width = self.content_size.width
        styles = self._styles
        base = styles[""]
        if y >= len(self._lines):
            return Strip.blank(width, base)
        segments, used = [], 0
        for text, style in self._lines[y]:
            if used >= width:
                break
            room = width - used
            if cell_len(text) > room:
                text = set_cell_size(text, room - 1) + "…"
            segments.append(Segment(text, styles[style]))
            used += cell_len(text)
        return Strip(segments).extend_cell_length(width, base)
