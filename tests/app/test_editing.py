"""The explorer driven by keys only: adding, editing, removing, nudging, undo and redo."""

from __future__ import annotations

import re

import pytest
from textual.widgets import Label

import chem
from tui.app import NUDGE_FACTORS, ExplorerApp
from tui.widgets.flask_list import HOLD_S, FlaskList
from tui.widgets.readout import Readout, big_digits


async def test_a_reagent_added_through_the_finder_gives_the_ph_chem_solves(library, settle, text_of):
    start = chem.Mixture((chem.Ingredient(library.reagent("acetic acid"), 0.05, "50 mM"),))
    app = ExplorerApp(start)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        ph_before = app.result.pH
        await pilot.press("n", *"NaOAc")                # an alias of sodium acetate
        await pilot.press("enter")                      # pick the first match
        await pilot.press(*"50 mM", "enter")            # the offered amount is selected, so typing replaces it
        await settle(pilot)
        expected = chem.solve(start.with_ingredient(
            chem.Ingredient(library.reagent("sodium acetate"), 0.05, "50 mM")))
        assert [i.reagent.name for i in app.mixture.ingredients] == ["acetic acid", "sodium acetate"]
        assert app.mixture.ingredients[1].conc == pytest.approx(0.05)
        assert app.result.pH == pytest.approx(expected.pH, abs=1e-12)
        assert app.result.pH != pytest.approx(ph_before, abs=0.1)
        readout = text_of(app.query_one(Readout))
        assert all(row in readout for row in big_digits(f"{expected.pH:.2f}"))   # the large pH
        assert f"pH  {expected.pH:.3f}" in readout
        assert "sodium acetate" in text_of(app.query_one(FlaskList))


async def test_the_finder_lists_reagents_of_a_system_typed_by_name(library):
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("n", *"phosphate")
        listing = app.screen.query_one("#picker-list")
        names = [listing.get_option_at_index(i).id for i in range(listing.option_count)]
        assert "disodium hydrogen phosphate" in names
        assert "potassium dihydrogen phosphate" in names
        await pilot.press("escape")
        assert app.screen is app.screen_stack[0]
        assert app.mixture == chem.Mixture()


