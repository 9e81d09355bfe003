"""Full speciation against published outcomes (issue: complexes, solids and gases).

Each check names where the expected number comes from; the library's own
constants carry their sources in chem/data.  Tolerances allow for the
spread between compilations and for the activity model, and are stated
beside each check.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import chem
from chem import FixedGas, Ingredient, Mixture, parse_concentration, solve
from chem.diagrams import saturation, solubility, system_distribution

LIB = chem.load_library()


def mix(*items, activity="davies", t=25.0, precipitate=False, gases=()):
    return Mixture(tuple(Ingredient(LIB.reagent(n), parse_concentration(c)) for n, c in items), activity=activity,
                   temperature_c=t, precipitate=precipitate, gases=gases)


def air(log_p: float = -3.4) -> FixedGas:
    return FixedGas(LIB.gas("CO2"), 10.0 ** log_p)


def test_pure_water_in_equilibrium_with_air_is_ph_5_6():
    # pCO2 ≈ 10^-3.4 atm gives pH 5.6, "the pH of rain" (common practice).
    eq = solve(mix(gases=(air(),)))
    assert eq.converged
    assert eq.pH == pytest.approx(5.6, abs=0.03)


def test_calcite_with_water_and_air():
    # Calcite in pure water open to CO2 at 10^-3.5 atm, 25 °C: pH ≈ 8.3 and dissolved Ca ≈ 0.5 mM
    # (a classic open-system example, e.g. Stumm & Morgan (1996) Aquatic Chemistry, 3rd ed., ch. 7,
    # from memory; constants of Plummer & Busenberg 1982 in the library).
    eq = solve(mix(("calcium carbonate", "10 mM"), precipitate=True, gases=(air(-3.5),)))
    assert eq.converged
    assert eq.pH == pytest.approx(8.3, abs=0.1)
    assert eq.system("calcium").dissolved == pytest.approx(0.5e-3, rel=0.12)
    calcite = eq.solid("calcite")
    assert calcite.amount > 0 and calcite.saturation_index == pytest.approx(0.0, abs=1e-9)
    # the CO2 taken up supplies the dissolved carbonate beyond what calcite gave
    assert eq.gas("CO2").fixed


def test_gypsum_solubility_at_25_c():
    # CaSO4·2H2O dissolves to about 2.05 g CaSO4 per litre at 25 °C, i.e. 15.1 mM
    # (CRC Handbook of Chemistry and Physics, "Aqueous solubility of inorganic compounds", from memory);
    # the Davies model with the CaSO4° ion pair is expected within about 10 %.
    eq = solve(mix(("calcium sulfate dihydrate", "50 mM"), precipitate=True))
    assert eq.converged
    assert eq.solid("gypsum").amount > 0
    assert eq.system("calcium").dissolved == pytest.approx(15.1e-3, rel=0.10)


# Ringbom's side-reaction coefficient of EDTA, log α_Y(H), at 20-25 °C and I = 0.1 M: Ringbom (1963)
# Complexation in Analytical Chemistry, table of log α_Y(H) vs pH (from memory); log K(CaY) = 10.7 at
# I = 0.1 M (Smith & Martell, Critical Stability Constants vol. 1, from memory).
RINGBOM_LOG_ALPHA = {4.0: 8.44, 6.0: 4.65, 8.0: 2.27, 10.0: 0.45}


@pytest.mark.parametrize("ph", sorted(RINGBOM_LOG_ALPHA))
def test_calcium_edta_conditional_constant_against_ph(ph):
    # With the ideal model the library's I = 0.1 M quotients are used as they stand, so the conditional
    # constant K' = [CaY']/([Ca'][Y']) at an imposed pH is log K(CaY) − log α_Y(H).
    m = mix(("EDTA", "1 mM"), ("calcium chloride", "0.5 mM"), activity="ideal")
    d = system_distribution(m, "edta", [ph])
    c = system_distribution(m, "calcium", [ph])
    y_free = sum(float(v[0]) for k, v in d.series.items() if "EDTA" in k and not k.startswith(("Ca", "Na", "K")))
    ca_free = sum(float(v[0]) for k, v in c.series.items() if "EDTA" not in k)
    ca_bound = sum(float(v[0]) for k, v in c.series.items() if "EDTA" in k)
    k_cond = (ca_bound * 0.5e-3) / ((ca_free * 0.5e-3) * (y_free * 1e-3))
    assert math.log10(k_cond) == pytest.approx(10.7 - RINGBOM_LOG_ALPHA[ph], abs=0.2)


def test_free_calcium_of_a_half_saturated_egta_buffer():
    # 10 mM EGTA with 5 mM Ca at pH 7.2 in 100 mM KCl: free Ca2+ equals the apparent dissociation constant,
    # about 0.15 µM (Harrison & Bers (1987) Biochim. Biophys. Acta 925, 133, apparent Kd of CaEGTA at pH 7.2,
    # I = 0.1 M; Tsien & Pozzan (1989) Methods Enzymol. 172, 230; both from memory). ±0.25 log units.
    m = mix(("EGTA", "10 mM"), ("calcium chloride", "5 mM"), ("potassium chloride", "100 mM"))
    d = system_distribution(m, "calcium", [7.2])
    free = float(d.series["Ca^2+"][0]) * 5e-3
    assert math.log10(free) == pytest.approx(math.log10(0.15e-6), abs=0.25)


def test_metal_buffer_designer_reaches_its_free_level():
    r = chem.design_metal_buffer("Ca^2+=100 nM", "egta", 7.2, total="10 mM", salts=["KCl 100 mM"],
                                 volume="100 mL")
    assert r.pH == pytest.approx(7.2, abs=1e-4)
    assert r.free_reached == pytest.approx(100e-9, rel=1e-5)
    ca = next(i for i in r.items if "calcium" in i.reagent.name)
    # below half saturation, since 100 nM is under the apparent Kd of about 150 nM (see above)
    assert 0.0 < ca.conc < 5e-3


def test_ferrihydrite_is_least_soluble_near_ph_8():
    # Iron(III) hydroxides are least soluble between about pH 7 and 9, where dissolved Fe(III) falls
    # below 0.1 µM (Liu & Millero (1999) Geochim. Cosmochim. Acta 63, 3487, solubility of iron(III)
    # hydroxide vs pH; from memory).
    m = mix(("iron(III) chloride hexahydrate", "1 mM"), ("sodium chloride", "10 mM"), precipitate=True)
    d = solubility(m, "ferrihydrite", np.linspace(4.0, 11.0, 141))
    fe = d.series["iron(III)"]
    assert d.converged.all()
    i = int(np.argmin(fe))
    assert 7.0 <= d.ph[i] <= 9.0
    assert fe[i] < 1e-7
    assert fe[0] > 100 * fe[i] and fe[-1] > fe[i]          # more soluble in acid and in base


def test_copper_ammonia_distribution():
    # At a free NH3 level of 0.1 M the tetraammine dominates, with the triammine next: with
    # log β1..4 = 4.04, 7.47, 10.27, 11.75 (Smith & Martell, Critical Stability Constants, from memory)
    # the shares are β_n L^n / Σ β_k L^k = 0.75 and 0.25 (worked here). 1 µM Cu in 1 M NH3/NH4+ at
    # pH 9.05 holds free NH3 close to 0.1 M... so impose it through the buffer: NH3 = 0.1 M at pH pKa+1.
    pka = float(LIB.system("ammonia").pka_at(25.0)[0])
    nh4 = 0.1 / 10.0 ** (9.0 - pka) + 0.1               # total ammonia with 0.1 M free NH3 at pH 9
    m = mix(("copper(II) sulfate pentahydrate", "1 uM"), ("ammonium chloride", f"{nh4!r} M"), activity="ideal")
    d = system_distribution(m, "copper", [9.0])
    beta = [10.0 ** 4.04, 10.0 ** 7.47, 10.0 ** 10.27, 10.0 ** 11.75]
    terms = [1.0] + [b * 0.1 ** (k + 1) for k, b in enumerate(beta)]
    want4 = terms[4] / sum(terms)
    want3 = terms[3] / sum(terms)
    assert float(d.series["Cu(NH3)4^2+"][0]) == pytest.approx(want4, abs=0.03)
    assert float(d.series["Cu(NH3)3^2+"][0]) == pytest.approx(want3, abs=0.03)


def test_saturation_of_calcite_rises_with_ph_in_hard_water():
    # Heating or raising the pH of a hard, bicarbonate water drives calcite towards saturation (common
    # practice: the basis of scaling indices).
    m = mix(("calcium chloride", "2 mM"), ("sodium bicarbonate", "4 mM"))
    d = saturation(m, np.linspace(6.5, 9.5, 31))
    si = d.series["calcite"]
    assert np.all(np.diff(si) > 0)
    assert si[0] < 0 < si[-1]


def test_headspace_over_sulfide_at_ph_8_carries_a_toxic_gas_caution():
    # At pH 8 about a tenth of dissolved sulfide is H2S (pKa1 ≈ 7.0): 1 mM sulfide gives an equilibrium
    # H2S partial pressure far above the 10 ppm ceiling (NIOSH Pocket Guide, from memory).
    m = mix(("sodium hydrosulfide", "1 mM"), ("sodium bicarbonate", "10 mM"))
    eq = solve(m)
    h2s = eq.gas("H2S")
    assert h2s.pressure_atm * 1e6 > 10.0
    assert any(c.code == "toxic-gas" and "H2S" in c.message for c in eq.cautions)
    assert h2s.over_exposure_limit and h2s.headspace_ppm == pytest.approx(h2s.pressure_atm * 1e6)
    # the same sulfide held well above its pKa gives off too little H2S: no headspace flag (the same
    # rule the explorer's readout and gas panel use)
    high = solve(mix(("sodium hydrosulfide", "1 uM"), ("sodium hydroxide", "10 mM")))
    assert not high.gas("H2S").over_exposure_limit
    assert not any(c.code == "toxic-gas" and "air over" in c.message for c in high.cautions)


@pytest.mark.parametrize("activity", ["ideal", "davies"])
def test_chlorine_gas_dissolves_into_hypochlorous_acid_and_chloride(activity):
    # Cl2(aq) + H2O = HOCl + H+ + Cl- (the hydrolysis, about 4e-4 at 25 °C; from memory): water held
    # under chlorine takes up as much HOCl as HCl, so [HOCl] ≈ [Cl-] ≈ [H+] and the solution is acidic.
    eq = solve(mix(activity=activity, gases=(FixedGas(LIB.gas("Cl2"), 0.01),)))
    assert eq.converged
    hocl = eq.get("HOCl").conc + eq.get("OCl-").conc
    assert eq.get("Cl-").conc == pytest.approx(hocl, rel=1e-9)
    assert 1.5 < eq.pH < 3.0
    assert eq.gas("Cl2").uptake == pytest.approx(hocl + eq.get("Cl2").conc, rel=1e-9)


def test_solubility_of_a_solid_the_mixture_lacks_brings_its_own_systems():
    # Calcite in pure water under 420 µatm CO2, with the pH held: the classic open-system curve.
    # No ingredient holds calcium or carbonate; the excess of calcite brings both. At a held pH,
    # Ca2+ is pinned by Ksp, K_H·pCO2 and the two carbonate pKa's alone:
    # log a(Ca2+) = log Ksp − log K_H − log p − log(K1·K2) − 2 pH (ideal activities; worked here
    # from the library's constants), and the dissolved calcium adds the small complexes.
    lib = LIB
    co2 = chem.FixedGas(lib.gas("CO2"), 420e-6, "420 uatm")
    m = chem.Mixture((), activity="ideal", gases=(co2,))
    ph = np.array([7.5, 8.0, 8.5])
    d = solubility(m, "calcite", ph)
    assert d.converged.all()
    calcite = lib.solid("calcite")
    pka = lib.system("carbonate").pka_at(25.0)
    log_ca = (calcite.log_k - co2.gas.log_k - math.log10(420e-6) + float(pka[0]) + float(pka[1]) - 2 * ph)
    free_ca = 10.0 ** log_ca
    ca = d.series["calcium"]
    assert np.all(ca >= free_ca) and np.all(ca < 1.05 * free_ca + 1e-5)   # plus CaHCO3+, CaCO3°
    # the same curve as with a zero amount of calcium chloride in the flask
    zero = chem.Mixture((chem.Ingredient(lib.reagent("calcium chloride"), 0.0),), activity="ideal", gases=(co2,))
    np.testing.assert_allclose(solubility(zero, "calcite", ph).series["calcium"], ca, rtol=1e-9)


def test_a_solid_is_found_by_alias_or_formula_and_an_ambiguous_formula_is_refused():
    m = mix(("copper(II) sulfate pentahydrate", "1 mM"))
    ph = np.array([7.0, 9.0])
    by_name = solubility(m, "tenorite", ph).series["copper"]
    for other in ("copper(II) oxide", "CuO", "TENORITE"):
        np.testing.assert_allclose(solubility(m, other, ph).series["copper"], by_name, rtol=1e-12)
    with pytest.raises(chem.ChemError, match="formula of 'calcite' and 'aragonite'"):
        solubility(m, "CaCO3", ph)


def test_a_species_p_level_is_minus_log_of_its_activity():
    # pX = −log10 a(X) (common practice: pH's definition carried to any ion)
    eq = solve(mix(("calcium chloride", "1 mM")))
    ca = eq.get("Ca^2+")
    assert ca.p_level == pytest.approx(-math.log10(ca.conc * ca.activity_coefficient), abs=1e-12)
    assert eq.free_level("calcium") == ca.p_level
    assert chem.Species("X", "strong", 0, 1, 0.0, 1.0, None).p_level == math.inf
