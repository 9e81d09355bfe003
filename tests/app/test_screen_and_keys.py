"""What is on screen: the four panels at 80x24 and 120x40, plots, notices, help and the command palette."""

from __future__ import annotations

import gc
import re

import pytest

import chem
from tui.app import COMMANDS, ExplorerApp, run_explorer
from tui.formula import pretty
from tui.messages import Solved
from tui.screens.help_screen import HELP_FILE, HelpScreen
from tui.screens.notice_details import NoticeDetails
from tui.widgets.flask_list import FlaskList
from tui.widgets.notice_bar import NoticeBar
from tui.widgets.plot_area import PlotArea
from tui.widgets.plot_kinds import MIN_HEIGHT, MIN_WIDTH
from tui.widgets.species_table import SpeciesTable


def _inside(widget, app) -> bool:
    r = widget.region
    return r.width > 0 and r.height > 0 and r.right <= app.size.width and r.bottom <= app.size.height


@pytest.mark.parametrize("size", [(80, 24), (120, 40)])
async def test_nothing_essential_is_cut_off(size, settle, text_of, screen_lines):
    app = ExplorerApp(chem.demo_mixture())
    async with app.run_test(size=size) as pilot:
        await settle(pilot)
        flask, chart = app.query_one(FlaskList), app.query_one(PlotArea)
        for widget in (flask, app.query_one("#readout"), app.query_one(SpeciesTable), chart,
                       app.query_one(NoticeBar), app.query_one("Footer")):
            assert _inside(widget, app), widget
        shown = text_of(flask)
        for ingredient in app.mixture.ingredients:        # every ingredient with its amount
            assert re.search(re.escape(ingredient.reagent.name) + r"\s+" + re.escape(ingredient.label), shown)
        readout = text_of(app.query_one("#readout"))
        for needed in (f"pH  {app.result.pH:.3f}", "pOH", "°C", "I ", app.mixture.activity, "converged", "warning"):
            assert needed in readout
        head = text_of(app.query_one("#species-head"))
        for column in ("species", "C / M", "log C", "α", "γ"):
            assert column in head
        assert chart.content_size.width >= MIN_WIDTH and chart.content_size.height >= MIN_HEIGHT
        assert "pH" in text_of(chart) and "fraction" in text_of(chart)
        screen = "\n".join(screen_lines(app))
        for key in ("Help", "Add", "Pin", "Undo", "Save"):
            assert key in screen


