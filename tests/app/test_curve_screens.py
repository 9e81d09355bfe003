"""The curve plots (titration, buffer capacity, sweep, dilution) and their forms, and the recipe designer.

The forms are driven by keys only, each pushed by a small harness app that records what
the form dismisses with. Recipes and curves are compared with what chem computes for the
same input; the one chemistry check (the equivalence volume) names its basis.
"""

from __future__ import annotations

import re
import unicodedata
from pathlib import Path

import pytest
from textual import events
from textual.app import App
from textual.widgets import Input, Label, Static

import chem
import tui
from tui.screens.recipe_form import FORMS, RecipeForm
from tui.screens.sweep_setup import SweepSetup
from tui.screens.titration_setup import TitrationSetup
from tui.widgets.curve_kinds import (CURVE_KIND_IDS, SweepSettings, TitrationSettings, curve_kinds,
                                     default_titration, draw_kind, sweep_kind, titration_kind)
from tui.widgets.plot_kinds import PlotRequest, PlotStyle

APP_CSS = Path(tui.__file__).with_name("app.tcss")
COLOUR = PlotStyle.for_terminal(dark=True, color=True, utf8=True)


class Harness(App[None]):
    """Pushes one form over an empty screen and records what it dismisses with."""

    CSS_PATH = APP_CSS

    def __init__(self, form) -> None:
        super().__init__()
        self.form = form
        self.answers: list[object] = []

    def on_mount(self) -> None:
        self.push_screen(self.form, self.answers.append)


async def wait_until(pilot, condition, timeout: float = 10.0) -> None:
    """Let the app run until ``condition()`` holds (workers finish, messages are handled)."""
    for _ in range(int(timeout / 0.02)):
        if condition():
            return
        await pilot.pause(0.02)
    raise AssertionError("condition not met in time")


async def type_text(pilot, text: str) -> None:
    """Type ``text`` into the focused entry as fast typing does: keys back to back, then let the app settle.

    (``pilot.press`` waits for the app to idle after every key, which makes long entries slow to test.)
    """
    for char in text:
        key = char if char.isalnum() else unicodedata.name(char).lower().replace("-", "_").replace(" ", "_")
        pilot.app.post_message(events.Key(key, char))
    await pilot.pause()


async def fill(pilot, *entries: str) -> None:
    """Replace the text of the focused entry and of the ones after it (tab between them) with ``entries``."""
    for i, entry in enumerate(entries):
        if i:
            await pilot.press("tab")
        await pilot.press("ctrl+u")
        await type_text(pilot, entry)


def text(widget) -> str:
    return str(widget.content)


@pytest.fixture(scope="module")
def demo() -> chem.Equilibrium:
    return chem.solve(chem.demo_mixture())


def request(kind: str, width: int = 80, height: int = 20, style: PlotStyle = COLOUR) -> PlotRequest:
    return PlotRequest(kind, width, height, None, style)


# --------------------------------------------------------------------------
# curve kinds
# --------------------------------------------------------------------------

@pytest.mark.parametrize(("kind", "expected"), [
    ("titration", ("titrant added (mL)", "sodium hydroxide", "equivalence", "EP")),
    ("capacity", ("β (M/pH)", "β", "mM/pH at pH")),
    ("sweep", ("citric acid monohydrate", "now 8 mM", "pH as citric acid monohydrate varies")),
    ("dilution", ("dilution factor (log scale)", "1000", "undiluted")),
])
def test_each_curve_kind_draws_the_demo_mixture_with_labelled_axes(kind, expected, demo):
    [built] = [k for k in curve_kinds() if k.id == kind]
    drawing = draw_kind(built, demo, request(kind))
    assert not drawing.note, drawing.plain
    lines = drawing.plain.split("\n")
    assert len(lines) <= 20 and max(len(line) for line in lines) <= 80
    for label in expected:
        assert label in drawing.plain
    assert "pH" in drawing.plain


def test_the_capacity_plot_marks_the_current_ph_and_reports_beta_there(demo):
    drawing = draw_kind(curve_kinds()[1], demo, request("capacity"))
    beta = chem.buffer_capacity_at(demo)
    assert f"pH {demo.pH:.2f}" in drawing.plain
    assert f"β {chem.format_molar(float(f'{beta:.3g}'))}/pH at pH {demo.pH:.2f}" in drawing.plain


def test_titrating_hydrochloric_acid_with_sodium_hydroxide_marks_equivalence_at_25_ml(library):
    # 25 mL of 0.1 M HCl holds 2.5 mmol H+; 0.1 M NaOH neutralises it 1:1 at 2.5 mmol / 0.1 M = 25 mL
    # (stoichiometry, common practice).
    acid = chem.Mixture((chem.Ingredient(library.reagent("hydrochloric acid"), 0.1, "0.1 M"),))
    kind = titration_kind(TitrationSettings("NaOH", "0.1 M", "25 mL", "50 mL"))
    drawing = draw_kind(kind, chem.solve(acid), request("titration"))
    [volume] = re.findall(r"equivalence ([\d.]+) mL", drawing.plain)
    assert float(volume) == pytest.approx(25.0, abs=0.01)
    assert "EP" in drawing.plain
    assert "titration with NaOH" == kind.title


