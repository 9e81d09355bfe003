"""Full speciation in the explorer: species by system, the readout's free-ion levels and water numbers,
the solids and gases panel, precipitation and gas switches, driven by keys."""

from __future__ import annotations

import asyncio
import math
from pathlib import Path

import pytest

import chem
from chem.limits import AIR_GAS, AIR_PRESSURE
from chem.units import format_pressure
from tui.app import ExplorerApp
from tui.formula import pretty, shown_name
from tui.screens.gas_picker import GasPicker
from tui.widgets.phase_panel import PhasePanel, si_bar
from tui.widgets.plot_area import PlotArea
from tui.widgets.plot_kinds import MIN_HEIGHT
from tui.widgets.readout import Readout
from tui.widgets.species_table import SpeciesTable, share_text

PRESETS = Path(__file__).resolve().parents[2] / "presets"


def preset(name: str) -> chem.Mixture:
    return chem.load_preset(PRESETS / f"{name}.toml")


def _inside(widget, app) -> bool:
    r = widget.region
    return r.width > 0 and r.height > 0 and r.right <= app.size.width and r.bottom <= app.size.height


# -- names ---------------------------------------------------------------------------------------

@pytest.mark.parametrize("ascii_name, shown", [
    ("HPO4^2-", "HPO₄²⁻"), ("CaHCO3+", "CaHCO₃⁺"), ("Cu(NH3)4^2+", "Cu(NH₃)₄²⁺"), ("Ca^2+", "Ca²⁺"),
    ("Fe2(OH)2^4+", "Fe₂(OH)₂⁴⁺"), ("(C2H5)3NH+", "(C₂H₅)₃NH⁺"), ("H2EDTA^2-", "H₂EDTA²⁻"), ("OH-", "OH⁻"),
    ("CaMg(CO3)2", "CaMg(CO₃)₂"), ("HEPES-", "HEPES⁻"),
    # not formulas: left as written
    ("compound 12 base (s)", "compound 12 base (s)"), ("amorphous Al(OH)3", "amorphous Al(OH)3"),
    ("2-aminopyridine", "2-aminopyridine"),
])
def test_species_names_are_written_as_chemists_write_them(ascii_name, shown):
    assert pretty(ascii_name) == shown
    assert shown_name(ascii_name, utf8=False) == ascii_name


def test_a_name_from_a_shared_preset_stays_escaped():
    assert pretty("H\x1b]2;x\x07A+") == "H\\x1b]2;x\\x07A+"


# -- the species panel -----------------------------------------------------------------------------

