"""The explorer under stress: no lost work, no crash, one clear notice for each file problem.

Keys that arrive faster than the screen can react (two enters, PageDown right after
ctrl+p) are sent in a burst straight to the driver: ``pilot.press`` waits for the app
to go idle after every key and so hides these races.
"""

from __future__ import annotations

import contextlib
import os
import threading
import time

import pytest
from textual import events

import chem
from tui import storage
from tui.app import AUTOSAVE_DELAY_S, ExplorerApp, run_explorer
from tui.screens.choice import Choice
from tui.screens.help_screen import HelpScreen
from tui.screens.preset_picker import PresetPicker

NESTED = "format = 1\nx = " + "[" * 2000 + "]" * 2000 + "\n"


def burst(app, *keys: str) -> None:
    """Send ``keys`` at once, as a fast typist or a laggy connection delivers them."""
    for key in keys:
        event = events.Key(key, "\r" if key == "enter" else key if len(key) == 1 else None)
        event.set_sender(app)
        app._driver.send_message(event)


def notes(app) -> list[str]:
    return [n.message for n in app._notifications]


@contextlib.contextmanager
def read_only(folder, monkeypatch):
    """Make ``folder`` read-only: by its mode, and for root (whom modes do not stop) by refusing
    the file-system calls that would change it, as the kernel does for everyone else."""
    folder = os.path.realpath(folder)
    os.chmod(folder, 0o555)
    if os.geteuid() == 0:
        def inside(path) -> bool:
            return os.path.realpath(os.fspath(path)).startswith(folder + os.sep)

        def refuse(path):
            raise PermissionError(13, "Permission denied", os.fspath(path))

        real_open, real_replace, real_unlink, real_mkdir, real_link, real_rename = (
            os.open, os.replace, os.unlink, os.mkdir, os.link, os.rename)
        writes = os.O_WRONLY | os.O_RDWR | os.O_CREAT

        def open_(path, flags, *args, **kwargs):
            if flags & writes and inside(path):
                refuse(path)
            return real_open(path, flags, *args, **kwargs)

        def two(real):
            def call(src, dst, *args, **kwargs):
                if inside(src) or inside(dst):
                    refuse(dst)
                return real(src, dst, *args, **kwargs)
            return call

        def one(real):
            def call(path, *args, **kwargs):
                if inside(path):
                    refuse(path)
                return real(path, *args, **kwargs)
            return call

        monkeypatch.setattr(os, "open", open_)
        monkeypatch.setattr(os, "replace", two(real_replace))
        monkeypatch.setattr(os, "rename", two(real_rename))
        monkeypatch.setattr(os, "link", two(real_link))
        monkeypatch.setattr(os, "unlink", one(real_unlink))
        monkeypatch.setattr(os, "mkdir", one(real_mkdir))
    try:
        yield
    finally:
        monkeypatch.undo()
        os.chmod(folder, 0o755)


# -- 1. lost work ------------------------------------------------------------------------------

async def test_escape_at_the_restore_offer_keeps_the_autosave(acetate_buffer, orphan, autosaved):
    earlier = acetate_buffer.with_temperature(31.0)
    orphan(earlier)
    for _ in range(2):                                  # offered again at the next start
        app = ExplorerApp(acetate_buffer)
        async with app.run_test(size=(80, 24)) as pilot:
            assert isinstance(app.screen, Choice)
            assert "keep it for later" in str(app.screen.query_one(".dialog-keys").render())
            await pilot.press("escape")
            assert app.mixture == acetate_buffer
            await pilot.press("q")                      # a clean quit
            await pilot.pause()
        assert app.return_value == 0
        assert autosaved() == [earlier]


async def test_another_running_session_keeps_its_autosave(acetate_buffer, settle, autosaved, data_dir):
    # B runs (it holds the lock on its own autosave), A edits and quits cleanly, B is killed:
    # B's edits are still there, and the next explorer offers them.
    b_edits = acetate_buffer.with_temperature(40.0)
    b = storage.Autosave.begin()
    b.write(b_edits, 1)
    a = ExplorerApp(acetate_buffer)
    async with a.run_test(size=(80, 24)) as pilot:
        assert not isinstance(a.screen, Choice)         # B is running: its autosave is not offered
        await pilot.press("right")
        await pilot.pause(AUTOSAVE_DELAY_S + 0.1)
        await settle(pilot)
        assert len(autosaved()) == 2                    # one file each
        await pilot.press("q", "d")
        await pilot.pause()
    assert a.return_value == 0
    assert autosaved() == [b_edits]                     # A's clean quit removed only its own
    b.release()                                         # B is killed: the system drops its lock
    c = ExplorerApp(acetate_buffer)
    async with c.run_test(size=(80, 24)) as pilot:
        assert isinstance(c.screen, Choice) and "40 °C" in c.screen.question
        await pilot.press("y")
        await settle(pilot)
        assert c.mixture == b_edits
        assert autosaved() == [b_edits]                 # now held by C's own autosave
        assert c._autosave.path.exists() and not b.path.exists()


