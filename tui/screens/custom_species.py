"""The form for an acid–base species of the user's own: name, pKa list, charge, protons, counter-ions, amount."""

from __future__ import annotations

import re

from textual.content import Content
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Grid, Vertical
from textual.widgets import Input, Label

import chem
from tui.widgets.entry import Entry
from tui.screens.base import Dialog
from tui.text import printable
from tui.widgets.amount_input import AmountInput

_ION_ENTRY = re.compile(r"^\s*(?:(\d+)\s*(?:x|×|\*)?\s*)?([A-Za-z][A-Za-z0-9]*[+-])\s*(?:(?:x|×|\*)?\s*(\d+))?\s*$")


class FormError(Exception):
    """A field of the form cannot be read; the message names the field."""


def parse_numbers(text: str, field: str) -> list[float]:
    """``"4.2, 9.1"`` (commas or spaces) -> ``[4.2, 9.1]``."""
    items = [t for t in re.split(r"[,;\s]+", text.strip()) if t]
    if not items:
        raise FormError(f"{field}: give at least one number")
    try:
        return [float(t) for t in items]
    except ValueError:
        raise FormError(f"{field}: '{text.strip()}' is not a list of numbers (e.g. 4.2, 9.1)") from None


def parse_int(text: str, field: str) -> int:
    try:
        return int(text.strip())
    except ValueError:
        raise FormError(f"{field}: '{text.strip()}' is not a whole number") from None


def parse_counter_ions(text: str) -> dict[str, int]:
    """``"Na+ 2, Cl-"`` or ``"2 Na+"`` -> ``{"Na+": 2, "Cl-": 1}``; empty text means none."""
    out: dict[str, int] = {}
    for part in (p for p in re.split(r"[,;]", text) if p.strip()):
        m = _ION_ENTRY.match(part)
        if not m or (m.group(1) and m.group(3)):
            raise FormError(f"counter-ions: cannot read '{part.strip()}' (write e.g. Na+ 2, Cl-)")
        count = int(m.group(1) or m.group(3) or 1)
        out[m.group(2)] = out.get(m.group(2), 0) + count
    return out


class CustomSpeciesForm(Dialog["chem.Ingredient | None"]):
    """Defines an acid–base species with its counter-ions and adds it at an amount.

    The definition is checked by :mod:`chem` (the same rules as a ``[[custom]]``
    table in a preset). Dismisses with the new :class:`chem.Ingredient`, or None.
    """

    BINDINGS = [Binding("escape", "cancel", "Close", tooltip="Close without adding")]
    AUTO_FOCUS = "#custom-name"

    FIELDS = (
        ("name", "name", "e.g. compound 7 hydrochloride"),
        ("pka", "pKa values", "first proton first, e.g. 3.1, 8.4"),
        ("charge", "charge, fully protonated", "e.g. 1 for an amine salt, 0 for an acid"),
        ("protons", "protons it carries as added", "0 .. number of pKa values"),
        ("ions", "counter-ions per unit", "e.g. Cl-  or  Na+ 2  (none: leave empty)"),
        ("amount", "amount", "e.g. 5 mM"),
    )

    def __init__(self, library: chem.Library, taken: set[str]) -> None:
        """Create the form.

        Args:
            library: Library for counter-ion names and names already in use.
            taken: Names of custom species already in the flask (case-folded).
        """
        super().__init__()
        self.library = library
        self.taken = taken

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog custom"):
            yield Label("Define an acid–base species", classes="dialog-heading")
            with Grid(id="custom-grid"):
                for key, label, hint in self.FIELDS:
                    yield Label(label, classes="field-label")
                    if key == "amount":
                        yield AmountInput("", id="custom-amount")
                    else:
                        yield Entry(placeholder=hint, id=f"custom-{key}", compact=True)
            yield Label("", id="custom-error", classes="dialog-error")
            yield Label("tab next field · enter add · esc close", classes="dialog-hint")

    def _value(self, key: str) -> str:
        return self.query_one(f"#custom-{key}", Input).value

    def build(self) -> chem.Ingredient:
        """The ingredient the form describes; raises :class:`FormError` or :class:`chem.ChemError`."""
        name = self._value("name").strip()
        if not name:
            raise FormError("name: give the species a name")
        if self.library.find(name) is not None:
            raise FormError(f"name: '{name}' is already in the library; choose another name")
        if name.casefold() in self.taken:
            raise FormError(f"name: a species called '{name}' is already in the flask")
        pka = parse_numbers(self._value("pka"), "pKa values")
        entry = {
            "name": name,
            "pKa": pka,
            "charge_fully_protonated": parse_int(self._value("charge") or "0", "charge"),
            "protons": parse_int(self._value("protons") or str(len(pka)), "protons"),
            "counter_ions": parse_counter_ions(self._value("ions")),
        }
        reagent = chem.custom_reagent(entry, "custom species", self.library)
        amount = self.query_one("#custom-amount", AmountInput)
        problem = amount.problem
        if problem is not None:
            raise FormError(f"amount: {problem}")
        return chem.Ingredient(reagent, amount.concentration, amount.value.strip())

    @on(Input.Submitted)
    def _submit(self, event: Input.Submitted) -> None:
        event.stop()
        try:
            ingredient = self.build()
        except (FormError, chem.ChemError) as exc:
            self.query_one("#custom-error", Label).update(Content(printable(exc)))
            return
        self.dismiss(ingredient)

    def action_cancel(self) -> None:
        self.dismiss(None)