async def test_l_lists_species_by_system_with_each_forms_share(settle):
    app = ExplorerApp(preset("plating-rinse-copper"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        table = app.query_one(SpeciesTable)
        assert "γ" in table.header and not table.by_system
        await pilot.press("l")
        assert table.by_system and table.border_title == "Species by system"
        assert "share" in table.header and "γ" not in table.header
        lines = table.lines
        eq = app.result
        copper = eq.system("copper")
        start = lines.index(next(line for line in lines if line.startswith("copper ")))
        for offset, (name, fraction) in enumerate(copper.distribution, start=1):
            row = lines[start + offset]
            assert row.startswith("  " + shown_name(name, table.utf8)), row
            assert share_text(fraction) in row
            assert f"{eq.get(name).conc:.2e}" in row
        # a complex is listed under every system it holds: CuSO4 under copper and sulfate
        cuso4 = [i for i, line in enumerate(lines) if line.startswith("  " + shown_name("CuSO4", table.utf8) + " ")]
        assert len(cuso4) == 2
        await pilot.press("l")
        assert not table.by_system and "γ" in table.header


async def test_the_flat_list_names_the_systems_a_complex_holds(settle):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        table = app.query_one(SpeciesTable)
        row = next(line for line in table.lines if line.startswith(shown_name("CaHCO3+", table.utf8) + " "))
        assert row.rstrip().endswith("calcium+carbonate")


def test_shares_fit_their_column():
    for fraction in (1.0, 0.921, 0.045, 1.2e-4, 3e-7, 2e-19, 0.0):
        assert len(share_text(fraction)) <= 6, share_text(fraction)
    assert share_text(0.921) == "92.1%" and share_text(1.2e-4) == "0.012%"


async def test_under_lang_c_names_are_ascii(settle, screen_lines, monkeypatch):
    monkeypatch.delenv("LC_ALL", raising=False)
    monkeypatch.delenv("LC_CTYPE", raising=False)
    monkeypatch.setenv("LANG", "C")
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("l")
        shown = "\n".join(screen_lines(app))
        assert "CaHCO3+" in shown and "Ca^2+" in shown and "mg/L CaCO3" in shown
        assert not any(ch in shown for ch in "₀₁₂₃₄²³⁺⁻")
        await pilot.press("S")
        shown = "\n".join(screen_lines(app))
        assert "CO2" in shown and "█" not in shown and "420 uatm" in shown


# -- the readout -----------------------------------------------------------------------------------

@pytest.mark.parametrize("size", [(80, 24), (120, 40)])
async def test_the_readout_shows_free_ion_levels_water_numbers_and_supersaturation(size, settle, text_of):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=size) as pilot:
        await settle(pilot)
        eq = app.result
        readout = text_of(app.query_one(Readout))
        assert f"pH  {eq.pH:.3f}" in readout
        for system, label in (("calcium", "pCa"), ("magnesium", "pMg")):
            assert f"{label} {eq.free_level(system):.2f}" in readout
        assert f"alk. {eq.alkalinity_mg_l:.1f}" in readout
        assert f"hardness {eq.hardness_mg_l:.0f} mg/L CaCO₃" in readout
        assert len(eq.supersaturated) == 3                      # calcite, aragonite, dolomite at 45 °C
        assert "3 supersaturated" in readout
        assert "precip. off" in readout and "CO₂ held 420 µatm" in readout
        if size[0] >= 110:                                      # flowed to the panel's width from the start
            assert "3 supersaturated  precip. off  CO₂ held 420 µatm" in readout
        chart = app.query_one(PlotArea)                         # the band grew; the chart still plots
        assert chart.content_size.height >= MIN_HEIGHT and _inside(app.query_one("Footer"), app)


async def test_a_mixture_without_metals_keeps_the_readout_as_it_was(acetate_buffer, settle, text_of):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        readout = text_of(app.query_one(Readout))
        assert "supersaturated" not in readout and "alk." not in readout and " pC" not in readout
        assert app.query_one("#upper").size.height == 7


async def test_pinning_compares_free_ion_levels_and_saturation_indices(settle, text_of):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        before = app.result
        await pilot.press("p", "right", "right", "right")        # calcium chloride x1.95: more free calcium
        await settle(pilot)
        after = app.result
        d_ca = after.free_level("calcium") - before.free_level("calcium")
        assert d_ca < -0.1
        assert f"pCa {after.free_level('calcium'):.2f} Δ{d_ca:+.2f}" in text_of(app.query_one(Readout))
        await pilot.press("S")
        panel = app.query_one(PhasePanel)
        assert "ΔSI" in "\n".join(panel.lines)
        calcite = next(line for line in panel.lines if " calcite " in line)
        d_si = after.solid("calcite").saturation_index - before.solid("calcite").saturation_index
        assert d_si > 0.1 and calcite.rstrip().endswith(f"{d_si:+.2f}")


# -- solids ------------------------------------------------------------------------------------------

def test_the_saturation_bar_grows_from_zero_to_the_side_of_its_sign():
    left, centre, right = si_bar(1.0, 9, utf8=True)                 # 4 cells a side, 2 SI a side
    assert centre == "│" and left == "    " and right == "██  "
    left, centre, right = si_bar(-0.25, 9, utf8=True)
    assert left == "   ▐" and right == "    "
    left, _, right = si_bar(-8.5, 9, utf8=True)
    assert left == "◂███"                                           # off the scale: full, with an arrow
    assert "".join(si_bar(0.39, 9, utf8=False)) == "    |=   "


async def test_the_solids_view_lists_every_candidate_with_si_amount_and_may_form(settle, screen_lines, text_of):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("S")
        panel = app.query_one(PhasePanel)
        assert panel.display and panel.has_focus and not app.query_one(SpeciesTable).display
        eq = app.result
        lines = panel.lines
        assert lines[0] == "Solids · precipitation off"
        for solid in eq.solids:
            row = next(line for line in lines if line.startswith(f"[ ] {solid.name} "))
            assert f"{solid.saturation_index:+.2f}" in row
            assert row.rstrip().endswith("—")                       # may not form: no amount
        calcite = next(line for line in lines if line.startswith("[ ] calcite "))
        mark = calcite.index("│")
        assert calcite[mark + 1] in "█▌" and calcite[mark - 1] == " "   # SI > 0: right of the mark
        gypsum = next(line for line in lines if line.startswith("[ ] gypsum "))
        assert gypsum[gypsum.index("│") - 1] == "█"
        assert "Solids and gases" in text_of(panel)
        await pilot.press("S")
        assert not panel.display and app.query_one(SpeciesTable).display


async def test_precipitation_is_one_undoable_edit(settle):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("S", "P")
        await settle(pilot)
        assert app.mixture.precipitate is True and app.result.mixture == app.mixture
        formed = [so for so in app.result.solids if so.amount > 0]
        assert formed and not app.result.supersaturated
        panel = app.query_one(PhasePanel)
        assert panel.lines[0] == "Solids · precipitation all"
        row = next(line for line in panel.lines if line.startswith(f"[x] {formed[0].name} "))
        assert shown_name(chem.format_molar(formed[0].amount, 3), True).replace("uM", "µM") in row
        await pilot.press("u")
        await settle(pilot)
        assert app.mixture.precipitate is False and app.result.solids[0].amount == 0
        await pilot.press("r")
        await settle(pilot)
        assert app.mixture.precipitate is True


async def test_space_chooses_the_solids_that_may_form_and_p_cycles_back_to_them(settle):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("S")
        panel = app.query_one(PhasePanel)
        assert panel.cursor_row.key == app.result.solids[0].name == "calcite"
        await pilot.press("space")
        await settle(pilot)
        assert app.mixture.precipitate == ("calcite",)
        assert app.result.solid("calcite").amount > 0 and app.result.solid("calcite").saturation_index == \
            pytest.approx(0, abs=1e-6)
        assert app.result.solid("dolomite").amount == 0
        assert panel.lines[0] == "Solids · precipitation 1 chosen"
        assert any(line.startswith("[x] calcite ") for line in panel.lines)
        await pilot.press("down", "down", "down", "space")     # dolomite too
        await settle(pilot)
        assert app.mixture.precipitate == ("calcite", "dolomite")
        await pilot.press("P")                                  # off
        assert app.mixture.precipitate is False
        await pilot.press("P")                                  # all
        assert app.mixture.precipitate is True
        await pilot.press("P")                                  # the chosen ones again
        assert app.mixture.precipitate == ("calcite", "dolomite")
        await pilot.press("u", "u", "u")
        assert app.mixture.precipitate == ("calcite", "dolomite")
        await pilot.press("u", "u")
        assert app.mixture.precipitate is False


# -- gases -------------------------------------------------------------------------------------------

async def test_a_opens_the_flask_to_air_and_closes_it(settle, library):
    closed = preset("well-water-hardness").without_gas(AIR_GAS)
    app = ExplorerApp(closed)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        before = app.result
        await pilot.press("A")
        await settle(pilot)
        [held] = app.mixture.gases
        assert held.gas.name == AIR_GAS and held.pressure_atm == chem.parse_pressure(AIR_PRESSURE)
        assert app.result.gas(AIR_GAS).fixed and app.result.pH != before.pH
        assert app.result.gas(AIR_GAS).pressure_atm == pytest.approx(held.pressure_atm)
        await pilot.press("A")
        await settle(pilot)
        assert app.mixture.gases == () and app.result.pH == pytest.approx(before.pH, abs=1e-9)
        await pilot.press("u")
        assert app.mixture.gases == (held,)


async def test_any_gas_is_held_at_a_typed_pressure_and_released(acetate_buffer, settle):
    app = ExplorerApp(acetate_buffer.with_ingredient(
        chem.Ingredient(chem.load_library().reagent("sodium bicarbonate"), 0.024, "24 mM")))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("G")
        assert isinstance(app.screen, GasPicker)
        await pilot.press(*"CO2", "enter")
        await pilot.pause()
        await pilot.press("ctrl+u", *"5 kg", "enter")           # a bad unit: said, nothing changes
        assert isinstance(app.screen, GasPicker)
        assert "unknown pressure unit" in str(app.screen.query_one("#finder-error").render())
        await pilot.press("ctrl+u", *"5 %", "enter")
        await settle(pilot)
        assert app.screen is app.screen_stack[0]
        [held] = app.mixture.gases
        assert held.gas.name == "CO2" and held.pressure_atm == pytest.approx(0.05) and held.label == "5 %"
        assert app.result.gas("CO2").pressure_atm == pytest.approx(0.05)
        incubator = app.result.pH
        await pilot.press("G", *"CO2", "enter")
        await pilot.pause()
        await pilot.press("ctrl+u", "enter")                    # empty: release it
        await settle(pilot)
        assert app.mixture.gases == () and app.result.pH != incubator


async def test_the_panel_holds_and_releases_gases_and_shows_toxic_headspace_with_its_caution(settle):
    app = ExplorerApp(preset("plating-rinse-copper"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        eq = app.result
        ammonia = eq.gas("NH3")
        assert ammonia.exposure_limit_ppm is not None and not ammonia.fixed
        await pilot.press("S")
        panel = app.query_one(PhasePanel)
        row = next(line for line in panel.lines if line.startswith("[ ] NH₃"))
        assert format_pressure(ammonia.pressure_atm) in row
        assert f"over limit {ammonia.exposure_limit_ppm:g} ppm" in row
        caution = next(c for c in eq.cautions if c.code == "toxic-gas")
        text = " ".join(panel.lines)
        assert " ".join(caution.message.split()[:8]) in text
        panel.select("NH3")
        await pilot.press("enter")                              # ask for its pressure
        assert isinstance(app.screen, GasPicker)
        await pilot.press("ctrl+u", *"10 ppm", "enter")
        await settle(pilot)
        assert [f.gas.name for f in app.mixture.gases] == ["NH3"]
        assert any(line.startswith("[x] NH₃") and "held" in line for line in panel.lines)
        await pilot.press("space")                              # release
        await settle(pilot)
        assert app.mixture.gases == ()
        await pilot.press("space")                              # hold again at the pressure typed last
        await settle(pilot)
        assert app.mixture.gases[0].label == "10 ppm"


# -- palette, files ------------------------------------------------------------------------------------

@pytest.mark.parametrize("words, check", [
    ("solids", lambda app: app.solids_shown),
    ("precipitation", lambda app: app.mixture.precipitate is True),
])
async def test_the_palette_finds_solids_and_precipitation(words, check, settle):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("ctrl+p", *words)
        await pilot.pause(0.5)
        await pilot.press("enter")
        await pilot.pause(0.3)
        assert app.screen is app.screen_stack[0] and check(app)


async def test_precipitation_and_gases_are_autosaved_and_saved_as_presets(settle, autosaved, data_dir):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("S", "space", "A", "G", *"H2S", "enter")
        await pilot.pause()
        await pilot.press("ctrl+u", *"2 ppm", "enter")
        await settle(pilot)
        edited = app.mixture
        assert edited.precipitate == ("calcite",) and [f.gas.name for f in edited.gases] == ["H2S"]
        assert app.flush_autosave()
        [saved] = autosaved()
        assert saved == edited
        assert "H₂S" not in chem.dumps_preset(edited)           # files keep ASCII names
        await pilot.press("s")
        await pilot.press("ctrl+u", *"tower edited", "enter")
        await settle(pilot)
        await pilot.pause(0.3)
    [file] = (data_dir / "presets").glob("*.toml")
    assert chem.load_preset(file) == edited


async def test_the_layout_holds_at_80x24_with_every_new_view(settle, screen_lines):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        for keys in ((), ("l",), ("S",), ("p", "t"), ("S",)):
            await pilot.press(*keys)
            await settle(pilot)
            for widget in (app.query_one("#flask"), app.query_one(Readout), app.query_one(PlotArea),
                           app.query_one("Footer")):
                assert _inside(widget, app), (keys, widget)
            shown = app.query_one(PhasePanel) if app.solids_shown else app.query_one(SpeciesTable)
            assert _inside(shown, app)
            assert app.query_one(PlotArea).content_size.height >= MIN_HEIGHT
            assert not any("…" in line for line in screen_lines(app)[2:10]), "the readout lost text"


def test_the_bar_scale_is_symmetric():
    for width in range(7, 30, 2):
        left, centre, right = si_bar(0.0, width, utf8=True)
        assert len(left) == len(right) == (width - 1) // 2 and set(left + right) == {" "}
        assert not math.isnan(len(centre))


# -- typing first --------------------------------------------------------------------------------------

async def test_a_result_arriving_while_an_entry_has_the_focus_waits_a_frame(acetate_buffer, settle, library):
    from tui.app import TYPING_DEFER_S
    from tui.messages import Solved

    app = ExplorerApp(acetate_buffer)
    other = chem.solve(acetate_buffer.with_temperature(30.0))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        before = app.result
        await pilot.press("enter")                      # the amount editor has the focus
        late = Solved(app._generation, other)
        app.post_message(late)
        for _ in range(100):                            # until the app has handled it (well within 1/60 s)
            await asyncio.sleep(0.0005)
            if getattr(late, "_deferred", False):
                break
        assert late._deferred and app.result is before  # the next keystroke's echo goes first
        await pilot.pause(TYPING_DEFER_S * 4)
        assert app.result is other
        await pilot.press("escape")                     # no entry has the focus: shown at once
        now = Solved(app._generation, before)
        app.post_message(now)
        await pilot.pause()
        assert app.result is before and not getattr(now, "_deferred", False)


# -- text from a shared preset ------------------------------------------------------------------------

ESC = "\x1b]0;owned\x07\x1b[2J\x9b31m\u202e"          # OSC title, clear screen, C1 CSI, bidi override
MARKUP = "[/][@click=app.quit]x[/]"                   # read as markup, this would crash or act


def _toml(text: str) -> str:
    return '"' + "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in text) + '"'


def _hostile_speciation() -> chem.Mixture:
    """A shared preset whose metal, ligand, complex, solid and gas names carry escapes and markup."""
    metal = f"M{ESC}{MARKUP}^2+"
    lig = f"L{ESC}-"
    text = f'''format = 1
    title = "hostile speciation"
    [[ingredient]]
    name = {_toml("metal salt" + ESC[:5])}
    conc = "1 mM"
    [[ingredient]]
    name = "ligand salt"
    conc = "2 mM"
    [[custom]]
    name = {_toml("metal salt" + ESC[:5])}
    pKa = []
    species = [{_toml(metal)}]
    charge_fully_protonated = 2
    protons = 0
    counter_ions = {{ "Cl-" = 2 }}
    [[custom]]
    name = "ligand salt"
    pKa = [4.0]
    species = [{_toml("HL" + ESC)}, {_toml(lig)}]
    charge_fully_protonated = 0
    protons = 0
    counter_ions = {{ "Na+" = 1 }}
    [[custom_complex]]
    name = {_toml(f"ML{ESC}+")}
    reaction = {{ {_toml(metal)} = 1, {_toml(lig)} = 1 }}
    log_K = 3.0
    [[custom_solid]]
    name = {_toml(f"solid{ESC}{MARKUP}")}
    reaction = {{ {_toml(metal)} = 1, "OH-" = 2 }}
    log_K = -12.0
    [[custom_gas]]
    name = {_toml(f"gas{ESC}")}
    reaction = {{ {_toml("HL" + ESC)} = 1 }}
    log_K = 1.0
    '''
    return chem.loads_preset(text)


async def test_names_from_a_shared_preset_are_escaped_in_every_new_view(settle, screen_lines):
    import unicodedata

    app = ExplorerApp(_hostile_speciation())
    async with app.run_test(size=(120, 40)) as pilot:
        for keys in ((), ("l",), ("S",), ("P",), ("G",), ("escape", "p", "t")):
            await pilot.press(*keys)
            await settle(pilot)
            lines = screen_lines(app)
            assert not [line for line in lines if any(unicodedata.category(ch) in ("Cc", "Cf") for ch in line)]
            assert app.is_running, keys
        text = "\n".join(screen_lines(app))
        assert "\\x1b]0;owned" in text                        # shown, escaped
