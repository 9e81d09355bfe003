"""Uncertainty of results (chem.uncertainty): derivatives checked by hand, first order against Monte Carlo."""

from __future__ import annotations

import math

import numpy as np
import pytest

import chem
from chem import Ingredient, Mixture, load_library, loads_preset, solve
from chem.uncertainty import (DEFAULT_LOG_K_SD, DEFAULT_PKA_SD, UncertaintyError, curve_band, propagate,
                              recipe_uncertainty)


def custom(pka, sd=None, conc=0.05, protons=1, counter="", activity="ideal", extra_ing="") -> Mixture:
    """One custom acid (and optionally more text) as a preset."""
    sd_line = f"pKa_sd = {list(sd)!r}" if sd is not None else ""
    return loads_preset(f"""
format = 1
activity = "{activity}"
[[ingredient]]
name = "acid Z"
conc = {conc!r}
{extra_ing}
[[custom]]
name = "acid Z"
pKa = {list(pka)!r}
{sd_line}
charge_fully_protonated = 0
protons = {protons}
counter_ions = {{ {counter} }}
""", "unc")


def contribution(unc, key):
    return next(c for c in unc.contributions if c.key == key)


class TestByHand:
    def test_a_one_to_one_buffer_moves_one_for_one_with_its_pka(self):
        """HZ + NaZ, 50 mM each, ideal. With h(C_b + h) = Ka(C_a − h) (OH- negligible),
        d ln h / d ln Ka = (C_b + h)/(C_b + 2h + Ka) ≈ 1 − 2Ka/C_b: 0.9986 here."""
        mix = custom([4.76], conc=0.05, extra_ing='[[ingredient]]\nname = "NaOH"\nconc = 0.025')
        # 50 mM acid + 25 mM NaOH is the 1:1 buffer: C_a = C_b = 0.025
        eq = solve(mix)
        unc = propagate(eq)
        d = contribution(unc, "pKa:acid Z:1").dpH
        h, ka, cb = 10 ** -eq.pH, 10 ** -4.76, 0.025
        assert d == pytest.approx((cb + h) / (cb + 2 * h + ka), abs=1e-6)
        assert d == pytest.approx(1.0, abs=2e-3)
        assert unc.pH_sd == pytest.approx(abs(d) * DEFAULT_PKA_SD, rel=1e-9)

    def test_a_lone_weak_acid_moves_by_one_half(self):
        """0.1 M HZ, pKa 7, ideal: h² = Ka(C − h), so d ln h/d ln Ka = h/(2h + Ka) = 0.49975."""
        eq = solve(custom([7.0], conc=0.1))
        d = contribution(propagate(eq), "pKa:acid Z:1").dpH
        h, ka = 10 ** -eq.pH, 1e-7
        assert d == pytest.approx(h / (2 * h + ka), abs=1e-6)
        assert d == pytest.approx(0.5, abs=1e-3)

    def test_a_stated_pka_sd_is_used_and_the_default_is_marked(self):
        stated = propagate(solve(custom([4.76], sd=[0.005])))
        c = contribution(stated, "pKa:acid Z:1")
        assert c.sd == 0.005 and c.stated and stated.defaults == ()
        default = propagate(solve(custom([4.76])))
        c = contribution(default, "pKa:acid Z:1")
        assert c.sd == DEFAULT_PKA_SD and not c.stated and default.defaults == ("pKa:acid Z:1",)
        assert default.to_dict()["defaults"]["used_for"] == ["pKa:acid Z:1"]

    def test_species_follow_their_share_of_the_constant(self):
        """Lone weak acid: log[Z-] = log h (charge balance) moves like pH; log[HZ] barely moves."""
        eq = solve(custom([7.0], conc=0.1))
        unc = propagate(eq)
        sp = {s.name: s for s in unc.species}
        names = [s.name for s in eq.species if s.system == "acid Z"]
        hz, z = (sp[n] for n in names)
        assert z.log10_sd == pytest.approx(unc.pH_sd, rel=1e-3)
        assert hz.log10_sd < 0.01 * unc.pH_sd
        lo, hi = z.interval_95
        assert lo < z.conc < hi and math.log10(hi / z.conc) == pytest.approx(1.959964 * z.log10_sd, rel=1e-6)

    def test_interval_is_symmetric_at_first_order(self):
        unc = propagate(solve(custom([4.76])))
        lo, hi = unc.pH_interval_95
        assert unc.pH - lo == pytest.approx(hi - unc.pH) == pytest.approx(1.959964 * unc.pH_sd, rel=1e-6)


