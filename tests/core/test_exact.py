"""Exact algebra: the solver against closed-form and high-precision solutions.

For the ideal model the charge balance of a weak acid is a polynomial in
h = [H+]; its unique positive root, found with mpmath at 50 digits, is the
exact answer (no small-x shortcut). Agreement is required to 1e-9 in pH.
"""

from __future__ import annotations

import mpmath as mp
import pytest

from chem import Ingredient, Mixture, loads_preset, solve, water

mp.mp.dps = 50
# mpmath 1.4 deprecates descending coefficient order; 1.3 has no other order.
pytestmark = pytest.mark.filterwarnings("ignore:Descending:DeprecationWarning")


def custom_acid(pkas, charge, protons, counter, conc, t_c=25.0):
    """A preset with one custom acid–base reagent; returns the Mixture."""
    ions = ", ".join(f'"{k}" = {v}' for k, v in counter.items())
    text = f"""
format = 1
temperature_c = {t_c}
activity = "ideal"
[[ingredient]]
name = "acid X"
conc = {conc!r}
[[custom]]
name = "acid X"
pKa = {list(pkas)!r}
charge_fully_protonated = {charge}
protons = {protons}
counter_ions = {{ {ions} }}
"""
    return loads_preset(text, "exact")


def positive_root(coeffs):
    roots = mp.polyroots(coeffs, maxsteps=200, extraprec=200)
    pos = [r.real for r in roots if abs(r.imag) < mp.mpf("1e-40") and r.real > 0]
    assert len(pos) == 1, roots
    return pos[0]


@pytest.mark.parametrize("pka", [-1.5, 2.0, 4.756, 7.0, 9.25, 12.5, 15.5])
@pytest.mark.parametrize("conc", [1e-9, 1e-6, 1e-3, 0.1, 2.0])
def test_monoprotic_acid_matches_cubic(pka, conc):
    # h³ + Ka h² - (Kw + C Ka) h - Ka Kw = 0
    kw = mp.mpf(10) ** (-mp.mpf(float(water.pkw(25.0))))
    ka = mp.mpf(10) ** (-mp.mpf(pka))
    c = mp.mpf(conc)
    h = positive_root([1, ka, -(kw + c * ka), -ka * kw])
    eq = solve(custom_acid([pka], 0, 1, {}, conc))
    assert eq.converged
    assert eq.pH == pytest.approx(float(-mp.log10(h)), abs=1e-9)


@pytest.mark.parametrize("pka", [3.0, 4.756, 9.25, 11.0])
@pytest.mark.parametrize("conc", [1e-7, 1e-4, 0.05, 1.0])
def test_sodium_salt_of_weak_acid_matches_cubic(pka, conc):
    # [Na+] + h = Kw/h + C Ka/(Ka + h)  ->  h³ + (Ka + C) h² - Kw h - Ka Kw = 0
    kw = mp.mpf(10) ** (-mp.mpf(float(water.pkw(25.0))))
    ka = mp.mpf(10) ** (-mp.mpf(pka))
    c = mp.mpf(conc)
    h = positive_root([1, ka + c, -kw, -ka * kw])
    eq = solve(custom_acid([pka], 0, 0, {"Na+": 1}, conc))
    assert eq.pH == pytest.approx(float(-mp.log10(h)), abs=1e-9)


@pytest.mark.parametrize("pkas", [(2.148, 7.198), (1.27, 4.266), (6.351, 10.329), (4.0, 4.3)])
@pytest.mark.parametrize("conc", [1e-6, 1e-3, 0.1])
def test_diprotic_acid_matches_quartic(pkas, conc):
    # (h² - Kw)(h² + K1 h + K1K2) - C h (K1 h + 2 K1 K2) = 0 (multiplied by h)
    kw = mp.mpf(10) ** (-mp.mpf(float(water.pkw(25.0))))
    k1, k2 = (mp.mpf(10) ** (-mp.mpf(p)) for p in pkas)
    c = mp.mpf(conc)
    coeffs = [1, k1, k1 * k2 - kw - c * k1, -kw * k1 - 2 * c * k1 * k2, -kw * k1 * k2]
    h = positive_root(coeffs)
    eq = solve(custom_acid(list(pkas), 0, 2, {}, conc))
    assert eq.pH == pytest.approx(float(-mp.log10(h)), abs=1e-9)