def test_a_basic_mixture_is_titrated_with_acid_by_default(library):
    base = chem.solve(chem.Mixture((chem.Ingredient(library.reagent("sodium hydroxide"), 0.01, "10 mM"),)))
    assert default_titration(base).titrant_name == "HCl"
    drawing = draw_kind(titration_kind(), base, request("titration"))
    assert "hydrochloric acid" in drawing.plain


def test_the_demo_mixture_is_titrated_with_base_by_default(demo):
    assert demo.pH < 7
    assert default_titration(demo) == TitrationSettings("NaOH", "0.1 M", "25 mL", "50 mL")


def test_settings_chem_refuses_are_drawn_as_its_one_line_message(demo):
    drawing = draw_kind(sweep_kind(SweepSettings("glycerol", "0", "1 M")), demo, request("sweep"))
    assert drawing.note
    assert "'glycerol' is not an ingredient of the" in drawing.canvas
    assert max(len(line) for line in drawing.canvas.split("\n")) <= 80       # wrapped to the plot's width
    drawing = draw_kind(titration_kind(TitrationSettings("NaOH", "0.1 M", "0 mL", "50 mL")), demo,
                        request("titration"))
    assert drawing.note and "sample volume: must be more than zero" in drawing.canvas


def test_a_small_plot_area_still_shows_the_equivalence_point(demo):
    drawing = draw_kind(titration_kind(), demo, request("titration", 30, 8))
    assert not drawing.note
    assert "equivalence" in drawing.plain
    assert len(drawing.plain.split("\n")) <= 8
    assert draw_kind(titration_kind(), demo, request("titration", 20, 6)).note


@pytest.mark.parametrize("color", [True, False])
def test_without_utf8_every_curve_is_pure_ascii(color, demo):
    style = PlotStyle.for_terminal(dark=False, color=color, utf8=False)
    for kind in curve_kinds():
        plain = draw_kind(kind, demo, request(kind.id, 70, 20, style)).plain
        assert plain.isascii(), (kind.id, {c for c in plain if not c.isascii()})


def test_the_kinds_come_in_the_documented_order():
    assert tuple(k.id for k in curve_kinds()) == CURVE_KIND_IDS


# --------------------------------------------------------------------------
# titration form
# --------------------------------------------------------------------------

async def test_the_titration_form_filled_by_keys_returns_those_settings(library):
    form = TitrationSetup(chem.demo_mixture(), None, library)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await fill(pilot, "HCl", "0.2 M", "10 mL", "30 mL")
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == [TitrationSettings("HCl", "0.2 M", "10 mL", "30 mL")]
        assert app.screen is not form


async def test_a_bad_volume_is_explained_and_enter_does_not_dismiss(library):
    form = TitrationSetup(chem.demo_mixture(), None, library)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("tab", "tab")
        await fill(pilot, "25 kg")
        sample = form.query_one("#titration-sample", Input)
        error = form.query_one("#titration-error", Label)
        assert "-invalid" in sample.classes
        assert text(error).startswith("sample volume: ")
        assert "unknown volume unit 'kg'" in text(error)
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == [] and app.screen is form
        assert app.focused is sample
        await fill(pilot, "0 mL")
        await pilot.press("enter")
        assert "must be more than zero" in text(error) and app.screen is form
        await fill(pilot, "20 mL")
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == [TitrationSettings("NaOH", "0.1 M", "20 mL", "50 mL")]


async def test_titrant_matches_are_listed_as_you_type_and_enter_takes_one(library):
    form = TitrationSetup(chem.demo_mixture(), None, library)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await fill(pilot, "potassium hydr")
        listing = form.query_one("#titrant-matches")
        assert listing.display
        assert listing.get_option_at_index(0).id == "potassium hydroxide"
        await pilot.press("enter")                  # takes the match; the form stays open
        await pilot.pause()
        assert form.query_one("#titration-titrant", Input).value == "potassium hydroxide"
        assert not listing.display and app.answers == []
        assert app.focused is form.query_one("#titration-conc", Input)
        await pilot.press("escape")
        await pilot.pause()
        assert app.answers == [None]


# --------------------------------------------------------------------------
# sweep form
# --------------------------------------------------------------------------