async def test_a_bad_amount_is_shown_as_an_error_and_never_changes_the_mixture(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        before, ph_before = app.mixture, app.result.pH
        await pilot.press("enter")                      # edit the selected amount in place
        await pilot.press(*"5 kg")
        flask = app.query_one(FlaskList)
        assert flask.error is not None and "unknown unit 'kg'" in flask.error
        await pilot.pause()
        assert "unknown unit 'kg'" in text_of(flask)      # shown under the entry
        await pilot.press("enter")                      # refused: still editing, still the same mixture
        await settle(pilot)
        assert flask.editing
        assert app.mixture is before
        assert app.result.pH == ph_before
        await pilot.press("ctrl+u", *"-3 mM", "enter")
        await pilot.pause()
        assert "cannot be negative" in text_of(flask)
        assert app.mixture is before
        await pilot.press("escape")
        assert not flask.editing and flask.error is None
        assert app.mixture is before
        assert "50 mM" in text_of(flask)


async def test_an_amount_typed_in_place_replaces_the_old_one(acetate_buffer, settle, library):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("down", "enter", *"0.1 M", "enter")
        await settle(pilot)
        assert app.mixture.ingredients[1].conc == pytest.approx(0.1)
        assert app.mixture.ingredients[1].label == "0.1 M"
        assert app.result.pH == pytest.approx(chem.solve(app.mixture).pH, abs=1e-12)
        assert app.focused is app.query_one(FlaskList)


def _burst(app, *keys: str) -> None:
    """Keys arriving in one read from the terminal (fast typing, or a burst over a slow SSH link): all
    queued at the app before any is handled, as the terminal driver does."""
    from textual import events

    for key in keys:
        char = {"backspace": "\x7f", "enter": "\r", "space": " "}.get(key, key if len(key) == 1 else None)
        app.post_message(events.Key(key, char))


async def test_keys_arriving_in_one_burst_edit_an_amount_in_typing_order(acetate_buffer, settle):
    # Textual's own entry inserts a typed character at once but runs backspace, delete and cursor keys
    # only after they bubble back to the app: "backspace 9" in one read became "9 backspace".
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("down", "enter")
        await pilot.pause()
        editor = app.query_one(FlaskList).editor
        assert editor is not None
        _burst(app, "end", *["backspace"] * 8, "7", "0", "space", "m", "M", "left", "left", "left",
               "backspace", "5", "end")
        await pilot.pause()
        await pilot.pause()
        assert editor.value == "75 mM"
        _burst(app, "enter")
        await settle(pilot)
        assert app.mixture.ingredients[1].conc == pytest.approx(0.075)


async def test_nudges_scale_the_selected_amount_coarse_and_fine(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("down", "right")
        assert app.mixture.ingredients[1].conc == pytest.approx(0.05 * NUDGE_FACTORS[0])
        await pilot.press("shift+left")
        assert app.mixture.ingredients[1].conc == pytest.approx(0.05 * NUDGE_FACTORS[0] / NUDGE_FACTORS[1])
        await pilot.press("minus")
        assert app.mixture.ingredients[1].conc == pytest.approx(0.05 / NUDGE_FACTORS[1])
        assert app.mixture.ingredients[0].conc == pytest.approx(0.05)
        await settle(pilot)
        assert app.result.pH == pytest.approx(chem.solve(app.mixture).pH, abs=1e-12)
        assert app.mixture.ingredients[1].label in text_of(app.query_one(FlaskList))


async def test_a_new_amount_shows_with_its_ph_or_soon_after_at_the_latest(acetate_buffer, settle, text_of):
    # The flask holds a change of amounts back until the numbers solved from it arrive, so both
    # change in one frame; without an answer it still shows within HOLD_S.
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        flask = app.query_one(FlaskList)
        more = acetate_buffer.with_replaced(0, acetate_buffer.ingredients[0].with_conc(0.2, "200 mM"))
        flask.propose(more)                             # no solve behind it: nothing releases it
        await pilot.pause()
        assert "200 mM" not in text_of(flask)
        await pilot.pause(HOLD_S + 0.1)
        assert "200 mM" in text_of(flask)
        flask.propose(acetate_buffer)
        flask.release()
        await pilot.pause()
        assert "200 mM" not in text_of(flask) and "50 mM" in text_of(flask)
        fewer = chem.Mixture(acetate_buffer.ingredients[1:])   # rows removed: shown at once
        flask.propose(fewer)
        await pilot.pause()
        assert "acetic acid" not in text_of(flask)


async def test_temperature_and_activity_model_keys(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("t", "t", "T")
        assert app.mixture.temperature_c == pytest.approx(26.0)
        models = []
        for _ in range(3):
            await pilot.press("m")
            models.append(app.mixture.activity)
        assert sorted(models) == sorted(["ideal", "davies", "extended-dh"])
        assert models[-1] == "davies"
        await pilot.press("m")
        await settle(pilot)
        readout = text_of(app.query_one(Readout)).splitlines()
        conditions = next(i for i, line in enumerate(readout) if "°C" in line)
        assert "26.0 °C" in readout[conditions] and "β " in readout[conditions]
        assert app.mixture.activity in readout[conditions + 1] and "converged" in readout[conditions + 1]


async def test_remove_then_undo_and_redo_walk_the_history(acetate_buffer, settle):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("right")                      # 1: more acetic acid
        nudged = app.mixture
        assert nudged.ingredients[0].conc == pytest.approx(0.05 * NUDGE_FACTORS[0])
        await pilot.press("x")                          # 2: remove it
        assert [i.reagent.name for i in app.mixture.ingredients] == ["sodium acetate"]
        await pilot.press("u")
        assert app.mixture == nudged
        await pilot.press("u")
        assert app.mixture == acetate_buffer
        await pilot.press("u")                          # nothing left to undo: no change
        assert app.mixture == acetate_buffer
        await pilot.press("r")
        assert app.mixture == nudged
        await pilot.press("ctrl+y")
        assert [i.reagent.name for i in app.mixture.ingredients] == ["sodium acetate"]
        await pilot.press("ctrl+z")
        await settle(pilot)
        assert app.mixture == nudged
        assert app.result.mixture == nudged


async def test_an_edit_after_undo_drops_the_redo_steps(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right", "u", "t")
        after = app.mixture
        assert after.temperature_c == 26.0 and after.ingredients == acetate_buffer.ingredients
        await pilot.press("r")
        assert app.mixture == after


async def test_a_custom_species_defined_in_the_form_is_added_and_solved(settle):
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("c")
        await pilot.press(*"cpd7 HCl", "tab", *"8.4", "tab", "1", "tab", "1", "tab",
                          *"Cl-", "tab", *"10 mM", "enter")
        await settle(pilot)
        [ingredient] = app.mixture.ingredients
        reagent = ingredient.reagent
        assert reagent.custom and reagent.name == "cpd7 HCl"
        assert reagent.system.pka == (8.4,) and reagent.protons == 1
        assert [(ion.name, n) for ion, n in reagent.counter_ions] == [("Cl-", 1)]
        assert ingredient.conc == pytest.approx(0.01)
        assert app.result.pH == pytest.approx(chem.solve(app.mixture).pH, abs=1e-12)


async def test_the_custom_form_refuses_a_non_neutral_species_with_a_reason():
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("c")
        await pilot.press("z", "tab", "5", "tab", "1", "tab", "1", "tab", "tab", *"1 mM", "enter")
        error = str(app.screen.query_one("#custom-error", Label).render())
        assert "neutral" in error
        assert app.mixture == chem.Mixture()
        await pilot.press("escape")
        assert app.mixture == chem.Mixture()


async def test_removing_from_an_empty_flask_does_nothing():
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("x", "right", "enter")
        assert app.mixture == chem.Mixture()
        assert not app.query_one(FlaskList).editing
        assert app.query_one(Readout) is not None


async def test_the_selected_row_stays_in_view_when_the_flask_outgrows_its_panel(settle, text_of):
    app = ExplorerApp(chem.demo_mixture())               # four rows; the panel holds five at 80x24
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        flask = app.query_one(FlaskList)
        for typed in ("NaOH", "boric acid"):
            await pilot.press("n", *typed)
            await pilot.press("enter", *"2 mM", "enter")  # added and selected
            await settle(pilot)
        shown = text_of(flask)
        assert app.selected.reagent.name == "boric acid" and "boric acid" in shown
        first = app.mixture.ingredients[0].reagent.name
        assert first not in shown                        # scrolled down to the new row
        await pilot.press(*["up"] * 5)
        await pilot.pause()
        assert first in text_of(flask)


async def test_undo_repaints_a_row_the_cursor_has_left(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        flask = app.query_one(FlaskList)
        await pilot.press("down", "right")              # sodium acetate 50 mM -> 62.5 mM
        await settle(pilot)
        assert "62.5 mM" in text_of(flask)
        await pilot.press("up", "u")                    # cursor on acetic acid; undo changes the other row
        await settle(pilot)
        assert app.mixture == acetate_buffer
        assert "62.5 mM" not in text_of(flask)
        assert re.search(r"sodium acetate\s+50 mM", text_of(flask))
