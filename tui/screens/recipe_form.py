"""The buffer recipe designer: what to weigh or pipette for a pH at a working temperature.

The form asks for a system (empty: the tool picks the best-ranked one), target pH,
working temperature, total concentration, final volume, an optional background salt
and the bench form of the recipe. Each change designs the recipe again with
:func:`chem.design_buffer` in a thread worker (50–500 ms, the first one also loads
scipy), and the result shows what to weigh or pipette, the ionic strength, the buffer
capacity, the Henderson–Hasselbalch shortcut's pH beside the exact one, and warnings.

A free level ("Ca^2+=100 nM") makes it a metal buffer, as ``protomix recipe --free``: the
system is then the chelator (EDTA, EGTA, NTA, citrate, ATP ...) at the total given, and
:func:`chem.design_metal_buffer` solves how much of the metal's salt (and of the pH
adjustment) gives that free level at that pH, temperature and ionic strength; the result
also shows the free level reached and pM. A metal buffer's "reagents" form is made as
"titrant" (the chelator's free acid and a strong base), as the line command does.

API:
    ``RecipeForm(library, *, target_pH=None, temperature_c=None, activity="davies")``, a
    ModalScreen that dismisses with a :class:`chem.Recipe` ("load into flask": enter,
    ctrl+l or the button), with ``("save", recipe)`` ("save as preset": ctrl+s or the
    button), or with None (escape).
    ``recipe_lines(recipe)``: the result as text lines (what the form shows).
    ``Cycler``: a one-line choice among a few values (←/→ or space), also used by the sweep form;
    ``show_text(label, text)``, ``named(field, error)``, ``first_problem(...)``: shared with the setup forms.

The explorer opens it with ``b`` (``ExplorerApp.action_recipe``): a returned recipe replaces the
flask's mixture as one undoable edit; ``("save", recipe)`` goes through the app's save dialog.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Grid, Horizontal, Vertical, VerticalScroll
from textual.content import Content
from textual.message import Message
from textual.reactive import reactive
from textual.timer import Timer
from textual.widget import Widget
from textual.widgets import Button, Input, Label, Static
from textual.worker import Worker, WorkerState, get_current_worker

import chem
from chem import STANDARD_TEMPERATURE_C
from tui.widgets.entry import Entry
from tui.screens.base import Dialog, first_problem, show_text
from tui.cli.curve_cmd import p_label
from tui.text import printable
from tui.widgets.curve_kinds import read_celsius, read_ph

if TYPE_CHECKING:                    # the recipe designer needs scipy.optimize (~0.5 s): loaded in the worker only
    from chem import Recipe

#: The bench forms of a recipe, as the recipe designer names them (not asked of chem here: that loads scipy).
FORMS = ("reagents", "titrant", "stocks")
#: Wait after a keystroke before designing (s): a burst of typing starts one design, not one per key.
DESIGN_DELAY = 0.12
#: Defaults offered in the form.
DEFAULT_TOTAL = "50 mM"
DEFAULT_VOLUME = "1 L"


class Cycler(Widget, can_focus=True):
    """A one-line choice among a few values: ←/→ or space step through them (a Select would take ↑↓/enter)."""

    DEFAULT_CSS = """
    Cycler {
        height: 1;
        width: 1fr;
        padding: 0 1;
        background: $boost;
    }
    Cycler:focus {
        background: $primary 20%;
        text-style: bold;
    }
    """

    BINDINGS = [
        Binding("right,space", "step(1)", "Next", show=False),
        Binding("left", "step(-1)", "Previous", show=False),
    ]

    value: reactive[str] = reactive("")
    """The value shown."""

    @dataclass
    class Changed(Message):
        """The user stepped to another value."""

        cycler: "Cycler"
        value: str

        @property
        def control(self) -> "Cycler":
            return self.cycler

    def __init__(self, choices: Sequence[str], value: str | None = None, *, id: str | None = None,
                 classes: str | None = None) -> None:
        """Create the cycler.

        Args:
            choices: The values, in order (at least one).
            value: The value shown first (default: the first choice).
            id: Widget id.
            classes: CSS classes.
        """
        super().__init__(id=id, classes=classes)
        self.choices = tuple(choices)
        self.set_reactive(Cycler.value, value if value in self.choices else self.choices[0])

    def action_step(self, step: int) -> None:
        self.value = self.choices[(self.choices.index(self.value) + step) % len(self.choices)]
        self.post_message(self.Changed(self, self.value))

    def render(self) -> Content:
        position = f"  {self.choices.index(self.value) + 1}/{len(self.choices)}" if len(self.choices) > 1 else ""
        return Content.assemble(("◂ ", "dim"), printable(self.value), (" ▸", "dim"), (position, "dim"))


@dataclass(frozen=True)
class RecipeAsk:
    """What the form asks for, read (numbers) or as typed (amounts and names, read by chem)."""

    system: str | None
    target_pH: float
    temperature_c: float
    total: str
    volume: str
    salt: str
    form: str
    activity: str
    free: str = ""
    """A metal buffer's free level as typed ("Ca^2+=100 nM"), or "" for a pH buffer."""

    @property
    def design_form(self) -> str:
        """The bench form the design uses (a metal buffer's "reagents" is made as "titrant")."""
        return "titrant" if self.free and self.form == "reagents" else self.form


