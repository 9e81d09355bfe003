"""The explorer's full-speciation actions, kept out of ``tui/app.py`` (a mixin of ExplorerApp).

* ``l``: the species panel by system (each form's share) or as one flat list.
* ``S``: the solids and gases panel in place of the species panel.
* ``P``: precipitation off, all solids, or the solids chosen in the panel (``space`` on a solid).
* ``A``: open the flask to air (CO2 at its air pressure) or close it.
* ``G``: hold any gas at a typed partial pressure (``enter`` on a gas in the panel does the same).

Every change of the mixture goes through ``commit``: one undoable edit, solved off
the UI thread, pinned-comparable and autosaved like any other. The numbers come
from :mod:`chem`; this module only wires keys to edits.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import chem
from chem import AIR_GAS, AIR_PRESSURE
from tui.formula import shown_name, shown_unit
from tui.widgets.phase_panel import PhasePanel
from tui.widgets.plot_kinds import MIN_HEIGHT
from tui.widgets.readout import CORE_LINES, ReadoutRows, precipitation_label
from tui.widgets.species_table import SpeciesTable

if TYPE_CHECKING:
    from tui.screens.gas_picker import GasChange

#: Heights of the flask-and-readout band (rows, borders included) as ``app.tcss`` sets them, on a
#: short and on a tall terminal; the band grows by the readout's extra lines.
UPPER_ROWS = (7, 12)
#: Rows on screen outside the two bands: the title bar, the notice bar and the key bar.
CHROME_ROWS = 3


class SpeciationActions:
    """Mixed into :class:`tui.app.ExplorerApp` (which provides ``mixture``, ``result``, ``commit`` ...)."""

    _readout_rows: int = CORE_LINES
    _chosen: tuple[str, ...] = ()                       # the last list of solids chosen to form
    _gas_texts: dict[str, str] | None = None            # the last pressure typed for each gas

    # -- the species panel -------------------------------------------------------------------
    def action_species_view(self) -> None:
        table = self.query_one(SpeciesTable)
        table.by_system = not table.by_system

    # -- solids and gases panel ----------------------------------------------------------------
    @property
    def solids_shown(self) -> bool:
        """Whether the solids and gases panel is shown in place of the species panel."""
        return self.screen_stack[0].has_class("-solids")

    def action_solids(self) -> None:
        main = self.screen_stack[0]
        shown = not self.solids_shown
        main.set_class(shown, "-solids")
        panel = self.query_one(PhasePanel)
        if shown:
            panel.focus()
            self.call_after_refresh(panel.redraw)
        elif panel.has_focus:
            from tui.widgets.flask_list import FlaskList

            self.query_one(FlaskList).focus()

    def action_precipitation(self) -> None:
        """Precipitation off -> all solids -> the solids last chosen (if any) -> off."""
        setting = self.mixture.precipitate
        if setting is True:
            new = self._chosen or False
        elif setting:
            self._chosen = tuple(setting)
            new = False
        else:
            new = True
        self.commit(self.mixture.with_precipitate(new), f"precipitation {precipitation_label(new)}")
        self.notify(f"precipitation: {self._precipitation_words(new)}", timeout=3)

    @staticmethod
    def _precipitation_words(setting) -> str:
        if setting is True:
            return "every supersaturated solid may form"
        if not setting:
            return "off (saturation indices only)"
        return "only " + ", ".join(setting) + " may form"

    def on_phase_panel_toggle_solid(self, message: PhasePanel.ToggleSolid) -> None:
        if self.result is None:
            return
        name = message.name
        setting = self.mixture.precipitate
        candidates = [so.name for so in self.result.solids]
        if setting is True:
            allowed = set(candidates) - {name}
        elif not setting:
            allowed = {name}
        else:
            allowed = set(setting) ^ {name}
        others = [n for n in (setting if isinstance(setting, tuple) else ()) if n not in candidates]
        chosen = tuple(n for n in [*candidates, *others] if n in allowed)
        if chosen:
            self._chosen = chosen
        may = name in allowed
        self.commit(self.mixture.with_precipitate(chosen or False), f"{name} {'may' if may else 'may not'} form")

    # -- gases ----------------------------------------------------------------------------------
    def _pressure_text(self, name: str) -> str | None:
        texts = self._gas_texts or {}
        return texts.get(name, AIR_PRESSURE if name == AIR_GAS else None)

    def _hold(self, fixed: chem.FixedGas, what: str) -> None:
        self._gas_texts = {**(self._gas_texts or {}), fixed.gas.name: fixed.label}
        self.commit(self.mixture.with_gas(fixed), what)

    def _gas(self, name: str) -> chem.Gas:
        own = {g.name: g for g in self.mixture.custom_gases}
        return own[name] if name in own else self.library.gas(name)

    def action_air(self) -> None:
        """Open the flask to air (hold CO2 at its air pressure), or close it (release CO2)."""
        if any(f.gas.name == AIR_GAS for f in self.mixture.gases):
            self.commit(self.mixture.without_gas(AIR_GAS), "close the flask to air")
            self.notify(f"closed: {shown_name(AIR_GAS, self._utf8)} is no longer held", timeout=3)
            return
        text = self._pressure_text(AIR_GAS) or AIR_PRESSURE
        try:
            fixed = chem.FixedGas(self._gas(AIR_GAS), chem.parse_pressure(text), text)
        except chem.ChemError as exc:
            self.notify(str(exc), title="Not opened to air", severity="warning")
            return
        self._hold(fixed, "open the flask to air")
        self.notify(f"open to air: {shown_name(AIR_GAS, self._utf8)} held at {shown_unit(text, self._utf8)}",
                    timeout=3)

    def action_gas(self, start_with: str | None = None) -> None:
        from tui.screens.gas_picker import GasPicker

        def done(change: GasChange | None) -> None:
            if change is None:
                return
            if change.release is not None:
                self.commit(self.mixture.without_gas(change.release), f"release {change.release}")
            elif change.fixed is not None:
                self._hold(change.fixed, f"hold {change.fixed.gas.name} at {change.fixed.label}")

        self.push_screen(GasPicker(self._all_gases(), self.mixture, self.result, utf8=self._utf8,
                                   start_with=start_with), done)

    def _all_gases(self) -> tuple[chem.Gas, ...]:
        names = {g.name for g in self.library.gases}
        return tuple(self.library.gases) + tuple(g for g in self.mixture.custom_gases if g.name not in names)

    def on_phase_panel_toggle_gas(self, message: PhasePanel.ToggleGas) -> None:
        name = message.name
        if any(f.gas.name == name for f in self.mixture.gases):
            self.commit(self.mixture.without_gas(name), f"release {name}")
            return
        text = self._pressure_text(name)
        if text is None:                                # no pressure known yet: ask for one
            self.action_gas(name)
            return
        try:
            fixed = chem.FixedGas(self._gas(name), chem.parse_pressure(text), text)
        except chem.ChemError as exc:
            self.notify(str(exc), title="Gas not held", severity="warning")
            return
        self._hold(fixed, f"hold {name} at {text}")

    def on_phase_panel_edit_gas(self, message: PhasePanel.EditGas) -> None:
        self.action_gas(message.name)

    # -- room for the readout ------------------------------------------------------------------
    def on_readout_rows(self, message: ReadoutRows) -> None:
        if message.rows != self._readout_rows:
            self._readout_rows = message.rows
            self._fit_upper()

    def _fit_upper(self) -> None:
        """Grow the flask-and-readout band by the readout's extra lines, leaving the chart room to plot."""
        upper = self.query_one("#upper")
        extra = max(self._readout_rows - CORE_LINES, 0)
        if not extra:
            if upper.styles.inline.has_rule("height"):
                upper.styles.height = None              # back to the stylesheet's height
            return
        base = UPPER_ROWS[1] if self.screen_stack[0].has_class("-tall") else UPPER_ROWS[0]
        room = self.size.height - CHROME_ROWS - (MIN_HEIGHT + 2)
        height = max(base, min(base + extra, room))
        if upper.styles.height is None or upper.styles.height.value != height or \
                not upper.styles.inline.has_rule("height"):
            upper.styles.height = height