async def test_every_orphaned_autosave_is_offered(acetate_buffer, orphan, autosaved):
    first, second = acetate_buffer.with_temperature(30.0), acetate_buffer.with_temperature(35.0)
    orphan(first, "session-one.toml")
    orphan(second, "session-two.toml")
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        asked = []
        while isinstance(app.screen, Choice):
            asked.append(app.screen.question)
            await pilot.press("escape")
        assert len(asked) == 2 and "1 more" in asked[0]
        assert {"30 °C" in q for q in asked} == {True, False}
        await pilot.press("q")
        await pilot.pause()
    assert sorted(m.temperature_c for m in autosaved()) == [30.0, 35.0]


async def test_a_slow_autosave_never_lands_over_a_newer_one(acetate_buffer, settle, monkeypatch, autosaved):
    # The delayed autosave runs in a worker; a hang-up writes the newest edit at once on the UI
    # thread. The worker's older write, finishing later, must not replace it.
    original = storage.Autosave.write
    stalled, go_on = threading.Event(), threading.Event()

    def slow(self, mixture, sequence):
        if threading.current_thread() is not threading.main_thread():
            stalled.set()
            go_on.wait(5)
        return original(self, mixture, sequence)

    monkeypatch.setattr(storage.Autosave, "write", slow)
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right")
        older = app.mixture
        await pilot.pause(AUTOSAVE_DELAY_S + 0.1)
        assert stalled.wait(5)                          # the worker has its (older) mixture in hand
        await pilot.press("right")
        newer = app.mixture
        assert app.flush_autosave()
        go_on.set()
        await settle(pilot)
        assert older != newer
        assert autosaved() == [newer]


async def test_temporary_files_left_by_a_killed_save_are_removed(acetate_buffer, data_dir):
    presets = data_dir / "presets"
    presets.mkdir(parents=True)
    old = time.time() - 3600
    stale = [data_dir / ".session-x.toml.ab12cd34.tmp", presets / ".rinse.toml.zz_9yy8x.tmp"]
    fresh = presets / ".rinse.toml.0123abcd.tmp"       # a save in progress elsewhere: left alone
    other = presets / ".notes.txt.ab12cd34.tmp"         # not ours
    for path in (*stale, fresh, other):
        path.write_text("partial")
    for path in (*stale, other):
        os.utime(path, (old, old))
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
    assert not any(p.exists() for p in stale)
    assert fresh.exists() and other.exists()


async def test_a_saved_preset_follows_the_umask(acetate_buffer, settle, data_dir):
    old = os.umask(0o027)
    try:
        app = ExplorerApp(acetate_buffer)
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.press("s", "ctrl+u", *"shared", "enter")
            await settle(pilot)
    finally:
        os.umask(old)
    assert (data_dir / "presets" / "shared.toml").stat().st_mode & 0o777 == 0o640


# -- 2. crashes --------------------------------------------------------------------------------

