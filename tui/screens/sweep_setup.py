"""The sweep form: what varies (an ingredient's amount, the temperature or a gas pressure), from, to,
how many points, and what is plotted (the pH, or the saturation index of every candidate solid).

API:
    ``SweepSetup(mixture, settings=None, *, gases=(), solids=())``, a ModalScreen that dismisses
    with a :class:`~tui.widgets.curve_kinds.SweepSettings` (enter, once every field is valid) or
    None (escape). ``settings`` fills the fields (None, or an ingredient no longer in the
    flask: :func:`~tui.widgets.curve_kinds.default_sweep` of the first choice). What varies
    is picked with ←/→ among the flask's ingredients, "temperature" and ``gases`` (the gases
    held over the flask or in equilibrium with it: their partial pressure is then held at each
    value); picking another fills from/to with that choice's default range. Amounts are read
    by :func:`chem.parse_concentration` (g/L when the reagent has a molar mass), temperatures
    are checked against the model's range by chem, pressures are read by
    :func:`chem.parse_pressure` (atm, bar, kPa, mmHg, uatm, ppm or %; 0 is allowed).
    With ``solids`` (the flask's candidate solids), a second choice ("show") switches the plot
    between the pH and the solids' saturation indices.

Wiring: see the top of ``tui/widgets/curve_kinds.py`` (``action_curve_setup``).
"""

from __future__ import annotations

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
from tui.widgets.curve_kinds import MAX_SWEEP_POINTS, SweepSettings, default_sweep

TEMPERATURE = "temperature"


class SweepSetup(CheckedForm["SweepSettings | None"]):
    """Asks what varies and over which range; dismisses with the :class:`SweepSettings`."""

    DEFAULT_CSS = """
    SweepSetup .setup-row .field-label {
        width: 16;
    }
    #sweep-error {
        height: auto;
    }
    """

    field_prefix = "sweep"

    BINDINGS = [Binding("escape", "cancel", "Close", tooltip="Close without changing the sweep"),
                Binding("enter", "accept", "Draw", show=False)]
    AUTO_FOCUS = "#sweep-vary"

    #: (key, label) of the text fields, in tab order.
    FIELDS = (("from", "from"), ("to", "to"), ("points", "points"))
    #: What the plot can show: (cycler text, :attr:`SweepSettings.show`).
    SHOWS = (("pH", "pH"), ("saturation indices of the solids", "SI"))

    def __init__(self, mixture: chem.Mixture, settings: SweepSettings | None = None, *,
                 gases: Sequence[str] = (), solids: Sequence[str] = ()) -> None:
        """Create the form.

        Args:
            mixture: The flask's mixture: its ingredients are what can vary.
            settings: Values to start from (None: the default sweep of the first ingredient).
            gases: Gases whose partial pressure can vary (held over the flask, or in equilibrium with it).
            solids: The flask's candidate solids (offers the saturation-index plot when there are any).
        """
        super().__init__()
        self.mixture = mixture
        self.gases = tuple(dict.fromkeys([g.gas.name for g in mixture.gases] + list(gases)))
        self.choices = tuple(i.reagent.name for i in mixture.ingredients) + (TEMPERATURE,) + self.gases
        self.solids = tuple(solids)
        chosen = None
        if settings is not None:
            chosen = TEMPERATURE if settings.is_temperature else self._choice_for(settings.vary)
        self.settings = settings if chosen is not None else default_sweep(mixture, self.choices[0])
        self.vary = chosen or self.choices[0]
        self.show = self.settings.show if self.solids and self.settings.show == "SI" else "pH"

    def _choice_for(self, vary: str) -> str | None:
        gas = chem.gas_named(self.mixture, vary.strip())
        if gas is not None:
            return gas.name if gas.name in self.gases else None
        try:
            return self.mixture.ingredients[chem.ingredient_index(self.mixture, vary)].reagent.name
        except chem.ChemError:
            return None

    def compose(self) -> ComposeResult:
        start = {"from": self.settings.from_text, "to": self.settings.to_text, "points": str(self.settings.points)}
        with Vertical(classes="dialog sweep"):
            yield Label("Sweep: pH or saturation as one thing varies", classes="dialog-heading")
            with Horizontal(classes="setup-row"):
                yield Label("vary", classes="field-label")
                yield Cycler(self.choices, self.vary, id="sweep-vary")
            if self.solids:
                texts = [text for text, _ in self.SHOWS]
                shown = next(text for text, value in self.SHOWS if value == self.show)
                with Horizontal(classes="setup-row"):
                    yield Label("show", classes="field-label")
                    yield Cycler(texts, shown, id="sweep-show")
            for key, label in self.FIELDS:
                with Horizontal(classes="setup-row"):
                    yield Label(label, classes="field-label")
                    yield Entry(start[key], id=f"sweep-{key}", compact=True)
            yield Label("", id="sweep-error", classes="dialog-error")
            yield Label("←→ choose · tab next field · enter draw · esc close", classes="dialog-hint")

    def on_mount(self) -> None:
        self._placeholders()
        self._check()

    def _placeholders(self) -> None:
        if self.vary == TEMPERATURE:
            example = ("e.g. 5 or 5 °C", "e.g. 60 °C")
        elif self.vary in self.gases:
            example = ("e.g. 0 or 420 uatm", "e.g. 5 % or 0.1 atm")
        else:
            example = ("e.g. 0 mM", "e.g. 20 mM")
        self.query_one("#sweep-from", Input).placeholder = example[0]
        self.query_one("#sweep-to", Input).placeholder = example[1]
        self.query_one("#sweep-points", Input).placeholder = f"2 to {MAX_SWEEP_POINTS}"

    # -- reading the fields ------------------------------------------------------------------
    def _text(self, key: str) -> str:
        return self.query_one(f"#sweep-{key}", Input).value.strip()

    def _points(self) -> int:
        text = self._text("points")
        try:
            return int(text)
        except ValueError:
            raise chem.UnitError(f"'{text}' is not a whole number") from None

    def problems(self) -> dict[str, str]:
        """Field key -> one-line problem, for every field chem refuses (and 'to' not above 'from')."""
        out: dict[str, str] = {}
        values: dict[str, float] = {}
        draft = SweepSettings(self.vary, self._text("from"), self._text("to"), show=self.show)
        for key in ("from", "to"):
            try:
                values[key] = draft.value(self._text(key), self.mixture, key)
            except chem.ChemError as exc:
                out[key] = named(key, exc)
        if not out and not values["to"] > values["from"]:
            out["to"] = f"to: must be above 'from' ({self._text('from')})"
        try:
            SweepSettings(self.vary, "", "", self._points()).check_points()
        except chem.ChemError as exc:
            out["points"] = named("points", exc)
        return out

    def current(self) -> SweepSettings:
        """The settings as typed now; only call when :meth:`problems` finds none."""
        return SweepSettings(self.vary, self._text("from"), self._text("to"), self._points(), self.show)

    # -- events ------------------------------------------------------------------------------
    @on(Cycler.Changed, "#sweep-show")
    def _show_changed(self, event: Cycler.Changed) -> None:
        self.show = next(value for text, value in self.SHOWS if text == event.value)

    @on(Cycler.Changed, "#sweep-vary")
    def _vary_changed(self, event: Cycler.Changed) -> None:
        self.vary = event.value
        default = default_sweep(self.mixture, event.value)
        with self.prevent(Input.Changed):
            self.query_one("#sweep-from", Input).value = default.from_text
            self.query_one("#sweep-to", Input).value = default.to_text
        self._placeholders()
        self._check()