def free_line(recipe: Recipe) -> Content | None:
    """A metal buffer's free level: reached, wanted, and pM (−log10 of the free ion's activity); else None."""
    if recipe.free_species is None:
        return None
    fm = chem.format_molar
    eq = recipe.equilibrium
    species = next((s for s in eq.species if s.name == recipe.free_species), None)
    own = next((s for s in eq.species if species is not None and s.system == species.system), None)
    level = ""
    if species is not None and own is species:        # a metal's free ion: chem gives its level (pM)
        level = f" · {p_label(recipe.free_species)} {eq.free_level(species.system):.3f}"
    return Content.assemble(("free ", "bold"), (f"{recipe.free_species} {fm(recipe.free_reached, 4)}",
                                                "bold $secondary"),
                            f" (wanted {fm(recipe.free_target, 4)}){level}")


def recipe_lines(recipe: Recipe) -> list[Content]:
    """The recipe as the form shows it: what to weigh or pipette, then the numbers and warnings."""
    fm = chem.format_molar
    t = recipe.temperature_c
    lines = [Content.assemble((f"{recipe.system.name}", "bold"),
                              f" buffer, {fm(recipe.total)}, {recipe.volume_label} · pH {recipe.target_pH:g} "
                              f"at {t:g} °C · {recipe.form} · {recipe.mixture.activity}")]
    for item in recipe.items:
        name = item.reagent.name + (f" ({item.reagent.formula})" if item.reagent.formula else "")
        if item.stock_conc is not None:
            name += f", {fm(item.stock_conc)} stock"
        lines.append(Content.assemble(f"  {item.action:<8}", (f"{item.amount:>9.4g} {item.unit:<4}", "bold $secondary"),
                                      f" {name}", (f"  {item.role}", "dim")))
    lines.append(Content(f"  water to {recipe.volume_label} at {t:g} °C"))
    sc = recipe.shortcut
    shortcut = ("Henderson–Hasselbalch: no prediction (not one step's pair)" if sc.pH is None else
                f"Henderson–Hasselbalch {sc.pH:.3f} (pKa {sc.pka:g} at 25 °C)")
    lines.append(Content.assemble(("pH ", "bold"), (f"{recipe.pH:.3f}", "bold $secondary"), f" exact · {shortcut}"))
    if sc.recipe_pH is not None:
        lines.append(Content(f"  the shortcut's own recipe would give pH {sc.recipe_pH:.3f} at {t:g} °C"))
    beta = float(f"{recipe.buffer_capacity:.3g}")
    ionic = float(f"{recipe.ionic_strength:.3g}")
    state = ("converged", "$success") if recipe.equilibrium.converged else ("NOT CONVERGED", "bold $error")
    lines.append(Content.assemble(f"ionic strength {fm(ionic)} · buffer capacity {fm(beta)}/pH · ", state))
    free = free_line(recipe)
    if free is not None:
        lines.append(free)
    for tc, ph in recipe.checks:
        lines.append(Content(f"same solution at {tc:g} °C: pH {ph:.3f}"))
    for notice in recipe.cautions:
        lines.append(Content.assemble(("CAUTION ", "bold $error"), notice.message))
    for notice in recipe.warnings:
        lines.append(Content.assemble(("! ", "bold $warning"), notice.message))
    return lines