async def test_page_down_right_after_opening_the_palette(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        burst(app, "ctrl+p", "pagedown", "pagedown")
        await pilot.pause(0.5)
        await pilot.press("pagedown", "escape")
        assert app.is_running and app.screen is app.screen_stack[0]
    assert not app.return_code


async def test_two_quick_enters_in_the_palette_run_the_command_once(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("ctrl+p", *"help")
        await pilot.pause(0.5)                          # the one match is highlighted
        burst(app, "enter", "enter")
        await pilot.pause(0.5)
        assert [type(s) for s in app.screen_stack[1:]] == [HelpScreen]
    assert not app.return_code


async def test_a_doubled_key_in_a_dialog_closes_it_once(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right", "q")
        assert isinstance(app.screen, Choice)
        burst(app, "escape", "escape")
        await pilot.pause(0.3)
        assert app.is_running and app.screen is app.screen_stack[0]
        await pilot.press("q")
        burst(app, "d", "d")
        await pilot.pause(0.3)
    assert app.return_code == 0 and app.return_value == 0


def test_run_explorer_reports_a_crash_with_a_nonzero_status(monkeypatch):
    def crash(self):
        raise RuntimeError("a bug")

    real_run = ExplorerApp.run
    monkeypatch.setattr(ExplorerApp, "_start_storage", crash)
    monkeypatch.setattr(ExplorerApp, "run", lambda self, **kw: real_run(self, headless=True, **kw))
    assert run_explorer(None) == 1


async def test_a_deeply_nested_autosave_gives_one_notice(acetate_buffer, data_dir):
    data_dir.mkdir(parents=True)
    (data_dir / "session-deep.toml").write_text(NESTED)
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right")
        assert app.screen is app.screen_stack[0]
        [note] = notes(app)
        assert "cannot be read" in note and "nested" in note
        await pilot.press("q", "d")
        await pilot.pause()
    assert app.return_value == 0
    assert (data_dir / "session-deep.toml.unreadable").exists()


async def test_a_deeply_nested_user_preset_is_listed_with_its_problem(acetate_buffer, data_dir):
    (data_dir / "presets").mkdir(parents=True)
    (data_dir / "presets" / "deep.toml").write_text(NESTED)
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("o")
        assert isinstance(app.screen, PresetPicker)
        deep = app.screen.entries[str(data_dir / "presets" / "deep.toml")]
        assert "nested" in deep.problem
        await pilot.press("escape", "q")
        await pilot.pause()
    assert app.return_value == 0


async def test_a_read_only_data_folder_with_a_corrupt_autosave(acetate_buffer, data_dir, monkeypatch):
    data_dir.mkdir(parents=True)
    (data_dir / "session-old.toml").write_text("this is not a preset")
    with read_only(data_dir, monkeypatch):
        app = ExplorerApp(acetate_buffer)
        async with app.run_test(size=(80, 24)) as pilot:
            for _ in range(3):
                await pilot.press("right")
            await pilot.pause(AUTOSAVE_DELAY_S + 0.1)
            [note] = notes(app)                         # one notice for both problems
            assert "Autosave is off" in note and "cannot be read" in note and "left where it is" in note
            assert app.result.mixture == app.mixture    # the explorer works on
            await pilot.press("q", "d")
            await pilot.pause()
        assert app.return_value == 0
    assert (data_dir / "session-old.toml").read_text() == "this is not a preset"


def _data_dir_is_a_file(tmp_path, monkeypatch):
    target = tmp_path / "a-file"
    target.write_text("not a folder")
    monkeypatch.setenv("PROTOMIX_DATA_DIR", str(target))


def _data_dir_of_nobody(tmp_path, monkeypatch):
    monkeypatch.setenv("PROTOMIX_DATA_DIR", "~no-such-user-here/protomix")


def _xdg_is_a_file(tmp_path, monkeypatch):
    target = tmp_path / "a-file"
    target.write_text("not a folder")
    monkeypatch.delenv("PROTOMIX_DATA_DIR")
    monkeypatch.setenv("XDG_DATA_HOME", str(target))


def _unwritable_data_dir(tmp_path, monkeypatch):
    folder = tmp_path / "locked"
    folder.mkdir()
    monkeypatch.setenv("PROTOMIX_DATA_DIR", str(folder))
    return read_only(folder, monkeypatch)


@pytest.mark.parametrize("setup", [_data_dir_is_a_file, _data_dir_of_nobody, _xdg_is_a_file, _unwritable_data_dir])
async def test_an_unusable_data_folder_gives_one_notice_and_the_explorer_works_on(
        setup, acetate_buffer, tmp_path, monkeypatch, settle):
    guard = setup(tmp_path, monkeypatch) or contextlib.nullcontext()
    with guard:
        app = ExplorerApp(acetate_buffer)
        async with app.run_test(size=(80, 24)) as pilot:
            for _ in range(3):
                await pilot.press("right")
                await pilot.pause(AUTOSAVE_DELAY_S + 0.05)
            await settle(pilot)
            [note] = notes(app)
            assert note.startswith("Autosave is off:")
            assert app.result.mixture == app.mixture
            await pilot.press("o")                      # the preset list still opens (shipped ones)
            assert isinstance(app.screen, PresetPicker)
            await pilot.press("escape", "s", "ctrl+u", *"mine", "enter")   # saving says why it cannot
            await settle(pilot)
            assert app.is_running and len(notes(app)) <= 2
            await pilot.press("escape", "escape", "q", "d")
            await pilot.pause()
        assert app.return_code == 0 and app.return_value == 0


async def test_an_autosave_replaced_by_a_folder_gives_one_notice(acetate_buffer, settle, data_dir):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right")
        await pilot.pause(AUTOSAVE_DELAY_S + 0.1)
        await settle(pilot)
        path = app._autosave.path
        path.unlink()
        path.mkdir()                                    # someone put a folder in its place
        for _ in range(4):
            await pilot.press("right")
            await pilot.pause(AUTOSAVE_DELAY_S + 0.05)
        await settle(pilot)
        [note] = notes(app)
        assert "Autosave failed" in note and "folder" in note
        await pilot.press("q", "d")
        await pilot.pause()
    assert app.return_code == 0 and app.return_value == 0


async def test_a_folder_among_the_autosaves_is_left_alone(acetate_buffer, data_dir):
    (data_dir / "session.toml").mkdir(parents=True)
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("right")
        [note] = notes(app)
        assert "cannot be read" in note and "folder" in note and "left where it is" in note
        await pilot.press("q", "d")
        await pilot.pause()
    assert app.return_value == 0 and (data_dir / "session.toml").is_dir()


# -- 3. text from a shared file never reaches the terminal raw -----------------------------------

ESC = "\x1b]0;owned\x07\x1b[2J\x9b31m\u202e"          # OSC title, clear screen, C1 CSI, bidi override
MARKUP = "[/][@click=app.quit]x[/]"                   # read as markup, this would crash or act


def _toml(text: str) -> str:
    return '"' + "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in text) + '"'


def _hostile_text(name: str) -> str:
    evil = _toml(f"evil{ESC}{MARKUP}acid")
    return f'''format = 1
title = {_toml(f"Title{ESC}{MARKUP}")}
notes = {_toml(f"notes{ESC}")}
temperature_c = 37.0
[[ingredient]]
name = {evil}
conc = "10 mM"
[[ingredient]]
name = "NaCl"
conc = "50 mM"
[[custom]]
name = {evil}
pKa = [4.5]
charge_fully_protonated = 0
protons = 1
species = [{_toml(f"H{ESC}A{MARKUP}")}, {_toml(f"A{ESC}-")}]
'''


def _unsafe(lines) -> list[str]:
    import unicodedata

    return [line for line in lines if any(unicodedata.category(ch) in ("Cc", "Cf", "Zl", "Zp") for ch in line)]


async def test_text_from_a_shared_preset_is_shown_escaped_everywhere(data_dir, settle, screen_lines, tmp_path):
    # Every place the explorer shows a title, a name, a note or a message quoting them.
    file = tmp_path / f"shared{ESC[:6]}.toml"
    file.write_text(_hostile_text("x"), encoding="utf-8")
    (data_dir / "presets").mkdir(parents=True)
    (data_dir / "presets" / f"theirs{ESC[:9]}.toml").write_text(_hostile_text("y"), encoding="utf-8")
    (data_dir / "presets" / "broken.toml").write_text(
        'format = 1\n[[ingredient]]\nname = ' + _toml(f"no such{ESC}{MARKUP}") + '\nconc = "1 mM"\n',
        encoding="utf-8")
    mixture = chem.load_preset(file)
    app = ExplorerApp(mixture, source=file.name)
    seen: list[str] = []

    async def look(what: str) -> None:
        await settle(pilot)
        lines = screen_lines(app)
        assert not _unsafe(lines), (what, _unsafe(lines))
        assert app.is_running, what
        seen.append(what)

    async with app.run_test(size=(120, 40), notifications=True) as pilot:
        await look("main screen")
        assert "\\x1b" in "\n".join(screen_lines(app))  # the escapes are shown, not acted on
        for _ in app.kinds:                              # every plot: legends, titles, axis labels
            await pilot.press("g")
            await look(f"plot {app.plot_kind}")
        await pilot.press("w")
        await look("notice details")
        await pilot.press("escape", "o")
        await look("preset picker")
        await pilot.press(*"broken", "enter")
        await look("picker: a broken preset")
        await pilot.press("escape")
        await pilot.press("n", *"evil")
        await look("finder")
        await pilot.press("escape", "s")
        await look("save dialog")
        await pilot.press("escape", "v")
        await look("titration setup")
        await pilot.press("escape")
        app.plot_kind = "sweep"
        await pilot.press("v")
        await look("sweep setup (what varies: the flask's names)")
        await pilot.press("escape", "b")
        await look("recipe form")
        await pilot.press("escape", "enter", *"5 kg")
        await look("amount error")
        await pilot.press("escape")
        app.notify(f"a message quoting {ESC}{MARKUP}")   # every toast goes through the one helper
        await look("toast")
        assert any("\\x1b" in n.message for n in app._notifications)
    assert len(seen) >= 17


async def test_the_restore_offer_shows_a_hostile_title_escaped(orphan, acetate_buffer, screen_lines, tmp_path):
    file = tmp_path / "h.toml"
    file.write_text(_hostile_text("x"), encoding="utf-8")
    orphan(chem.load_preset(file))
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, Choice)
        assert not _unsafe(screen_lines(app))
        assert "[@click=app.quit]" in "\n".join(screen_lines(app))
        await pilot.press("escape")


# -- 4. the front end asks chem -----------------------------------------------------------------------

def test_the_default_titrant_follows_neutral_water_at_the_working_temperature(library):
    from tui.widgets.curve_kinds import default_titration

    # 0.1 uM NaOH at 37 °C: pH about 6.95, below 7 but above neutral water there (pKw/2 = 6.81): basic.
    warm = chem.Mixture((chem.Ingredient(library.reagent("NaOH"), 1e-7),), temperature_c=37.0)
    result = chem.solve(warm)
    assert 6.81 < result.pH < 7.0
    assert default_titration(result).titrant_name == "HCl"
    acidic = chem.solve(chem.Mixture((chem.Ingredient(library.reagent("HCl"), 2e-8),)))   # pH 6.9 at 25 °C
    assert acidic.pH < 7.0 and default_titration(acidic).titrant_name == "NaOH"


def test_forms_read_temperatures_as_the_line_commands_do():
    from chem.units import parse_temperature
    from tui.widgets.curve_kinds import read_celsius

    assert read_celsius("37 ℃") == parse_temperature("37 ℃") == 37.0
    for bad in ("37 K", "101 °C"):
        with pytest.raises(chem.UnitError) as form:
            read_celsius(bad, "temperature")
        with pytest.raises(chem.UnitError) as line:
            parse_temperature(bad, "temperature")
        assert str(form.value) == str(line.value)


# -- 5. small things a user sees ----------------------------------------------------------------------

async def test_a_terminal_too_small_says_so_and_the_panels_come_back(acetate_buffer, screen_lines):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(40, 12)) as pilot:
        await pilot.pause()
        shown = "\n".join(screen_lines(app))
        assert "40×12" in shown and "Enlarge the window" in shown
        assert not app.query_one("#flask").display or not app.query_one("#flask").region.width
        await pilot.resize_terminal(80, 24)
        await pilot.pause()
        flask = app.query_one("#flask")
        assert flask.region.width > 20 and "Enlarge" not in "\n".join(screen_lines(app))
        assert app.focused is flask
        await pilot.resize_terminal(40, 12)
        await pilot.press("q")
        await pilot.pause()
    assert app.return_value == 0


@pytest.mark.parametrize("width", [60, 66, 72, 80])
async def test_nothing_shows_past_the_palette_key(acetate_buffer, screen_lines, width):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(width, 24)) as pilot:
        await pilot.pause(0.3)
        assert screen_lines(app)[-1].rstrip().endswith("^p palette")


