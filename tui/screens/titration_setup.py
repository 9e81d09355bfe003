"""The titration form: which titrant, how strong, how much sample, up to what volume.

API:
    ``TitrationSetup(mixture, settings=None, library=None)``, a ModalScreen that dismisses
    with a :class:`~tui.widgets.curve_kinds.TitrationSettings` (enter, once every field is
    valid) or None (escape). ``settings`` fills the fields (None: 0.1 M NaOH into 25 mL up to
    50 mL). "follow" names a species (e.g. ``Ca^2+``) whose level pX = −log10 a(X) is plotted
    instead of the pH, with its equivalence points (a complexometric titration); empty: the pH.
    It must be a species of the titration (the flask's and the titrant's, from
    :func:`chem.tableau`). Every field is read by chem (the titrant by :func:`chem.find_reagent`, so a
    custom reagent of ``mixture`` counts; amounts by :func:`chem.parse_concentration` and
    :func:`chem.parse_volume`); a bad entry is marked and explained, and enter is refused.

While the titrant is typed, matching reagents of the library are listed under it:
↑/↓ choose one, enter takes it (then enter again draws). Wiring: see the top of
``tui/widgets/curve_kinds.py`` (``action_curve_setup``).
"""

from __future__ import annotations

import difflib

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.content import Content
from textual.widgets import Input, Label, OptionList
from textual.widgets.option_list import Option

import chem
from tui.widgets.entry import Entry
from tui.screens.base import CheckedForm
from tui.screens.finder import matching_reagents
from tui.screens.recipe_form import named
from tui.text import printable
from tui.widgets.curve_kinds import (DEFAULT_SAMPLE, DEFAULT_TITRANT_CONC, DEFAULT_TO, TitrationSettings)

#: Most titrant matches listed under the field while typing.
MAX_MATCHES = 5


