"""Hold a gas over the solution: pick a gas of the library (or the preset), type its partial pressure.

Pressures are typed with units (``5 %``, ``420 uatm``, ``10 ppm``, ``0.2 bar``) and read by
:func:`chem.parse_pressure`; an empty entry releases a gas that is held.
"""

from __future__ import annotations

from dataclasses import dataclass

from textual import on
from textual.app import ComposeResult
from textual.containers import Horizontal
from textual.content import Content
from textual.validation import ValidationResult, Validator
from textual.widgets import Input, Label
from textual.widgets.option_list import Option

import chem
from chem import AIR_GAS, AIR_PRESSURE, format_pressure
from tui.widgets.entry import Entry
from tui.formula import shown_name, shown_unit
from tui.screens.picker import PickerScreen
from tui.text import printable


@dataclass(frozen=True)
class GasChange:
    """What the dialog asks for: hold ``fixed`` over the solution, or release gas ``release``."""

    fixed: chem.FixedGas | None = None
    release: str | None = None


class PressureValidator(Validator):
    """Accepts what :func:`chem.parse_pressure` accepts; empty is accepted too (it releases the gas)."""

    def validate(self, value: str) -> ValidationResult:
        if not value.strip():
            return self.success()
        try:
            chem.parse_pressure(value)
        except chem.ChemError as exc:
            return self.failure(str(exc), value)
        return self.success()


class GasPicker(PickerScreen["GasChange | None"]):
    """Pick a gas, then type the partial pressure to hold it at (empty: release it).

    Dismisses with a :class:`GasChange`, or None when closed.
    """

    heading = "Hold a gas over the solution"
    placeholder = "gas, e.g. CO2, NH3, H2S"

    def __init__(self, gases: tuple[chem.Gas, ...], mixture: chem.Mixture, result: chem.Equilibrium | None,
                 *, utf8: bool = True, start_with: str | None = None) -> None:
        """Create the dialog.

        Args:
            gases: Every gas that can be held (the library's and the preset's).
            mixture: The flask as it is (which gases are held, at what pressure).
            result: Its solved state (the partial pressures over it), or None.
            utf8: The terminal can draw sub- and superscripts.
            start_with: A gas name: go straight to its pressure.
        """
        super().__init__()
        self.gases = gases
        self.mixture = mixture
        self.result = result
        self.utf8 = utf8
        self.start_with = start_with
        self.gas: chem.Gas | None = None

    def compose_extra(self) -> ComposeResult:
        with Horizontal(id="finder-amount-line"):
            yield Label("", id="finder-amount-label")
            yield Entry("", placeholder="e.g. 5 %, 420 uatm, 10 ppm", id="gas-pressure", compact=True,
                        select_on_focus=True, validators=[PressureValidator()], validate_on=["changed", "submitted"])
        yield Label("", id="gas-hint", classes="dialog-hint")
        yield Label("", id="finder-error", classes="dialog-error")

    def on_mount(self) -> None:
        super().on_mount()
        self.query_one("#finder-amount-line").display = False
        if self.start_with is not None and any(g.name == self.start_with for g in self.gases):
            self.picked(self.start_with)

    def _held(self) -> dict[str, chem.FixedGas]:
        return {f.gas.name: f for f in self.mixture.gases}

    def options(self, query: str) -> list[Option]:
        q = query.strip().casefold()
        held = self._held()
        over = {g.name: g for g in self.result.gases} if self.result is not None else {}
        out = []
        for gas in self.gases:
            words = [gas.name, gas.formula, *gas.aliases]
            if q and not any(q in w.casefold() for w in words if w):
                continue
            if gas.name in held:
                state = (f"held at {shown_unit(held[gas.name].label, self.utf8)}", "$accent")
            elif gas.name in over:
                state = (f"{format_pressure(over[gas.name].pressure_atm)} over the solution", "dim")
            else:
                state = ("not in the flask", "dim")
            alias = gas.aliases[0] if gas.aliases else ""
            prompt = Content.assemble((shown_name(gas.formula or gas.name, self.utf8), "bold"), "  ",
                                      (printable(alias), "$secondary"), "  ", state)
            out.append(Option(prompt, id=gas.name))
        return out

    def picked(self, option_id: str) -> None:
        self.gas = next(g for g in self.gases if g.name == option_id)
        held = self._held().get(self.gas.name)
        self.query_one("#finder-amount-line").display = True
        self.query_one("#finder-amount-label", Label).update(
            Content.assemble("hold ", (shown_name(self.gas.formula or self.gas.name, self.utf8), "bold"), " at: "))
        entry = self.query_one("#gas-pressure", Input)
        entry.value = held.label if held is not None else AIR_PRESSURE if self.gas.name == AIR_GAS else ""
        self.query_one("#gas-hint", Label).update(
            "units: atm, bar, kPa, Pa, mmHg, uatm, ppm or % · enter holds"
            + (" · empty releases it" if held is not None else "") + " · esc back")
        self.set_focus(entry)               # at once: keys typed ahead (over SSH) land in the pressure

    @on(Input.Changed, "#gas-pressure")
    def _check(self, event: Input.Changed) -> None:
        result = event.validation_result
        self.query_one("#finder-error", Label).update(
            Content("" if result is None or result.is_valid else printable(result.failure_descriptions[0])))

    @on(Input.Submitted, "#gas-pressure")
    def _hold(self, event: Input.Submitted) -> None:
        event.stop()
        assert self.gas is not None
        text = event.value.strip()
        if not text:
            if self.gas.name in self._held():
                self.dismiss(GasChange(release=self.gas.name))
            else:
                self.query_one("#finder-error", Label).update("Type a pressure with its unit, e.g. 5 %.")
            return
        try:
            fixed = chem.FixedGas(self.gas, chem.parse_pressure(text), text)
        except chem.ChemError as exc:
            self.query_one("#finder-error", Label).update(Content(printable(str(exc))))
            return
        self.dismiss(GasChange(fixed=fixed))

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "move":
            return self.gas is None
        return True

    def action_cancel(self) -> None:
        if self.gas is None or self.start_with is not None:
            self.dismiss(None)
            return
        self.gas = None
        self.query_one("#finder-amount-line").display = False
        self.query_one("#finder-error", Label).update("")
        self.query_one("#gas-hint", Label).update("")
        self.query_one("#picker-query", Input).focus()
