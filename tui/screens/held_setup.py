"""The setup form of the pH-held plots: which system's forms, which solid's solubility, over which pH range.

API:
    ``HeldSetup(kind, settings, systems=(), solids=(), system=None, solid=None)``, a ModalScreen
    that dismisses with a :class:`~tui.widgets.speciation_kinds.HeldSettings` (enter, once the
    pH range is valid) or None (escape). ``kind`` is the plot on display ("forms",
    "solubility" or "saturation"): the form asks for the system (forms) or the solid
    (solubility), picked with ←/→ among ``systems`` / ``solids`` (those of the flask), and
    for the pH range (default :data:`chem.HELD_PH_RANGE`), read on the pH scale every command
    shares. ``system`` / ``solid`` are shown first (the ones on display).

The explorer opens it with ``v`` while one of these plots is on display (:mod:`tui.plot_actions`).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.widgets import Input, Label

import chem
from tui.widgets.entry import Entry
from tui.screens.base import CheckedForm
from tui.screens.recipe_form import Cycler, named
from tui.widgets.curve_kinds import read_ph
from tui.widgets.speciation_kinds import HeldSettings

#: Heading of the form for each plot.
HEADINGS = {
    "forms": "Forms of one system vs pH (pH held at each point)",
    "solubility": "Solubility of a solid vs pH (an excess of it; pH held)",
    "saturation": "Saturation indices vs pH (pH held at each point)",
}


class HeldSetup(CheckedForm["HeldSettings | None"]):
    """Asks for the system or solid of the plot on display and the pH range; dismisses with the settings."""

    DEFAULT_CSS = """
    HeldSetup .setup-row .field-label {
        width: 12;
    }
    #held-error {
        height: auto;
    }
    """

    field_prefix = "held"

    BINDINGS = [Binding("escape", "cancel", "Close", tooltip="Close without changing the plot"),
                Binding("enter", "accept", "Draw", show=False)]

    #: (key, label) of the pH fields, in tab order.
    FIELDS = (("from", "from pH"), ("to", "to pH"))

    def __init__(self, kind: str, settings: HeldSettings | None = None, *, systems: Sequence[str] = (),
                 solids: Sequence[str] = (), system: str | None = None, solid: str | None = None) -> None:
        """Create the form.

        Args:
            kind: The plot on display: "forms", "solubility" or "saturation".
            settings: Values to start from (None: the defaults).
            systems: Systems of the flask (for "forms").
            solids: Candidate solids of the flask (for "solubility").
            system: The system shown now (first choice).
            solid: The solid shown now (first choice).
        """
        super().__init__()
        self.kind = kind
        self.settings = settings or HeldSettings()
        self.systems = tuple(systems)
        self.solids = tuple(solids)
        self.system = system if system in self.systems else (self.systems[0] if self.systems else None)
        self.solid = solid if solid in self.solids else (self.solids[0] if self.solids else None)

    def _choice(self) -> tuple[str, str, tuple[str, ...], str | None] | None:
        """(key, label, choices, shown) of the one choice this plot has, or None (saturation)."""
        if self.kind == "forms":
            return "system", "system", self.systems, self.system
        if self.kind == "solubility":
            return "solid", "solid", self.solids, self.solid
        return None

    def compose(self) -> ComposeResult:
        start = {"from": self.settings.from_text, "to": self.settings.to_text}
        choice = self._choice()
        with Vertical(classes="dialog held"):
            yield Label(HEADINGS.get(self.kind, "pH held at each point"), classes="dialog-heading")
            if choice is not None:
                key, label, choices, shown = choice
                with Horizontal(classes="setup-row"):
                    yield Label(label, classes="field-label")
                    if choices:
                        yield Cycler(choices, shown, id=f"held-{key}")
                    else:
                        yield Label("none in this flask", id=f"held-{key}", classes="dialog-hint")
            for key, label in self.FIELDS:
                with Horizontal(classes="setup-row"):
                    yield Label(label, classes="field-label")
                    yield Entry(start[key], placeholder="a pH, e.g. 2" if key == "from" else "a pH, e.g. 12",
                                id=f"held-{key}", compact=True)
            yield Label("", id="held-error", classes="dialog-error")
            hint = "←→ choose · " if choice is not None and choice[2] else ""
            yield Label(f"{hint}tab next field · enter draw · esc close", classes="dialog-hint")

    def on_mount(self) -> None:
        focus = self.query(Cycler) or self.query(Input)
        focus.first().focus()
        self._check()

    # -- reading the fields ------------------------------------------------------------------
    def _text(self, key: str) -> str:
        return self.query_one(f"#held-{key}", Input).value.strip()

    def current(self) -> HeldSettings:
        """The settings as typed now (the pH range not checked)."""
        settings = replace(self.settings, from_text=self._text("from"), to_text=self._text("to"))
        if self.kind == "forms" and self.system is not None:
            settings = replace(settings, system=self.system)
        if self.kind == "solubility" and self.solid is not None:
            settings = replace(settings, solid=self.solid)
        return settings

    def problems(self) -> dict[str, str]:
        """Field key -> one-line problem, for every pH field chem refuses (and 'to' not above 'from')."""
        out: dict[str, str] = {}
        for key, label in self.FIELDS:
            try:
                read_ph(self._text(key), label)
            except chem.ChemError as exc:
                out[key] = named(label, exc)
        if not out:
            try:
                self.current().ph_range()
            except chem.ChemError as exc:
                out["to"] = named("to pH", exc)
        return out

    # -- events ------------------------------------------------------------------------------
    @on(Cycler.Changed)
    def _chosen(self, event: Cycler.Changed) -> None:
        if event.cycler.id == "held-system":
            self.system = event.value
        elif event.cycler.id == "held-solid":
            self.solid = event.value
