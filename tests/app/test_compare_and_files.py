"""Pinning and deltas, presets (save, open, overwrite), the autosave and quitting, driven by keys."""

from __future__ import annotations

import pytest

import chem
from tui import storage
from tui.app import AUTOSAVE_DELAY_S, ExplorerApp
from tui.screens.choice import Choice
from tui.screens.preset_picker import PresetPicker
from tui.widgets.readout import Readout
from tui.formula import shown_name
from tui.widgets.species_table import SpeciesTable
from tui.widgets.title_bar import TitleBar


async def test_pinning_shows_changes_against_the_pinned_state(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        before = app.result
        await pilot.press("p")
        assert app.pinned is before
        await pilot.press("down", "right", "right")     # more sodium acetate: pH goes up
        await settle(pilot)
        after = app.result
        assert after.pH > before.pH
        side = text_of(app.query_one(Readout))
        assert f"ΔpH {after.pH - before.pH:+.3f}" in side
        table = app.query_one(SpeciesTable)
        assert "Δlog C" in table.header
        row = next(line for line in table.lines if line.startswith(shown_name("CH3COO-", table.utf8) + " "))
        change = after.get("CH3COO-").log_c - before.get("CH3COO-").log_c
        assert f"{change:+.2f}" in row
        assert "pinned" in text_of(app.query_one(TitleBar))
        await pilot.press("p")                          # unpin: deltas go away
        assert app.pinned is None
        assert "Δlog C" not in table.header
        await pilot.pause()
        assert "ΔpH" not in text_of(app.query_one(Readout))


async def test_a_species_missing_from_the_pinned_state_is_marked_new(acetate_buffer, settle, library):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("p", "n", *"NH4Cl", "enter", "enter")
        await settle(pilot)
        table = app.query_one(SpeciesTable)
        assert any(line.startswith(shown_name("NH4+", table.utf8) + " ") and " new" in line for line in table.lines)


async def test_save_then_reopen_gives_back_the_same_mixture(acetate_buffer, settle, data_dir):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("right", "t")                 # make it differ from what was opened
        edited = app.mixture
        assert app.dirty
        await pilot.press("s")
        await pilot.press("ctrl+u", *"r 1", "enter")
        await settle(pilot)
        path = data_dir / "presets" / "r 1.toml"
        assert path.is_file()
        assert chem.load_preset(path) == edited
        assert not app.dirty
        await pilot.press("x", "x")                     # empty the flask
        assert app.mixture.ingredients == ()
        await pilot.press("o", *"r 1")                  # filter by name
        picker = app.screen
        assert isinstance(picker, PresetPicker)
        listing = picker.query_one("#picker-list")
        assert listing.option_count == 1
        await pilot.press("enter")
        await settle(pilot)
        assert app.mixture == edited
        assert app.result.pH == pytest.approx(chem.solve(edited).pH, abs=1e-12)


async def test_the_preset_list_shows_shipped_presets_by_title():
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("o")
        listing = app.screen.query_one("#picker-list")
        shown = [str(listing.get_option_at_index(i).prompt) for i in range(listing.option_count)]
        for path in chem.shipped_presets():
            title = chem.load_preset(path).title
            assert any(title in prompt and path.name in prompt for prompt in shown), title


async def test_saving_over_an_existing_preset_asks_first(acetate_buffer, settle, data_dir):
    existing = storage.save_user_preset(chem.Mixture(title="keep me"), "buffer")
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("s", "ctrl+u", *"buffer", "enter")
        assert isinstance(app.screen, Choice)
        await pilot.press("n")                          # keep the old one
        await settle(pilot)
        assert chem.load_preset(existing).title == "keep me"
        await pilot.press("enter")                      # still in the save form: try again, and replace
        assert isinstance(app.screen, Choice)
        await pilot.press("y")
        await settle(pilot)
        assert chem.load_preset(existing) == acetate_buffer


async def test_a_bad_preset_name_is_refused_in_the_form(acetate_buffer, data_dir):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("s", "ctrl+u", *"../x", "enter")
        assert "letters, digits" in str(app.screen.query_one("#save-error").render())
        assert not (data_dir / "presets").exists() or not any((data_dir / "presets").iterdir())


async def test_every_edit_is_autosaved_and_offered_back_after_a_dropped_session(acetate_buffer, settle, autosaved):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right")
        await pilot.pause(AUTOSAVE_DELAY_S + 0.1)        # written shortly after the last edit
        await settle(pilot)
        edited = app.mixture
        assert autosaved() == [edited]
        await pilot.press("right")                      # ended before that: written as the app goes
        edited = app.mixture
    assert autosaved() == [edited]
    # the session ended without quitting (as when a connection drops): the next start offers it back
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        assert isinstance(app.screen, Choice)
        await pilot.press("y")
        await settle(pilot)
        assert app.mixture == edited
        assert app.result.mixture == edited
        assert autosaved() == [edited]                  # now this session's own autosave holds it


async def test_a_hang_up_writes_the_pending_autosave_at_once(acetate_buffer, autosaved, monkeypatch):
    # What the SIGHUP/SIGTERM handler calls: the edit is on disk before the delayed write is due.
    monkeypatch.setattr("tui.app.AUTOSAVE_DELAY_S", 60.0)      # not due during this test, however slow
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right")
        assert autosaved() == []                        # not yet due
        app.flush_autosave()
        assert autosaved() == [app.mixture]
        stamp = app._autosave.path.stat().st_mtime_ns
        app.flush_autosave()                            # already on disk: not written again
        assert app._autosave.path.stat().st_mtime_ns == stamp
        await pilot.press("q", "d")                     # a clean quit leaves nothing behind
        await pilot.pause()
    assert autosaved() == []


async def test_discarding_the_restore_deletes_the_autosave(acetate_buffer, orphan, autosaved):
    orphan(acetate_buffer.with_temperature(30.0))
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("d")
        assert app.mixture == acetate_buffer
        assert autosaved() == []


async def test_quit_with_unsaved_changes_asks_and_escape_stays(acetate_buffer, autosaved):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right", "q")
        assert isinstance(app.screen, Choice)
        await pilot.press("escape")
        assert app.is_running and app.screen is app.screen_stack[0]
        await pilot.press("q", "d")
        await pilot.pause()
    assert app.return_value == 0
    assert autosaved() == []                            # a clean quit leaves nothing to restore


@pytest.mark.parametrize("key", ["q", "ctrl+q"])
async def test_quit_without_changes_leaves_at_once(acetate_buffer, key):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press(key)
        await pilot.pause()
    assert app.return_value == 0


async def test_q_typed_into_an_amount_is_text_not_quit(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter", "q")
        assert app.is_running
        assert app.query_one("#flask").editor.value == "q"
        assert app.query_one(Readout) is not None


async def test_an_unreadable_autosave_is_set_aside_not_lost(acetate_buffer, data_dir):
    data_dir.mkdir(parents=True)
    (data_dir / "session.toml").write_text("this is not a preset", encoding="utf-8")
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert app.screen is app.screen_stack[0]
        assert app.mixture == acetate_buffer
        notes = [n.message for n in app._notifications]
        assert len(notes) == 1 and "cannot be read" in notes[0] and "session.toml.unreadable" in notes[0]
    assert (data_dir / "session.toml.unreadable").read_text(encoding="utf-8") == "this is not a preset"


async def test_ctrl_q_works_from_an_open_dialog(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("n", "ctrl+q")
        await pilot.pause()
    assert app.return_value == 0