# A mixture with a complex, a precipitating solid and a fixed gas, all custom, each with log_K_sd
EXTRAS = """
format = 1
activity = "davies"
precipitate = true
[[ingredient]]
name = "metal M"
conc = "2 mM"
[[ingredient]]
name = "acid L"
conc = "5 mM"
[[ingredient]]
name = "NaOH"
conc = "4 mM"
[[custom]]
name = "metal M"
pKa = []
species = ["M^2+"]
charge_fully_protonated = 2
protons = 0
counter_ions = { "Cl-" = 2 }
[[custom]]
name = "acid L"
pKa = [4.2]
species = ["HL", "L-"]
charge_fully_protonated = 0
protons = 1
counter_ions = {}
[[custom_complex]]
name = "ML+"
reaction = { "M^2+" = 1, "L-" = 1 }
log_K = 3.1
log_K_sd = 0.05
[[custom_complex]]
name = "MHL^2+"
reaction = { "M^2+" = 1, "HL" = 1 }
log_K = 1.0
[[custom_solid]]
name = "ML2(s)"
reaction = { "M^2+" = 1, "L-" = 2 }
log_K = -9.5
log_K_sd = 0.2
[[custom_gas]]
name = "HL(g)"
reaction = { "HL" = 1 }
log_K = 1.5
[[gas]]
name = "HL(g)"
pressure = "1e-4 atm"
"""


def _with(text: str, old: str, new: str) -> Mixture:
    assert old in text
    return loads_preset(text.replace(old, new), "extras")


class TestThroughComplexesSolidsAndGases:
    @pytest.mark.parametrize("key, old, new", [
        ("pKa:acid L:1", "pKa = [4.2]", "pKa = [{}]"),
        ("logK:ML+", "log_K = 3.1", "log_K = {}"),
        ("logK:MHL^2+", "log_K = 1.0", "log_K = {}"),
        ("logKsp:ML2(s)", "log_K = -9.5", "log_K = {}"),
        ("logKH:HL(g)", "log_K = 1.5", "log_K = {}"),
    ])
    def test_derivative_matches_a_difference_of_solves(self, key, old, new):
        eq = solve(loads_preset(EXTRAS, "extras"))
        assert eq.converged
        assert eq.solids[0].amount > 0                       # the solid is present: its Ksp matters
        unc = propagate(eq)
        c = contribution(unc, key)
        base = float(old.split("= ")[1].strip("[]"))
        step = 1e-5
        up = solve(_with(EXTRAS, old, new.format(base + step))).pH
        down = solve(_with(EXTRAS, old, new.format(base - step))).pH
        assert c.dpH == pytest.approx((up - down) / (2 * step), rel=1e-4, abs=1e-7)

    def test_stated_and_default_log_k_sd(self):
        unc = propagate(solve(loads_preset(EXTRAS, "extras")))
        assert contribution(unc, "logK:ML+").sd == 0.05 and contribution(unc, "logK:ML+").stated
        assert contribution(unc, "logKsp:ML2(s)").sd == 0.2
        assert contribution(unc, "logK:MHL^2+").sd == DEFAULT_LOG_K_SD
        assert not contribution(unc, "logKH:HL(g)").stated