def test_amphiprotic_salt_sits_near_mean_pka():
    # NaHA with pKa 4 and 9 at 0.1 M: pH ≈ (pKa1 + pKa2)/2 = 6.5 (exact quartic agrees to 1e-9 below).
    kw = mp.mpf(10) ** (-mp.mpf(float(water.pkw(25.0))))
    k1, k2 = mp.mpf(10) ** -4, mp.mpf(10) ** -9
    c = mp.mpf("0.1")
    # h + Na = Kw/h + C(K1 h + 2 K1 K2)/(h² + K1 h + K1 K2), Na = C
    coeffs = [1, k1 + c, k1 * k2 - kw, -kw * k1 - c * k1 * k2, -kw * k1 * k2]
    h = positive_root(coeffs)
    eq = solve(custom_acid([4.0, 9.0], 0, 1, {"Na+": 1}, 0.1))
    assert eq.pH == pytest.approx(float(-mp.log10(h)), abs=1e-9)
    assert eq.pH == pytest.approx(6.5, abs=0.01)


@pytest.mark.parametrize("conc, expected", [(1e-8, None), (1e-7, None), (1e-10, None)])
def test_very_dilute_strong_acid_includes_water(lib, conc, expected):
    # [H+] = C/2 + sqrt(C²/4 + Kw): 1e-8 M HCl is slightly acidic (pH ≈ 6.98), never pH 8.
    kw = 10 ** -float(water.pkw(25.0))
    h = conc / 2 + (conc ** 2 / 4 + kw) ** 0.5
    eq = solve(Mixture((Ingredient(lib.reagent("HCl"), conc),), activity="ideal"))
    assert eq.pH == pytest.approx(-mp.log10(h), abs=1e-10)
    assert eq.pH < float(water.pkw(25.0)) / 2


@pytest.mark.parametrize("t_c", [0.0, 15.0, 25.0, 37.0, 60.0, 90.0])
def test_ka_kb_equals_kw_at_temperature(lib, t_c):
    # For NH4+/NH3: Kb = [NH4+][OH-]/[NH3] from the solved state must equal Kw(T)/Ka(T),
    # i.e. pKa + pKb = pKw(T) (IAPWS), which is 14 only near 24 °C.
    eq = solve(Mixture((Ingredient(lib.reagent("NH3"), 0.01),), temperature_c=t_c, activity="ideal"))
    nh4, nh3, oh = eq.get("NH4+").conc, eq.get("NH3").conc, eq.get("OH-").conc
    pkb = -mp.log10(nh4 * oh / nh3)
    pka = float(lib.system("ammonia").pka_at(t_c)[0])
    assert float(pkb) + pka == pytest.approx(float(water.pkw(t_c)), abs=1e-9)
    assert eq.pKw == pytest.approx(float(water.pkw(t_c)), abs=1e-12)


def test_activity_corrected_constant_holds_in_solution(lib):
    # With the Davies model the thermodynamic Ka relates activities: a(H+) a(A-)/a(HA) = Ka.
    mix = Mixture((Ingredient(lib.reagent("acetic acid"), 0.05), Ingredient(lib.reagent("sodium acetate"), 0.05),
                   Ingredient(lib.reagent("sodium chloride"), 0.1)), temperature_c=30.0)
    eq = solve(mix)
    ha, a = eq.get("CH3COOH"), eq.get("CH3COO-")
    pka = -mp.log10(10 ** -eq.pH * a.activity / ha.activity)
    assert float(pka) == pytest.approx(float(lib.system("acetate").pka_at(30.0)[0]), abs=1e-9)


def test_tableau_lists_components_species_and_formation_constants(lib):
    from chem import Mixture, tableau

    mix = Mixture((Ingredient(lib.reagent("KH2PO4"), 0.01), Ingredient(lib.reagent("acetic acid"), 0.01)))
    tab = tableau(mix)
    assert tab.components[0] == "H+"
    row = tab.species.index("H2PO4-")
    # H2PO4- = PO4^3- + 2 H+ ; log β2 = pKa3 + pKa2
    assert list(tab.stoichiometry[row]) == [2, 1, 0]
    pka = lib.system("phosphate").pka
    assert tab.log_beta[row] == pytest.approx(pka[1] + pka[2], abs=1e-12)
    assert tab.charges[row] == -1
