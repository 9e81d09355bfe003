"""The behaviour curves and the recipe designer, driven through the explorer by keys."""

from __future__ import annotations

import pytest

import chem
from tests.app.test_curve_screens import fill, wait_until
from tui.app import ExplorerApp
from tui.screens.recipe_form import RecipeForm
from tui.screens.titration_setup import TitrationSetup
from tui.widgets.plot_area import PlotArea


async def test_v_sets_up_a_titration_and_the_chart_shows_its_equivalence_point(library, settle):
    # 50 mM acetic acid in a 20 mL sample, 0.1 M NaOH: equivalence at 10 mL (stoichiometry).
    mix = chem.Mixture((chem.Ingredient(library.reagent("acetic acid"), 0.05, "50 mM"),))
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("v")
        await wait_until(pilot, lambda: isinstance(app.screen, TitrationSetup))
        await fill(pilot, "NaOH", "0.1 M", "20 mL", "20 mL")
        await pilot.press("enter")
        await settle(pilot)
        assert app.plot_kind == "titration"
        shown = app.query_one(PlotArea).image.plain
        assert "equivalence 10" in shown or "equivalence 9.99" in shown, shown


async def test_the_readout_shows_the_buffer_capacity_chem_computes(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        beta = chem.buffer_capacity_at(chem.solve(acetate_buffer))
        assert app.capacity == pytest.approx(beta, rel=1e-9)
        assert f"β {chem.format_molar(beta, 3)}/pH" in text_of(app.query_one("#readout"))


async def test_b_designs_a_recipe_loads_it_and_undo_brings_the_old_mixture_back(acetate_buffer, settle):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("b")
        await wait_until(pilot, lambda: isinstance(app.screen, RecipeForm))
        form = app.screen
        await fill(pilot, "hepes", "7.2", "20", "25 mM", "500 mL")
        await wait_until(pilot, lambda: form.recipe is not None and form.recipe.target_pH == 7.2)
        await pilot.press("enter")
        await settle(pilot)
        assert app.screen is app.screen_stack[0]
        assert {i.reagent.system.name for i in app.mixture.ingredients if i.reagent.system} == {"hepes"}
        assert app.mixture.temperature_c == 20.0
        assert app.result.pH == pytest.approx(7.2, abs=1e-3)
        await pilot.press("u")
        await settle(pilot)
        assert app.mixture == acetate_buffer


async def test_markup_like_text_typed_as_an_amount_is_shown_literally(acetate_buffer, settle, text_of):
    # Error messages quote what was typed; "[/x" must not be read as markup (it once crashed).
    from tui.screens.finder import IngredientFinder

    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("n")
        await wait_until(pilot, lambda: isinstance(app.screen, IngredientFinder))
        await fill(pilot, "NaCl")
        await pilot.press("enter")
        await fill(pilot, "[/x] 5")
        await pilot.pause()
        error = app.screen.query_one("#finder-error")
        assert "[/x] 5" in text_of(error)
        await pilot.press("enter")                     # refused: the mixture is unchanged
        await settle(pilot)
        assert app.mixture == acetate_buffer


async def test_keys_typed_ahead_after_picking_a_reagent_land_in_its_amount(acetate_buffer, settle):
    # Over SSH a burst of keys arrives at once. Posting them all to the app before any is handled
    # recreates that (Pilot.press would wait for each): the reagent picked must be the one typed,
    # and the amount typed right after enter must land in its amount field, not in the filter.
    from textual import events

    from tui.screens.finder import IngredientFinder

    def key(ch: str) -> events.Key:
        name = {" ": "space", "\r": "enter"}.get(ch, ch)
        return events.Key(name, ch)

    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("n")
        await wait_until(pilot, lambda: isinstance(app.screen, IngredientFinder))
        for ch in "potassium chloride\r7 mM\r":
            app.post_message(key(ch))
        await settle(pilot)
        await wait_until(pilot, lambda: app.screen is app.screen_stack[0])
        await settle(pilot)
        added = [i for i in app.mixture.ingredients if i.reagent.name == "potassium chloride"]
        assert len(added) == 1 and added[0].conc == pytest.approx(0.007)
        assert len(app.mixture.ingredients) == len(acetate_buffer.ingredients) + 1
