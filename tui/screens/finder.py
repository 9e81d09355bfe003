"""The ingredient finder: filter the library as you type, pick a reagent, give its amount."""

from __future__ import annotations

from textual import on
from textual.app import ComposeResult
from textual.containers import Horizontal
from textual.content import Content
from textual.widgets import Input, Label
from textual.widgets.option_list import Option

import chem
from tui.screens.picker import PickerScreen
from tui.text import printable
from tui.widgets.amount_input import AmountInput

#: Amount offered for a newly picked reagent; the user types over it.
DEFAULT_AMOUNT = "10 mM"
#: Most matches listed at once.
MAX_HITS = 40


def matching_reagents(library: chem.Library, query: str) -> list[chem.Reagent]:
    """Reagents whose name, alias or formula matches ``query``, then the reagents of matching systems."""
    found: dict[str, chem.Reagent] = {}
    for item in library.search(query):
        reagents = (item,) if isinstance(item, chem.Reagent) else library.reagents_of(item)
        for reagent in reagents:
            found.setdefault(reagent.name, reagent)
    return list(found.values())[:MAX_HITS]


class IngredientFinder(PickerScreen["chem.Ingredient | None"]):
    """Pick a reagent from the library (by name, alias, formula or system), then type its amount.

    Dismisses with the new :class:`chem.Ingredient`, or None when closed.
    """

    heading = "Add to the flask"
    placeholder = "reagent, formula or system, e.g. acetate, Na2HPO4, tris"

    def __init__(self, library: chem.Library) -> None:
        super().__init__()
        self.library = library
        self.reagent: chem.Reagent | None = None

    def compose_extra(self) -> ComposeResult:
        with Horizontal(id="finder-amount-line"):
            yield Label("", id="finder-amount-label")
            yield AmountInput(DEFAULT_AMOUNT, id="finder-amount", compact=True)
        yield Label("", id="finder-error", classes="dialog-error")

    def on_mount(self) -> None:
        super().on_mount()
        self.query_one("#finder-amount-line").display = False

    def options(self, query: str) -> list[Option]:
        out = []
        for reagent in matching_reagents(self.library, query):
            what = reagent.system.name if reagent.system is not None else "strong electrolyte"
            prompt = Content.assemble((printable(reagent.name), "bold"), "  ",
                                      (printable(reagent.formula), "$secondary"), "  ", (printable(what), "dim"))
            out.append(Option(prompt, id=reagent.name))
        return out

    def picked(self, option_id: str) -> None:
        self.reagent = self.library.reagent(option_id)
        line = self.query_one("#finder-amount-line")
        line.display = True
        self.query_one("#finder-amount-label", Label).update(
            Content.assemble("amount of ", (printable(self.reagent.name), "bold"), ": "))
        amount = self.query_one("#finder-amount", AmountInput)
        amount.use_molar_mass(self.reagent.molar_mass)
        self.set_focus(amount)      # at once: keys typed ahead (a burst over SSH) land in the amount

    @on(Input.Changed, "#finder-amount")
    def _check_amount(self, event: Input.Changed) -> None:
        result = event.validation_result
        self.query_one("#finder-error", Label).update(
            Content("" if result is None or result.is_valid else printable(result.failure_descriptions[0])))

    @on(Input.Submitted, "#finder-amount")
    def _add(self, event: Input.Submitted) -> None:
        event.stop()
        entry = event.input
        assert isinstance(entry, AmountInput) and self.reagent is not None
        conc = entry.concentration
        if conc is None:
            self.query_one("#finder-error", Label).update(Content(printable(entry.problem or "")))
            return
        self.dismiss(chem.Ingredient(self.reagent, conc, entry.value.strip()))

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "move":
            return self.reagent is None
        return True

    def action_cancel(self) -> None:
        if self.reagent is None:
            self.dismiss(None)
            return
        self.reagent = None
        self.query_one("#finder-amount-line").display = False
        self.query_one("#finder-error", Label).update("")
        self.query_one("#picker-query", Input).focus()