def test_the_demo_notes_name_the_keys_that_exist():
    from tui.app import COMMANDS

    notes = chem.demo_mixture().notes
    keys = {key for c in COMMANDS for key in c.key.split(",")}
    assert "+/-" not in notes
    for key in ("t", "T", "m"):
        assert f"{key} " in notes or f"({key})" in notes
        assert key in keys


def test_species_columns_never_run_together(library):
    import re

    from tui.widgets.species_table import NAME_WIDTH_MAX, species_rows

    # Basic phosphate: H3PO4 near 1e-13 M, so its C (…e-13) sits right before a log C of -12.x.
    eq = chem.solve(chem.loads_preset('''format = 1
[[ingredient]]
name = "Na3PO4"
conc = "10 mM"
[[ingredient]]
name = "compound 7 hydrochloride, batch 2024-11"
conc = "1 mM"
[[custom]]
name = "compound 7 hydrochloride, batch 2024-11"
pKa = [8.4]
charge_fully_protonated = 1
protons = 1
counter_ions = { "Cl-" = 1 }
'''))
    heading, rows = species_rows(eq, eq)
    assert any(float(sp.log_c) < -10 for sp in eq.species)
    for (numbers, _system), sp in zip(rows, eq.species):
        assert not re.search(r"e[-+]\d+-\d", numbers), numbers      # "5.45e-11-10.26"
        assert f"{sp.conc:.2e}" in numbers                          # in view, even after a long name
        assert numbers.index(f"{sp.conc:.2e}") <= NAME_WIDTH_MAX + 1 + 8


async def test_a_session_without_edits_leaves_nothing_to_offer(acetate_buffer, autosaved):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:   # ends without quitting, but nothing was changed
        await pilot.pause()
    assert autosaved() == []
