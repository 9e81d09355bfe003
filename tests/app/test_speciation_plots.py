"""The explorer's full-speciation plots and the metal-buffer designer, driven by keys.

Forms of a system, solubility and saturation indices with the pH held; log C with complexes;
a titration that follows a free-metal level; sweeps of a gas pressure and of saturation
indices; the recipe form's metal buffer. What the plots show is compared with what chem
computes for the same input; the two stoichiometric checks name their basis.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

import chem
from tests.app.test_curve_screens import fill, wait_until
from tui.app import ExplorerApp
from tui.formula import pretty
from tui.screens.held_setup import HeldSetup
from tui.screens.recipe_form import RecipeForm
from tui.screens.sweep_setup import SweepSetup
from tui.screens.titration_setup import TitrationSetup
from tui.widgets.plot_area import PlotArea


def named(name: str, shown: str) -> bool:
    """Whether a legend shows ``name``: as chemists write it under UTF-8, as typed otherwise."""
    return pretty(name) in shown or name in shown


PRESETS = Path(__file__).resolve().parents[2] / "presets"


def preset(name: str) -> chem.Mixture:
    return chem.load_preset(PRESETS / f"{name}.toml")


def chart(app) -> tuple[str, str]:
    """(title in the chart's border, the plot as plain text)."""
    area = app.query_one(PlotArea)
    return str(area.border_title), area.image.plain


async def show(app, pilot, settle, kind: str) -> None:
    """Press g until the chart shows ``kind`` (at most once round the cycle)."""
    for _ in range(len(app.kinds)):
        if app.plot_kind == kind:
            break
        await pilot.press("g")
    await settle(pilot)
    assert app.plot_kind == kind


# --------------------------------------------------------------------------
# pH held: forms of a system, solubility, saturation
# --------------------------------------------------------------------------

async def test_forms_of_copper_show_its_ammine_complexes_as_shares_of_its_total(settle):
    mix = preset("plating-rinse-copper")                # cursor on copper sulfate: copper is followed
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await show(app, pilot, settle, "forms")
        title, shown = chart(app)
        assert title.startswith("forms of copper vs pH")
        low, high = chem.HELD_PH_RANGE
        diagram = chem.system_distribution(mix, "copper", np.linspace(low, high, 50))
        drawn = [name for name, share in diagram.series.items() if share.max() >= 0.01]
        assert "Cu(NH3)4^2+" in drawn
        for name in drawn:
            assert named(name, shown), name
        assert "pH held at each point" in shown and f"{high:g}" in shown


async def test_v_on_forms_picks_another_system_and_a_ph_range(settle):
    app = ExplorerApp(preset("plating-rinse-copper"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await show(app, pilot, settle, "forms")
        await pilot.press("v")
        await wait_until(pilot, lambda: isinstance(app.screen, HeldSetup))
        form = app.screen
        while form.system != "ammonia":
            await pilot.press("right")
        await pilot.press("tab")
        await fill(pilot, "6", "11")
        await pilot.press("enter")
        await settle(pilot)
        title, shown = chart(app)
        assert title.startswith("forms of ammonia")
        assert named("NH4+", shown) and named("Cu(NH3)4^2+", shown)     # the copper complexes hold ammonia too
        axis = next(line for line in shown.split("\n") if line.lstrip().startswith("6"))
        assert axis.split()[0] == "6" and axis.split()[-1] == "11"


async def test_the_held_form_refuses_a_ph_range_that_runs_backwards(settle):
    app = ExplorerApp(preset("cooling-tower-makeup"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await show(app, pilot, settle, "saturation")
        await pilot.press("v")
        await wait_until(pilot, lambda: isinstance(app.screen, HeldSetup))
        await fill(pilot, "9", "7")
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, HeldSetup)
        assert "must be above" in str(app.screen.query_one("#held-error").render())
        await pilot.press("escape")
        await settle(pilot)
        assert app._held is None


async def test_solubility_of_the_drug_base_falls_tenfold_per_ph_unit_below_its_pka(settle):
    # A neutral base B in equilibrium with its solid: a(B) = S0 is fixed, and [BH+] = S0 * 10**(pKa - pH)
    # without activity corrections, so well below the pKa the dissolved total falls one decade per pH
    # unit (the solubility-pH relation of a weak base, common practice).
    mix = preset("drug-base-solubility").with_activity("ideal")
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await show(app, pilot, settle, "solubility")
        title, shown = chart(app)
        assert title == "solubility of compound 12 base (s) vs pH"
        assert "with an excess of compound 12 base (s)" in shown and "log C (M)" in shown
    d = chem.solubility(mix, "compound 12 base (s)", np.array([4.0, 5.0]))
    [total] = d.series.values()
    assert np.log10(total[0] / total[1]) == pytest.approx(1.0, abs=0.01)


async def test_saturation_from_the_palette_lists_the_solids_supersaturated_in_the_warm_water(settle):
    mix = preset("cooling-tower-makeup")
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("ctrl+p", *"saturation indices", "enter")
        await settle(pilot)
        assert app.plot_kind == "saturation"
        title, shown = chart(app)
        above = sorted(s.name for s in chem.solve(mix).solids if s.saturation_index > 0)
        assert "calcite" in above
        assert f"at pH {app.result.pH:.2f}: {', '.join(above)} above 0" in shown
        assert "SI = log(IAP/Ksp)" in shown


async def test_g_skips_the_solid_plots_when_no_solid_can_form(acetate_buffer, settle):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        seen = []
        for _ in range(len(app.kinds) + 1):
            await pilot.press("g")
            seen.append(app.plot_kind)
        assert "forms" in seen
        assert "solubility" not in seen and "saturation" not in seen
        app.action_show_plot("saturation")            # asked for by name, it says why it is empty
        await settle(pilot)
        assert "No solid can form" in chart(app)[1]


async def test_log_c_of_copper_includes_its_complexes_but_not_ammonia_s_own_species(settle):
    app = ExplorerApp(preset("plating-rinse-copper"))
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await show(app, pilot, settle, "log-c")
        title, shown = chart(app)
        assert title == "log C vs pH · copper"
        assert named("Cu^2+", shown) and named("Cu(NH3)4^2+", shown) and named("CuOH+", shown)
        assert not named("NH4+", shown)


# --------------------------------------------------------------------------
# a titration that follows a free-metal level
# --------------------------------------------------------------------------

async def test_a_complexometric_titration_plots_pca_and_marks_its_equivalence_point(settle):
    # 50 mL of water with 1.2 mM calcium holds 0.060 mmol Ca; EDTA binds it 1:1, so 10 mM EDTA
    # reaches the calcium equivalence at 0.060 / 10 = 6.0 mL (stoichiometry, common practice).
    mix = preset("well-water-hardness")
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("v")
        await wait_until(pilot, lambda: isinstance(app.screen, TitrationSetup))
        await fill(pilot, "disodium EDTA dihydrate", "10 mM", "50 mL", "20 mL", "Ca2+")
        await pilot.pause()
        assert "did you mean Ca^2+" in str(app.screen.query_one("#titration-error").render())
        await pilot.press("enter")                     # refused
        assert isinstance(app.screen, TitrationSetup)
        await fill(pilot, "Ca^2+")
        await pilot.press("enter")
        await settle(pilot)
        title, shown = chart(app)
        assert title.endswith("· pCa") and app.plot_kind == "titration"
        curve = chem.titration(mix, chem.find_reagent("disodium EDTA dihydrate"), 0.010, 0.050, 0.020,
                               points=200, track="Ca^2+")
        first = curve.equivalence_points[0]
        assert first.volume_mL == pytest.approx(6.0, abs=0.15)
        found = re.search(r"equivalence ([0-9.]+) mL, pCa ([0-9.]+)", shown)
        assert found, shown
        assert float(found.group(1)) == pytest.approx(first.volume_mL, abs=0.01)
        assert float(found.group(2)) == pytest.approx(first.level, abs=0.05)


# --------------------------------------------------------------------------
# sweeps of a gas pressure, with saturation indices
# --------------------------------------------------------------------------

async def test_a_sweep_of_the_co2_pressure_shows_the_ph_then_the_solids_saturation(settle):
    mix = preset("incubator-medium")
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await show(app, pilot, settle, "sweep")
        await pilot.press("v")
        await wait_until(pilot, lambda: isinstance(app.screen, SweepSetup))
        form = app.screen
        while form.vary != "CO2":
            await pilot.press("right")
        await pilot.press("tab", "tab")                # past "show": from
        await fill(pilot, "1 %", "10 %", "51")
        await pilot.press("enter")
        await settle(pilot)
        title, shown = chart(app)
        assert title == "pH vs CO2" and "CO2 partial pressure (atm)" in shown
        curve = chem.sweep(mix, "CO2", np.linspace(0.01, 0.10, 51))
        assert f"pH {curve.pH[0]:.3f} at 1 %, {curve.pH[-1]:.3f} at 10 %" in shown
        assert curve.pH[-1] < curve.pH[0]             # more CO2 over bicarbonate: more acid
        await pilot.press("v")
        await wait_until(pilot, lambda: isinstance(app.screen, SweepSetup))
        await pilot.press("tab", "right", "enter")     # show: saturation indices
        await settle(pilot)
        title, shown = chart(app)
        assert title == "SI vs CO2" and "SI = log(IAP/Ksp)" in shown
        assert "calcite" in shown and set(curve.solids) >= {"calcite"}


# --------------------------------------------------------------------------
# the recipe form's metal buffer
# --------------------------------------------------------------------------

async def _design_metal_buffer(app, pilot) -> RecipeForm:
    await pilot.press("b")
    await wait_until(pilot, lambda: isinstance(app.screen, RecipeForm))
    form = app.screen
    await fill(pilot, "egta", "7.2", "25", "10 mM", "100 mL")
    await pilot.press("tab", "tab")                    # past the form cycler: the salt
    await fill(pilot, "KCl 100 mM", "Ca^2+=100 nM")
    await wait_until(pilot, lambda: form.recipe is not None and form.recipe.free_species == "Ca^2+", 30)
    return form


async def test_a_metal_buffer_loads_as_one_undoable_edit_with_its_free_calcium(acetate_buffer, settle):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 34)) as pilot:
        await settle(pilot)
        form = await _design_metal_buffer(app, pilot)
        result = str(form.query_one("#recipe-result").render())
        assert "free Ca^2+ 100 nM (wanted 100 nM) · pCa" in result and "calcium chloride" in result
        await pilot.press("enter")
        await settle(pilot)
        names = {i.reagent.name for i in app.mixture.ingredients}
        assert {"egta free acid", "calcium chloride", "potassium chloride"} <= names
        free = next(s for s in app.result.species if s.name == "Ca^2+")
        assert free.conc == pytest.approx(100e-9, rel=1e-6)
        assert app.result.pH == pytest.approx(7.2, abs=1e-3)
        await pilot.press("u")
        await settle(pilot)
        assert app.mixture == acetate_buffer


async def test_a_metal_buffer_saves_as_a_preset(acetate_buffer, settle, data_dir):
    app = ExplorerApp(acetate_buffer)
    async with app.run_test(size=(100, 34)) as pilot:
        await settle(pilot)
        await _design_metal_buffer(app, pilot)
        await pilot.press("ctrl+s")
        await wait_until(pilot, lambda: app.screen.query("#save-name"))
        await pilot.press("ctrl+u", *"ca egta", "enter")
        await settle(pilot)
        assert app.mixture == acetate_buffer            # saved, not loaded
    saved = chem.load_preset(data_dir / "presets" / "ca egta.toml")
    free = next(s for s in chem.solve(saved).species if s.name == "Ca^2+")
    assert free.conc == pytest.approx(100e-9, rel=1e-3)   # the file keeps six digits of each amount


async def test_a_free_level_without_a_chelator_is_refused_in_the_form(library):
    from tests.app.test_curve_screens import Harness, type_text

    form = RecipeForm(library, target_pH=7.2, temperature_c=25)
    app = Harness(form)
    async with app.run_test(size=(100, 34)) as pilot:
        form.query_one("#recipe-free").focus()
        await type_text(pilot, "Mg^2+=1 mM")
        await pilot.pause()
        assert "needs the chelator's system" in str(form.query_one("#recipe-status").render())
        assert "-invalid" in form.query_one("#recipe-system").classes
        await pilot.press("enter")
        await pilot.pause()
        assert app.answers == []


# --------------------------------------------------------------------------
# drawing: every size and style stays inside its area
# --------------------------------------------------------------------------

@pytest.mark.parametrize("name", ["drug-base-solubility", "well-water-hardness", "struvite-wastewater",
                                  "cleaning-closet-mixup"])
def test_the_held_plots_stay_inside_their_area_in_colour_and_in_ascii(name):
    from tui.widgets.plot_kinds import PlotRequest, PlotStyle, draw_kind
    from tui.widgets.speciation_kinds import speciation_kinds

    result = chem.solve(preset(name))
    styles = (PlotStyle.for_terminal(dark=True, color=True, utf8=True),
              PlotStyle.for_terminal(dark=False, color=False, utf8=False))
    for style in styles:
        for kind in speciation_kinds(None, result, None):
            for width, height in ((80, 22), (45, 12), (30, 8)):
                drawing = draw_kind(kind, result, PlotRequest(kind.id, width, height, None, style))
                lines = drawing.plain.split("\n")
                assert len(lines) <= height and max(len(line) for line in lines) <= width, (kind.id, width)
                if style.ascii:
                    assert drawing.plain.isascii(), (kind.id, width)


async def test_the_fraction_plot_of_a_selected_metal_shows_its_forms_instead_of_a_note(settle):
    # The copper rinse opens with copper sulfate selected: copper has no acid–base forms of its own,
    # so the fraction plot draws every form of copper (ammine complexes, hydroxo species) instead.
    mix = preset("plating-rinse-copper")
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        assert app.plot_kind == "distribution"
        title, shown = chart(app)
        assert title == "fraction vs pH · copper"
        assert "No acid–base system" not in shown
        assert "every form of copper" in shown and named("Cu(NH3)4^2+", shown)
