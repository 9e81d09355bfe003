"""Details of the current warnings and cautions, each with what it means for the numbers."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.content import Content
from textual.widgets import Label, Static

import chem
from tui.screens.base import Dialog
from tui.text import printable

#: What each warning means for the numbers, by code. Codes not listed get a general note.
MEANING = {
    "not-converged": "The solver stopped before the charge balance was met. The pH and every species "
                     "shown are unreliable; change the mixture slightly or report the case.",
    "ionic-strength-high": "Activity coefficients come from a model meant for more dilute solutions. "
                           "The pH and the activity-corrected numbers are rough; try another model (m) "
                           "and compare, or treat the result as a trend.",
    "no-temperature-data": "This system has no reaction enthalpy in the library, so its constants are "
                           "not corrected for temperature. Results away from 25 °C carry that error.",
    "temperature-out-of-range": "The temperature lies outside the range the system's data were measured "
                                "over; its constants are extrapolated.",
}
#: What every safety caution means, whatever its code.
CAUTION_MEANING = ("A safety caution is raised from the computed composition alone; it does not weigh "
                   "quantities, ventilation or exposure. Treat it as a prompt to check before mixing.")
GENERAL = "See the message above; it names what the result depends on."


class NoticeDetails(Dialog[None]):
    """Every caution and warning of a result with its code, message and meaning."""

    BINDINGS = [Binding("escape,w,q", "close", "Close")]

    def __init__(self, result: chem.Equilibrium) -> None:
        super().__init__()
        self.result = result

    def compose(self) -> ComposeResult:
        eq = self.result
        with Vertical(classes="dialog notices"):
            yield Label("Warnings and cautions", classes="dialog-heading")
            with VerticalScroll(can_focus=False):
                if not eq.cautions and not eq.warnings:
                    yield Static("None for this mixture. The numbers still are model estimates.")
                for notice in eq.cautions:
                    yield Static(Content.assemble(("CAUTION ", "bold $error"), (f"[{notice.code}]", "dim"), "\n",
                                                  printable(notice.message)), classes="notice")
                if eq.cautions:
                    yield Static(Content(CAUTION_MEANING), classes="notice meaning")
                for notice in eq.warnings:
                    yield Static(Content.assemble(("warning ", "bold $warning"), (f"[{notice.code}]", "dim"), "\n",
                                                  printable(notice.message), "\n",
                                                  (MEANING.get(notice.code, GENERAL), "italic")), classes="notice")
            yield Label("esc close", classes="dialog-hint")

    def action_close(self) -> None:
        self.dismiss(None)