class TestMonteCarlo:
    @pytest.mark.parametrize("mixture", [
        "acetate-buffer", "ten-systems", "extras",
    ])
    def test_first_order_agrees_with_monte_carlo(self, mixture):
        lib = load_library()
        if mixture == "acetate-buffer":
            mix = Mixture((Ingredient(lib.reagent("acetic acid"), 0.05), Ingredient(lib.reagent("sodium acetate"), 0.05)))
        elif mixture == "ten-systems":
            names = [("acetic acid", 0.010), ("sodium dihydrogen phosphate", 0.020), ("disodium hydrogen phosphate", 0.015),
                     ("citric acid", 0.005), ("tris base", 0.020), ("boric acid", 0.002), ("sodium chloride", 0.1),
                     ("sodium hydroxide", 0.012)]
            mix = Mixture(tuple(Ingredient(lib.reagent(n), c) for n, c in names), temperature_c=37.0)
        else:
            mix = loads_preset(EXTRAS, "extras")
        eq = solve(mix)
        first = propagate(eq)
        mc = propagate(eq, method="monte-carlo", samples=4000, seed=11)
        assert mc.method == "monte-carlo" and mc.failed == 0
        # sd of a sd estimated from 4000 normal draws: about 1.1 %
        assert mc.pH_sd == pytest.approx(first.pH_sd, rel=0.06)
        assert mc.pH_interval_95[0] == pytest.approx(first.pH_interval_95[0], abs=0.25 * first.pH_sd)
        assert mc.pH_interval_95[1] == pytest.approx(first.pH_interval_95[1], abs=0.25 * first.pH_sd)
        by_name = {s.name: s for s in first.species}
        for s in mc.species:
            if s.conc > 1e-12 and by_name[s.name].log10_sd > 1e-3:
                assert s.log10_sd == pytest.approx(by_name[s.name].log10_sd, rel=0.1), s.name

    def test_bad_settings(self):
        eq = solve(custom([4.76]))
        with pytest.raises(UncertaintyError, match="unknown uncertainty method"):
            propagate(eq, method="guess")
        with pytest.raises(UncertaintyError, match="samples must be"):
            propagate(eq, method="monte-carlo", samples=5)


class TestCurvesAndRecipes:
    def test_band_of_a_titration_matches_each_point_solved_alone(self):
        lib = load_library()
        mix = Mixture((Ingredient(lib.reagent("acetic acid"), 0.01),))
        curve = chem.titration(mix, lib.reagent("NaOH"), 0.1, 0.025, 0.004, points=41)
        band = curve_band(curve)
        assert band.pH_sd.shape == curve.pH.shape
        for i in (0, 10, 25, len(curve) - 1):
            alone = propagate(curve.equilibrium_at(i))
            assert band.pH_sd[i] == pytest.approx(alone.pH_sd, rel=1e-6, abs=1e-9)
            sp = {s.name: s for s in alone.species}
            assert band.log10_sd["CH3COO-"][i] == pytest.approx(sp["CH3COO-"].log10_sd, rel=1e-6, abs=1e-9)
        # in the buffer region the pH follows the pKa one for one; past the end point it does not
        mid = int(np.argmin(np.abs(curve.x - 1.25)))
        assert band.pH_sd[mid] == pytest.approx(DEFAULT_PKA_SD, rel=0.02)
        assert band.pH_sd[-1] < 0.1 * DEFAULT_PKA_SD

    def test_recipe_reports_constants_and_weighing(self):
        recipe = chem.design_buffer("hepes", 7.4, temperature_c=37.0, total="50 mM", volume="1 L")
        unc = recipe.uncertainty
        assert unc.constants_sd == pytest.approx(DEFAULT_PKA_SD, rel=0.05)   # a buffer at its pKa
        assert 0.0 < unc.weighing_sd < unc.constants_sd
        assert unc.sd == pytest.approx(math.hypot(unc.constants_sd, unc.weighing_sd))
        doc = recipe.to_dict()["uncertainty"]
        assert doc["weighing_rel_sd"] == 0.01 and doc["interval_95"][0] < 7.4 < doc["interval_95"][1]

    def test_weighing_uncertainty_by_hand(self):
        """A 1:1 buffer: a 1 % error in one form moves the pH by log10(1.01) (Henderson–Hasselbalch
        holds here to 1e-3); the two forms' errors add in quadrature."""
        mix = custom([7.0], conc=0.05, extra_ing='[[ingredient]]\nname = "NaOH"\nconc = 0.025')
        unc = recipe_uncertainty(solve(mix), 0.01)
        # acid Z (50 mM, carries both forms) and NaOH (25 mM): d pH/d ln(acid) = −1/2... by charge balance:
        # pH = pKa + log(B/(C − B)) with C = acid, B = base: d pH = (1/ln10)(dB/B·C/(C−B) − dC/(C−B))
        c, b = 0.05, 0.025
        d_acid = (1 / math.log(10)) * (-c / (c - b)) * 0.01
        d_base = (1 / math.log(10)) * (c / (c - b)) * 0.01
        assert unc.weighing_sd == pytest.approx(math.hypot(d_acid, d_base), rel=2e-3)