class RecipeForm(Dialog["Recipe | tuple[str, Recipe] | None"]):
    """Designs a buffer recipe as the fields change; loads it into the flask or saves it as a preset.

    Dismisses with the :class:`chem.Recipe` (load into flask), ``("save", recipe)`` (save as
    preset) or None (closed).
    """

    DEFAULT_CSS = """
    #recipe-grid {
        grid-size: 4;
        grid-columns: 13 1fr 13 1fr;
        grid-rows: 1;
        height: auto;
    }
    #recipe-grid .field-label {
        padding-left: 1;
    }
    #recipe-grid Input {
        background: $boost;
    }
    #recipe-grid Input:focus {
        background: $primary 20%;
    }
    #recipe-grid Input.-invalid {
        background: $error 25%;
    }
    #recipe-salt, #recipe-free {
        column-span: 3;
    }
    #recipe-status {
        height: 1;
        width: 100%;
    }
    #recipe-scroll {
        height: auto;
        max-height: 10;
    }
    #recipe-scroll.-stale {
        opacity: 60%;
    }
    #recipe-buttons {
        height: 1;
    }
    #recipe-buttons Button {
        margin-right: 2;
    }
    """

    BINDINGS = [
        Binding("escape", "cancel", "Close", tooltip="Close without loading anything"),
        Binding("enter", "finish('load')", "Load", show=False),
        Binding("ctrl+l", "finish('load')", "Load", tooltip="Replace the flask's mixture with the recipe"),
        Binding("ctrl+s", "finish('save')", "Save", tooltip="Save the recipe's solution as a preset"),
        Binding("pagedown", "scroll(1)", show=False),
        Binding("pageup", "scroll(-1)", show=False),
    ]
    AUTO_FOCUS = "#recipe-system"

    #: (key, label, placeholder) of each text field, in tab order.
    FIELDS = (
        ("system", "system", "empty: suggest one"),
        ("ph", "target pH", "e.g. 7.4"),
        ("temp", "at °C", "working temperature"),
        ("total", "total", "e.g. 50 mM"),
        ("volume", "volume", "e.g. 1 L, 250 mL"),
    )

    @dataclass
    class Designed(Message):
        """The design for request ``generation`` finished: a recipe, or chem's one-line error."""

        generation: int
        recipe: "Recipe | None"
        error: str | None

    def __init__(self, library: chem.Library, *, target_pH: float | None = None, temperature_c: float | None = None,
                 activity: str = "davies", free: str = "") -> None:
        """Create the form.

        Args:
            library: Library the systems and reagents come from.
            target_pH: pH offered at first (None: the field starts empty).
            temperature_c: Working temperature offered at first, °C.
            activity: Activity model of the design (the flask's).
            free: A metal buffer's free level offered at first ("" : a pH buffer).
        """
        super().__init__()
        self.library = library
        self.activity = activity
        self._initial = {"system": "", "ph": "" if target_pH is None else f"{target_pH:g}",
                         "temp": f"{STANDARD_TEMPERATURE_C if temperature_c is None else temperature_c:g}",
                         "total": DEFAULT_TOTAL, "volume": DEFAULT_VOLUME, "free": free}
        self.recipe: Recipe | None = None
        """The recipe for the fields as they are now, or None (not designed yet, or they cannot be)."""
        self._generation = 0
        self._error: str | None = None
        self._then: str | None = None
        self._timer: Timer | None = None

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog recipe"):
            yield Label("Design a buffer (a free metal level makes it a metal buffer)", classes="dialog-heading")
            with Grid(id="recipe-grid"):
                for key, label, hint in self.FIELDS:
                    yield Label(label, classes="field-label")
                    yield Entry(self._initial[key], placeholder=hint, id=f"recipe-{key}", compact=True)
                yield Label("form", classes="field-label")
                yield Cycler(FORMS, id="recipe-form")
                yield Label("salt", classes="field-label")
                yield Entry(placeholder="background salt, optional, e.g. NaCl 150 mM", id="recipe-salt",
                            compact=True)
                yield Label("free level", classes="field-label")
                yield Entry(self._initial["free"], placeholder="metal buffer, optional, e.g. Ca^2+=100 nM "
                            "(system: the chelator)", id="recipe-free", compact=True)
            yield Label("", id="recipe-status")
            with VerticalScroll(id="recipe-scroll", can_focus=False):
                yield Static("", id="recipe-result")
            with Horizontal(id="recipe-buttons"):
                yield Button("Load into flask ⏎", id="recipe-load", compact=True, variant="primary")
                yield Button("Save as preset ^s", id="recipe-save", compact=True)
                yield Button("Cancel esc", id="recipe-cancel", compact=True)
            yield Label("tab next field · ←→ form · pgup/pgdn scroll · enter load · esc close",
                        classes="dialog-hint")

    def on_mount(self) -> None:
        self._changed()

    # -- reading the fields ------------------------------------------------------------------
    def _text(self, key: str) -> str:
        return self.query_one(f"#recipe-{key}", Input).value.strip()

    def _field_problems(self) -> dict[str, str]:
        """One-line problems of the fields chem can check at once (the salt is checked by the design)."""
        problems: dict[str, str] = {}

        def check(key: str, field: str, read) -> None:
            try:
                read(self._text(key))
            except chem.ChemError as exc:
                problems[key] = named(field, exc)

        check("system", "system", lambda s: s and self.library.system(s))
        check("ph", "target pH", lambda s: read_ph(s, "target pH") if s else _missing())
        check("temp", "temperature", lambda s: read_celsius(s, "temperature"))
        check("total", "total concentration", lambda s: chem.parse_concentration(s) if s else _missing())
        check("volume", "final volume", lambda s: chem.parse_volume(s) if s else _missing())
        if self._text("free") and not self._text("system") and "system" not in problems:
            problems["system"] = ("system: a metal buffer needs the chelator's system (e.g. egta, edta, nta, "
                                  "citrate, atp)")
        return problems

    def ask(self) -> RecipeAsk:
        """The fields, read; only call when :meth:`_field_problems` finds none."""
        return RecipeAsk(system=self._text("system") or None, target_pH=read_ph(self._text("ph"), "target pH"),
                         temperature_c=read_celsius(self._text("temp")), total=self._text("total"),
                         volume=self._text("volume"), salt=self._text("salt"),
                         form=self.query_one(Cycler).value, activity=self.activity, free=self._text("free"))

    # -- designing ---------------------------------------------------------------------------
    @on(Input.Changed)
    @on(Cycler.Changed)
    def _changed(self) -> None:
        """A field changed: the shown recipe is out of date; design again shortly."""
        self._generation += 1
        self.recipe = None
        self._error = None
        if self._timer is not None:
            self._timer.stop()
        problems = self._field_problems()
        for key, _, _ in self.FIELDS:
            self.query_one(f"#recipe-{key}", Input).set_class(key in problems, "-invalid")
        self.query_one("#recipe-scroll").add_class("-stale")
        if problems:
            self._error = first_problem(problems, self, "recipe-")
            self._then = None
            self._status(self._error, error=True)
            return
        self._status("designing…")
        self._timer = self.set_timer(DESIGN_DELAY, lambda g=self._generation: self._start(g))

    def _start(self, generation: int) -> None:
        if generation == self._generation:
            self._design(generation, self.ask())

    @work(thread=True, exclusive=True, group="recipe", exit_on_error=False, description="design a buffer")
    def _design(self, generation: int, ask: RecipeAsk) -> None:
        try:
            if ask.free:
                recipe = chem.design_metal_buffer(ask.free, ask.system, ask.target_pH,
                                                  temperature_c=ask.temperature_c, total=ask.total,
                                                  volume=ask.volume, form=ask.design_form,
                                                  salts=(ask.salt,) if ask.salt else (), activity=ask.activity,
                                                  library=self.library)
            else:
                recipe = chem.design_buffer(ask.system, ask.target_pH, temperature_c=ask.temperature_c,
                                            total=ask.total, volume=ask.volume, form=ask.form,
                                            salts=(ask.salt,) if ask.salt else (), activity=ask.activity,
                                            library=self.library)
        except chem.ChemError as exc:
            recipe, error = None, str(exc)
        else:
            error = None
        if not get_current_worker().is_cancelled:
            self.post_message(self.Designed(generation, recipe, error))

    @on(Designed)
    def _designed(self, message: Designed) -> None:
        if message.generation != self._generation:           # an answer to an older question
            return
        if message.recipe is None:
            self._error = message.error
            self._then = None
            self._status(message.error or "", error=True)
            return
        recipe = self.recipe = message.recipe
        self.query_one("#recipe-result", Static).update(Content("\n").join(recipe_lines(recipe)))
        self.query_one("#recipe-scroll").remove_class("-stale")
        free = (f"free {recipe.free_species} {chem.format_molar(recipe.free_reached, 3)} · "
                if recipe.free_species is not None else "")
        self._status(f"{free}pH {recipe.pH:.3f} at {recipe.temperature_c:g} °C with "
                     f"{recipe.system.name} · enter loads it into the flask")
        if self._then is not None:
            self.action_finish(self._then)

    @on(Worker.StateChanged)
    def _design_failed(self, event: Worker.StateChanged) -> None:
        if event.state == WorkerState.ERROR and event.worker.group == "recipe":
            error = event.worker.error
            self._error = f"the design failed: {type(error).__name__}: {error}"
            self._then = None
            self._status(self._error, error=True)

    def _status(self, text: str, *, error: bool = False) -> None:
        status = self.query_one("#recipe-status", Label)
        show_text(status, text)
        status.set_class(error, "dialog-error")

    # -- actions -----------------------------------------------------------------------------
    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.action_finish("load")

    @on(Button.Pressed)
    def _pressed(self, event: Button.Pressed) -> None:
        event.stop()
        if event.button.id == "recipe-cancel":
            self.action_cancel()
        else:
            self.action_finish("save" if event.button.id == "recipe-save" else "load")

    def action_finish(self, what: str) -> None:
        """Load (``"load"``) or save (``"save"``) the recipe: now if it is ready, else once it is."""
        if self.recipe is not None:
            self.dismiss(self.recipe if what == "load" else ("save", self.recipe))
        elif self._error is not None:
            self._status(self._error, error=True)          # refused until the fields make a recipe
            self.app.bell()
        else:
            self._then = what
            self._status("designing… (then " + ("loading it" if what == "load" else "saving it") + ")")

    def action_scroll(self, pages: int) -> None:
        scroll = self.query_one("#recipe-scroll", VerticalScroll)
        scroll.scroll_relative(y=pages * max(1, scroll.size.height - 1), animate=False)

    def action_cancel(self) -> None:
        self.dismiss(None)


def named(field: str, error: Exception) -> str:
    """``error``'s message led by the name of the field it is about (unless it already is)."""
    message = str(error)
    return message if message.casefold().startswith(field.casefold()) else f"{field}: {message}"


def _missing() -> None:
    raise chem.UnitError("required")