async def test_the_sweep_form_varies_the_temperature_when_cycled_to_it(demo):
    form = SweepSetup(demo.mixture)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        assert form.query_one("#sweep-to", Input).value == "16 mM"     # twice the citric acid's 8 mM
        await pilot.press("left")                                      # the last choice: temperature
        assert form.query_one("#sweep-from", Input).value == "5"
        await pilot.press("tab")
        await fill(pilot, "150")
        await pilot.press("enter")
        error = text(form.query_one("#sweep-error", Label))
        assert error == "from: 150 °C is outside 0 to 100 °C" and app.answers == []   # chem.units, as the CLI
        await fill(pilot, "10 °C", "8")
        await pilot.press("enter")
        assert text(form.query_one("#sweep-error", Label)) == "to: must be above 'from' (10 °C)"
        await fill(pilot, "40", "31")
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == [SweepSettings("temperature", "10 °C", "40", 31)]
    drawing = draw_kind(sweep_kind(app.answers[0]), demo, request("sweep"))
    assert "temperature (°C)" in drawing.plain and "now 25 °C" in drawing.plain


# --------------------------------------------------------------------------
# recipe form
# --------------------------------------------------------------------------

def test_the_forms_offered_are_the_ones_chem_designs():
    from chem.recipe import FORMS as CHEM_FORMS

    assert FORMS == CHEM_FORMS


async def test_a_recipe_typed_in_matches_chem_and_loads_into_the_flask(library):
    form = RecipeForm(library)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await fill(pilot, "tris", "7.4", "37", "50 mM", "1 L")
        await wait_until(pilot, lambda: form.recipe is not None)
        expected = chem.design_buffer("tris", 7.4, temperature_c=37, total="50 mM", volume="1 L")
        shown = text(form.query_one("#recipe-result", Static))
        assert f"pH {expected.pH:.3f} exact" in shown
        assert f"Henderson–Hasselbalch {expected.shortcut.pH:.3f}" in shown
        assert [(i.reagent.name, i.unit) for i in form.recipe.items] == \
               [(i.reagent.name, i.unit) for i in expected.items]
        for item in expected.items:
            assert f"{item.amount:.4g} {item.unit}" in shown and item.reagent.name in shown
        assert f"ionic strength {chem.format_molar(float(f'{expected.ionic_strength:.3g}'))}" in shown
        await pilot.press("enter")
        await pilot.pause()
    [recipe] = app.answers
    assert isinstance(recipe, chem.Recipe)
    assert chem.solve(recipe.mixture).pH == pytest.approx(7.4, abs=1e-3)
    assert recipe.temperature_c == 37.0


async def test_enter_before_the_design_is_done_loads_it_once_it_is(library):
    form = RecipeForm(library, target_pH=7.2, temperature_c=25)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_text(pilot, "phosphate")
        await pilot.press("enter")
        await wait_until(pilot, lambda: app.answers)
    [recipe] = app.answers
    assert recipe.system.name == "phosphate" and recipe.target_pH == 7.2


async def test_save_as_preset_hands_the_recipe_to_the_app(library):
    form = RecipeForm(library, target_pH=8.0, temperature_c=4)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_text(pilot, "tris")
        await wait_until(pilot, lambda: form.recipe is not None)
        await pilot.press("ctrl+s")
        await pilot.pause()
    [(what, recipe)] = app.answers
    assert what == "save" and recipe.system.name == "tris" and recipe.temperature_c == 4.0


async def test_the_form_cycler_switches_to_a_titrant_recipe(library):
    form = RecipeForm(library, target_pH=7.4, temperature_c=25)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_text(pilot, "hepes")
        await pilot.press("tab", "tab", "tab", "tab", "tab", "right")
        await wait_until(pilot, lambda: form.recipe is not None)
        assert form.recipe.form == "titrant"
        assert any(i.role == "titrant" and i.unit == "mL" for i in form.recipe.items)
        assert "pipette" in text(form.query_one("#recipe-result", Static))


async def test_chem_errors_show_as_one_line_and_enter_is_refused(library):
    form = RecipeForm(library, target_pH=7.4)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_text(pilot, "trix")
        status = form.query_one("#recipe-status", Label)
        assert "unknown system 'trix'" in text(status)
        assert "-invalid" in form.query_one("#recipe-system", Input).classes
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == [] and app.screen is form
        await fill(pilot, "tris")
        await pilot.press(*["tab"] * 6)                 # past the other fields and the form cycler: the salt
        await type_text(pilot, "NaCl 150 kg")           # read by chem, in the design
        await wait_until(pilot, lambda: "kg" in text(status))
        assert "\n" not in text(status) and form.recipe is None
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == []


async def test_an_answer_to_an_older_question_is_dropped(library):
    form = RecipeForm(library, target_pH=7.4)
    app = Harness(form)
    async with app.run_test(size=(80, 24)) as pilot:
        await type_text(pilot, "tris")
        await wait_until(pilot, lambda: form.recipe is not None)
        shown = form.recipe
        form.post_message(RecipeForm.Designed(form._generation - 1, None, "an old failure"))
        await pilot.pause()
        assert form.recipe is shown
        assert "an old failure" not in text(form.query_one("#recipe-status", Label))