class TitrationSetup(CheckedForm["TitrationSettings | None"]):
    """Asks for the titrant, its stock concentration, the sample volume and the last volume added."""

    DEFAULT_CSS = """
    TitrationSetup .setup-row .field-label {
        width: 24;
    }
    #titrant-matches {
        height: auto;
        max-height: 5;
        margin-left: 24;
        border: none;
        background: $panel;
    }
    #titration-error {
        height: auto;
    }
    """

    field_prefix = "titration"

    BINDINGS = [
        Binding("escape", "cancel", "Close", tooltip="Close without changing the titration"),
        Binding("down", "match(1)", "Next match", show=False),
        Binding("up", "match(-1)", "Previous match", show=False),
    ]
    AUTO_FOCUS = "#titration-titrant"

    #: (key, label, placeholder) of each field, in tab order.
    FIELDS = (
        ("titrant", "titrant", "reagent name or formula, e.g. NaOH, HCl"),
        ("conc", "stock concentration", "e.g. 0.1 M"),
        ("sample", "sample volume", "of the flask's mixture, e.g. 25 mL"),
        ("to", "titrate up to", "last volume of titrant, e.g. 50 mL"),
        ("track", "follow species", "optional, e.g. Ca^2+ (plots pCa; empty: pH)"),
    )

    def __init__(self, mixture: chem.Mixture, settings: TitrationSettings | None = None,
                 library: chem.Library | None = None) -> None:
        """Create the form.

        Args:
            mixture: The flask's mixture (its custom reagents may be titrants).
            settings: Values to start from (None: 0.1 M NaOH into 25 mL, up to 50 mL).
            library: Reagent library (default: the built-in one).
        """
        super().__init__()
        self.mixture = mixture
        self.library = library or chem.load_library()
        self.settings = settings or TitrationSettings("NaOH", DEFAULT_TITRANT_CONC, DEFAULT_SAMPLE, DEFAULT_TO)

    def compose(self) -> ComposeResult:
        start = {"titrant": self.settings.titrant_name, "conc": self.settings.titrant_conc_text,
                 "sample": self.settings.sample_text, "to": self.settings.to_text, "track": self.settings.track}
        with Vertical(classes="dialog titration"):
            yield Label("Titrate a sample of the flask", classes="dialog-heading")
            for key, label, hint in self.FIELDS:
                with Horizontal(classes="setup-row"):
                    yield Label(label, classes="field-label")
                    yield Entry(start[key], placeholder=hint, id=f"titration-{key}", compact=True)
                if key == "titrant":
                    matches = OptionList(id="titrant-matches")
                    matches.can_focus = False
                    yield matches
            yield Label("", id="titration-error", classes="dialog-error")
            yield Label("tab next field · ↑↓ enter pick a match · enter draw · esc close", classes="dialog-hint")

    def on_mount(self) -> None:
        self.query_one("#titrant-matches").display = False
        self._check()

    # -- reading the fields ------------------------------------------------------------------
    def current(self) -> TitrationSettings:
        """The settings as typed now (not checked)."""
        def text(key: str) -> str:
            return self.query_one(f"#titration-{key}", Input).value.strip()

        return TitrationSettings(text("titrant"), text("conc"), text("sample"), text("to"), text("track"))

    def problems(self) -> dict[str, str]:
        """Field key -> one-line problem, for every field chem refuses."""
        settings = self.current()
        labels = {key: label for key, label, _ in self.FIELDS}
        out: dict[str, str] = {}
        try:
            titrant = settings.titrant(self.mixture, self.library)
        except chem.ChemError as exc:
            titrant = None
            out["titrant"] = named(labels["titrant"], exc)
        for key, read in (("conc", lambda: settings.titrant_conc(titrant)), ("sample", settings.sample_volume),
                          ("to", settings.to_volume)):
            try:
                read()
            except chem.ChemError as exc:
                out[key] = named(labels[key], exc)
        problem = self._track_problem(settings.track, titrant)
        if problem:
            out["track"] = f"{labels['track']}: {problem}"
        return out

    def _track_problem(self, track: str, titrant: chem.Reagent | None) -> str | None:
        """Why ``track`` cannot be followed in this titration, or None (also when the titrant is not known yet)."""
        if not track or titrant is None:
            return None
        try:
            names = chem.tableau(self.mixture.with_ingredient(chem.Ingredient(titrant, 1.0))).species
        except chem.ChemError:
            return None                               # the titration itself will say what is wrong
        if track in names:
            return None
        close = difflib.get_close_matches(track, names, n=3, cutoff=0.5)
        hint = f" (did you mean {', '.join(close)}?)" if close else ""
        return f"no species '{track}' in the sample or the titrant{hint}"

    # -- titrant matches ---------------------------------------------------------------------
    def _matches_shown(self) -> bool:
        return bool(self.query_one("#titrant-matches", OptionList).display)

    def _fill_matches(self, query: str) -> None:
        listing = self.query_one("#titrant-matches", OptionList)
        found: list[chem.Reagent] = []
        if query.strip():
            key = query.strip().casefold()
            found = [i.reagent for i in self.mixture.ingredients
                     if i.reagent.custom and key in i.reagent.name.casefold()]
            found += [r for r in matching_reagents(self.library, query) if r not in found]
        found = found[:MAX_MATCHES]
        try:
            self.current().titrant(self.mixture, self.library)
            exact = True                              # the text names a reagent already: nothing to pick
        except chem.ChemError:
            exact = False
        if [r.name for r in found] != [listing.get_option_at_index(i).id for i in range(listing.option_count)]:
            listing.set_options([Option(Content.assemble((printable(r.name), "bold"), "  ", (printable(r.formula), "dim")), id=r.name)
                                 for r in found])
            if found:
                listing.highlighted = 0
        listing.display = bool(found) and not exact

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "match":
            return self._matches_shown() and self.focused is self.query_one("#titration-titrant")
        return True

    def action_match(self, step: int) -> None:
        listing = self.query_one("#titrant-matches", OptionList)
        current = listing.highlighted if listing.highlighted is not None else 0
        listing.highlighted = max(0, min(current + step, listing.option_count - 1))

    def _take_match(self, name: str) -> None:
        titrant = self.query_one("#titration-titrant", Input)
        titrant.value = name
        titrant.cursor_position = len(name)
        self.query_one("#titrant-matches").display = False
        self.query_one("#titration-conc", Input).focus()

    @on(OptionList.OptionSelected, "#titrant-matches")
    def _clicked_match(self, event: OptionList.OptionSelected) -> None:
        if event.option.id is not None:
            self._take_match(event.option.id)

    # -- events ------------------------------------------------------------------------------
    @on(Input.Changed, "#titration-titrant")
    def _titrant_typed(self, event: Input.Changed) -> None:
        if event.input.has_focus:
            self._fill_matches(event.value)

    @on(Input.Blurred, "#titration-titrant")
    def _left_titrant(self) -> None:
        self.query_one("#titrant-matches").display = False

    def submitted(self, entry: Input) -> None:
        listing = self.query_one("#titrant-matches", OptionList)
        if entry.id == "titration-titrant" and self._matches_shown() and listing.highlighted is not None:
            option = listing.get_option_at_index(listing.highlighted)
            if option.id is not None:
                self._take_match(option.id)
                return
        super().submitted(entry)

