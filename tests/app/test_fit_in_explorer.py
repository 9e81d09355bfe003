"""Fitting a measured titration and showing uncertainty, driven through the explorer by keys."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

import chem
from tests.app.test_curve_screens import fill, wait_until
from tui.app import ExplorerApp
from tui.screens.fit_form import FitForm
from tui.widgets.plot_area import PlotArea
from tui.widgets.readout import Readout

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "core"))
from titration_reference import weak_acid_curve  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore:Descending:DeprecationWarning")


@pytest.fixture
def measured(tmp_path) -> Path:
    """10 mM of a weak acid (pKa 4.76) in 100 mL titrated with 0.1 M NaOH, ideal, noise 0.003 pH."""
    v = np.linspace(0.2, 16.0, 40)
    ph = weak_acid_curve(0.010, 4.76, 0.1, 100.0, v) + np.random.default_rng(2).normal(0, 0.003, v.size)
    path = tmp_path / "run1.csv"
    path.write_text("volume_mL,pH\n" + "".join(f"{a:.3f},{b:.4f}\n" for a, b in zip(v, ph)))
    return path


@pytest.fixture
def sample() -> chem.Mixture:
    """The sample as believed: 9 mM of a custom acid with pKa 4.9, ideal activity."""
    system = chem.AcidBaseSystem("acid Y", ("HY", "Y-"), (4.9,), 0, custom=True)
    reagent = chem.Reagent("acid Y", system, 1, custom=True)
    return chem.Mixture((chem.Ingredient(reagent, 0.009, "9 mM"),), activity="ideal", title="unknown")


async def open_and_fit(app, pilot, measured) -> FitForm:
    await pilot.press("f")
    await wait_until(pilot, lambda: isinstance(app.screen, FitForm))
    form = app.screen
    await fill(pilot, str(measured), "NaOH", "0.1 M", "100 mL", "amount:acid Y; pKa:acid Y:1")
    await pilot.press("enter")
    await wait_until(pilot, lambda: form.result is not None, timeout=20)
    return form


async def test_f_fits_shows_values_with_their_error_and_loads_the_sample_as_one_undoable_edit(
        sample, measured, settle):
    app = ExplorerApp(sample)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        form = await open_and_fit(app, pilot, measured)
        result = form.result
        amount, pka = result.parameters
        assert abs(amount.value - 0.010) < 4 * amount.stderr
        assert abs(pka.value - 4.76) < 4 * pka.stderr
        shown = str(form.query_one("#fit-result").content)
        assert "amount:acid Y" in shown and "±" in shown and "rms" in shown
        await pilot.press("ctrl+l")
        await settle(pilot)
        assert app.screen is app.screen_stack[0]
        assert app.mixture == result.mixture
        assert app.mixture.ingredients[0].conc == pytest.approx(amount.value)
        assert app.plot_kind == "titration"
        plot = app.query_one(PlotArea).image.plain
        assert "40 measured points (run1.csv)" in plot, plot
        await pilot.press("u")
        await settle(pilot)
        assert app.mixture == sample


async def test_ctrl_g_puts_the_measured_points_on_the_titration_plot(sample, measured, settle):
    app = ExplorerApp(sample)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("f")
        await wait_until(pilot, lambda: isinstance(app.screen, FitForm))
        await fill(pilot, str(measured), "NaOH", "0.1 M", "100 mL", "offset")
        await pilot.press("ctrl+g")
        await settle(pilot)
        assert app.screen is app.screen_stack[0]
        assert app.mixture == sample                       # nothing loaded
        assert app.plot_kind == "titration"
        assert "40 measured points" in app.query_one(PlotArea).image.plain


async def test_bad_data_file_is_explained_in_the_form(sample, tmp_path, settle):
    bad = tmp_path / "bad.csv"
    bad.write_text("volume_mL,reading\n0,3\n")
    app = ExplorerApp(sample)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("f")
        await wait_until(pilot, lambda: isinstance(app.screen, FitForm))
        await fill(pilot, str(bad))
        error = str(app.screen.query_one("#fit-error").content)
        assert "no 'pH' column" in error
        await pilot.press("enter")
        assert isinstance(app.screen, FitForm) and app.screen.result is None
        await pilot.press("ctrl+l")                        # nothing fitted: nothing to load
        assert isinstance(app.screen, FitForm)
        await pilot.press("escape")
        assert app.mixture == sample


async def test_i_shows_the_ph_uncertainty_in_the_readout_and_a_band_on_the_titration(library, settle, text_of):
    mix = chem.Mixture((chem.Ingredient(library.reagent("acetic acid"), 0.05, "50 mM"),
                        chem.Ingredient(library.reagent("sodium acetate"), 0.05, "50 mM")))
    app = ExplorerApp(mix)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        assert "±" not in text_of(app.query_one(Readout))
        await pilot.press("i")
        await settle(pilot)
        from chem.uncertainty import propagate

        sd = propagate(chem.solve(mix)).pH_sd
        assert app.query_one(Readout).ph_sd == pytest.approx(sd)
        assert f"± {sd:.3f}" in text_of(app.query_one(Readout))
        await pilot.press("plus")                            # an edit: the ± follows the new result
        await settle(pilot)
        assert app.query_one(Readout).ph_sd == pytest.approx(propagate(app.result).pH_sd)
        while app.plot_kind != "titration":
            await pilot.press("g")
            await settle(pilot)
        assert "band: 95 %" in app.query_one(PlotArea).image.plain
        await pilot.press("i")
        await settle(pilot)
        assert "±" not in text_of(app.query_one(Readout))
        assert "band" not in app.query_one(PlotArea).image.plain


async def test_a_titrant_system_pka_fitted_in_the_form_can_be_plotted(sample, library, tmp_path, settle):
    """The titrant's own system (ammonia) is a valid parameter: closing the form after such a fit
    used to end in an internal error, because the titrant was not passed when reading it again.
    Loading is refused with the reason (no ingredient of the sample carries ammonia's pKa)."""
    v = np.linspace(0.5, 16.0, 30)
    nh3 = library.reagent("ammonia")
    curve = chem.titration(sample, nh3, 0.1, 0.100, 0.017)
    ph = np.interp(v / 1000, curve.volume_L, curve.pH) + np.random.default_rng(5).normal(0, 0.003, v.size)
    path = tmp_path / "nh3.csv"
    path.write_text("volume_mL,pH\n" + "".join(f"{a:.3f},{b:.4f}\n" for a, b in zip(v, ph)))
    app = ExplorerApp(sample)
    async with app.run_test(size=(120, 40)) as pilot:
        await settle(pilot)
        await pilot.press("f")
        await wait_until(pilot, lambda: isinstance(app.screen, FitForm))
        form = app.screen
        await fill(pilot, str(path), "ammonia", "0.1 M", "100 mL", "pKa:ammonia:1; titrant")
        await pilot.press("enter")
        await wait_until(pilot, lambda: form.result is not None, timeout=20)
        assert abs(form.result.parameters[0].value - 9.24) < 0.05      # ammonium's pKa, as generated
        await pilot.press("ctrl+l")
        await settle(pilot)
        assert app.screen is form
        assert "nothing to load" in str(form.query_one("#fit-error").content)
        await pilot.press("ctrl+g")
        await settle(pilot)
        assert app.screen is app.screen_stack[0]
        assert app.plot_kind == "titration"
        assert app.mixture == sample