async def test_pinned_deltas_fit_at_80x24(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("p", "right")
        await settle(pilot)
        assert "Δlog C" in text_of(app.query_one("#species-head"))
        assert "ΔpH" in text_of(app.query_one("#readout"))


async def test_the_layout_reflows_when_the_terminal_is_resized(settle, text_of):
    app = ExplorerApp(chem.demo_mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        wide = app.query_one(PlotArea).content_size
        await pilot.resize_terminal(80, 24)
        await settle(pilot)
        narrow = app.query_one(PlotArea).content_size
        assert narrow.width < wide.width and narrow.height < wide.height
        assert len(app.query_one(PlotArea).image.strips) == narrow.height
        assert all(s.cell_length == narrow.width for s in app.query_one(PlotArea).image.strips)
        assert _inside(app.query_one("Footer"), app)


async def test_g_switches_the_plot_and_a_limits_it_to_the_selected_system(settle, text_of):
    app = ExplorerApp(chem.demo_mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        chart = app.query_one(PlotArea)
        first = app.mixture.ingredients[0].reagent.system.name
        assert chart.border_title == f"fraction vs pH · {first}"
        await pilot.press("g")
        await settle(pilot)
        assert chart.border_title.startswith("log C vs pH")
        assert "log C" in chart.image.plain and ("H+" in chart.image.plain or pretty("H+") in chart.image.plain)
        await pilot.press("a")
        await settle(pilot)
        assert chart.border_title == "log C vs pH · all systems"
        for system, _ in app.mixture.systems():
            assert all(name in chart.image.plain or pretty(name) in chart.image.plain for name in system.species[:1])
        kinds, titles, texts = [], [], []
        for _ in range(4):                              # the curves of the whole mixture follow
            await pilot.press("g")
            await settle(pilot)
            kinds.append(app.plot_kind)
            titles.append(chart.border_title)
            texts.append(chart.image.plain)
        assert kinds == ["titration", "capacity", "sweep", "dilution"]
        assert titles[1] == "buffer capacity vs pH" and "·" not in "".join(titles)
        assert "titrant added (mL)" in texts[0] and "dilution" in texts[3]
        await pilot.press("g")                          # the forms of one system, pH held
        await settle(pilot)
        assert app.plot_kind == "forms" and chart.border_title.startswith(f"forms of {first} vs pH")
        await pilot.press("g")                          # no solid can form in the demo: back to the start
        await settle(pilot)
        assert chart.border_title == "fraction vs pH · all systems"


async def test_the_plot_follows_the_selected_ingredient(settle):
    app = ExplorerApp(chem.demo_mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("down")
        await settle(pilot)
        second = app.mixture.ingredients[1].reagent.system.name
        assert app.query_one(PlotArea).border_title == f"fraction vs pH · {second}"


async def test_warnings_are_in_view_and_explained_on_demand(library, settle, text_of):
    salty = chem.Mixture((chem.Ingredient(library.reagent("sodium chloride"), 0.2, "200 mM"),
                          chem.Ingredient(library.reagent("acetic acid"), 0.01, "10 mM")), activity="ideal")
    app = ExplorerApp(salty)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        warnings = app.result.warnings
        assert warnings, "the ideal model at 0.2 M should warn (chem's own rule)"
        bar = app.query_one(NoticeBar)
        assert bar.has_class("-warning")
        assert "warning" in text_of(bar) and "w: details" in text_of(bar)
        await pilot.press("w")
        assert isinstance(app.screen, NoticeDetails)
        details = " ".join(str(s.render()) for s in app.screen.query(".notice"))
        for notice in warnings:
            assert notice.message in details and notice.code in details
        await pilot.press("escape")
        assert app.screen is app.screen_stack[0]


async def test_cautions_take_the_bar_over_warnings(library, settle):
    acid = chem.Mixture((chem.Ingredient(library.reagent("hydrochloric acid"), 0.5, "0.5 M"),))
    app = ExplorerApp(acid)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.result.cautions
        assert app.query_one(NoticeBar).has_class("-caution")


async def test_a_stale_result_is_never_shown(acetate_buffer, library, settle):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        current = app.result
        other = chem.solve(chem.Mixture((chem.Ingredient(library.reagent("sodium hydroxide"), 0.1),)))
        app.post_message(Solved(app._generation - 1, other))
        await pilot.pause()
        assert app.result is current


async def test_help_lists_every_key_and_closes(settle):
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("f1")
        assert isinstance(app.screen, HelpScreen)
        await pilot.press("escape")
        assert app.screen is app.screen_stack[0]


def _key_names(key: str) -> list[str]:
    names = {"question_mark": "?", "plus": "+", "minus": "-", "equals_sign": "=", "delete": "delete"}
    return [names.get(k, k) for k in key.split(",")]


def test_every_key_binding_is_in_the_help_text():
    text = HELP_FILE.read_text(encoding="utf-8").replace("F1", "f1")
    bindings = [b for c in COMMANDS for b in _key_names(c.key) if c.key]
    bindings += [b.key for b in FlaskList.BINDINGS if b.key not in ("pageup", "pagedown")]
    for key in bindings:
        for part in key.split(","):
            shown = {"right": "→", "left": "←", "shift+right": "shift+→", "shift+left": "shift+←",
                     "up": "↑", "down": "↓", "equals_sign": "="}.get(part, part)
            if shown == "=":
                continue                                   # '=' is '+' without shift, a convenience
            assert f"`{shown}`" in text, f"key {part!r} is not in help.md"


async def test_every_action_is_in_the_command_palette():
    app = ExplorerApp(chem.Mixture())
    async with app.run_test(size=(120, 40)):
        titles = {c.title for c in app.get_system_commands(app.screen)}
        helps = " ".join(c.help for c in app.get_system_commands(app.screen))
    for command in COMMANDS:
        assert command.label in titles or command.action == "quit"
        assert command.help in helps


async def test_an_action_runs_from_the_command_palette(acetate_buffer):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("ctrl+p", *"Warmer", "enter")
        await pilot.pause()
        assert app.mixture.temperature_c == 26.0


def test_a_bad_preset_path_is_a_one_line_error(tmp_path, capsys):
    assert run_explorer(str(tmp_path / "missing.toml")) == 2
    err = capsys.readouterr().err
    assert err.startswith("protomix: error: ") and err.count("\n") == 1 and "missing.toml" in err


def test_a_malformed_preset_is_a_one_line_error(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text('format = 1\n[[ingredient]]\nname = "acetic acid"\nconc = "5 kg"\n', encoding="utf-8")
    assert run_explorer(str(bad)) == 2
    err = capsys.readouterr().err
    assert "kg" in err and err.count("\n") == 1


async def test_switching_to_the_light_theme_redraws_the_plot_in_light_theme_colours(settle):
    from tui.app import DAY
    from tui.widgets.plot_kinds import DARK_SERIES, LIGHT_SERIES

    def series_colours(app):
        colours = set()
        for strip in app.query_one(PlotArea).image.strips:
            for segment in strip:
                if segment.style and segment.style.color and segment.style.color.triplet:
                    colours.add(tuple(segment.style.color.triplet))
        return colours

    app = ExplorerApp(chem.demo_mixture())
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        assert series_colours(app) & set(DARK_SERIES)
        app.theme = DAY.name
        await settle(pilot)
        assert series_colours(app) & set(LIGHT_SERIES)
        assert not series_colours(app) & set(DARK_SERIES)


async def test_a_failure_in_the_background_is_reported_not_swallowed(acetate_buffer, settle, monkeypatch):
    import tui.app

    def broken(kind, result, request):
        raise RuntimeError("plot exploded")

    monkeypatch.setattr(tui.app, "draw_kind", broken)
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        messages = [n.message for n in app._notifications]
        assert any("solve and plot failed" in m and "plot exploded" in m for m in messages)
        assert app.result is not None                   # the solve itself still reached the readout


async def test_the_garbage_collector_is_back_on_once_the_first_frame_is_up(acetate_buffer, settle):
    # The entry point switches the collector off for the start-up (tui.cli.main); the explorer
    # must switch it back on, or a long session would never free reference cycles.
    gc.disable()
    try:
        app = ExplorerApp(acetate_buffer)
        async with app.run_test(size=(80, 24)) as pilot:
            await settle(pilot)
            await pilot.pause(0.1)
            assert gc.isenabled()
            assert gc.get_freeze_count() > 0             # what start-up built is kept out of the sweeps
    finally:
        gc.enable()
        gc.unfreeze()
