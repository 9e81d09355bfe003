"""Warnings about the model and cautions about the mixture."""

from __future__ import annotations

from chem import Ingredient, Mixture, solve


def codes(notices):
    return {n.code for n in notices}


def mix(lib, *items, **kw):
    return Mixture(tuple(Ingredient(lib.reagent(n), c) for n, c in items), **kw)


def test_acidified_bleach_warns_of_chlorine(lib):
    eq = solve(mix(lib, ("sodium hypochlorite", 0.01), ("hydrochloric acid", 0.02)))
    assert eq.pH < 6
    assert "chlorine-release" in codes(eq.cautions)
    assert all("safety data sheets" in c.message for c in eq.cautions)


def test_bleach_at_its_own_ph_has_no_chlorine_caution(lib):
    eq = solve(mix(lib, ("sodium hypochlorite", 0.01)))
    assert "chlorine-release" not in codes(eq.cautions)


def test_bleach_with_ammonium_warns_of_chloramines(lib):
    eq = solve(mix(lib, ("sodium hypochlorite", 0.01), ("ammonium chloride", 0.01)))
    assert "chloramine" in codes(eq.cautions)


def test_cyanide_and_sulfide_below_pka_warn_of_toxic_gas(lib):
    for salt in ("sodium cyanide", "sodium hydrosulfide"):
        eq = solve(mix(lib, (salt, 0.001), ("acetic acid", 0.05)))
        assert "toxic-gas" in codes(eq.cautions), salt
        alkaline = solve(mix(lib, (salt, 0.001), ("sodium hydroxide", 0.01)))
        assert "toxic-gas" not in codes(alkaline.cautions), salt


def test_concentrated_strong_acid_and_base_are_corrosive(lib):
    assert "corrosive-acid" in codes(solve(mix(lib, ("hydrochloric acid", 1.0))).cautions)
    assert "corrosive-base" in codes(solve(mix(lib, ("sodium hydroxide", 1.0))).cautions)
    assert not solve(mix(lib, ("sodium chloride", 1.0))).cautions


def test_ionic_strength_beyond_model_range_is_flagged(lib):
    eq = solve(mix(lib, ("sodium chloride", 1.0)))
    assert "ionic-strength-high" in codes(eq.warnings)
    eq = solve(mix(lib, ("sodium chloride", 0.2), activity="extended-dh"))
    assert "ionic-strength-high" in codes(eq.warnings)
    assert "ionic-strength-high" not in codes(solve(mix(lib, ("sodium chloride", 0.2))).warnings)


def test_temperature_outside_data_and_missing_enthalpy_are_flagged(lib):
    hot = solve(mix(lib, ("hypochlorous acid", 0.001), temperature_c=80.0))
    assert "temperature-out-of-range" in codes(hot.warnings)
    no_dh = [r for r in lib.reagents if r.system is not None and r.system.dh_kj is None][0]
    eq = solve(Mixture((Ingredient(no_dh, 0.001),), temperature_c=40.0))
    assert "no-temperature-data" in codes(eq.warnings)
    assert "no-temperature-data" not in codes(solve(Mixture((Ingredient(no_dh, 0.001),))).warnings)
