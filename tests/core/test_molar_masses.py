"""Molar masses in the reagent library against formula masses.

Formula masses are computed from the IUPAC standard atomic weights as
tabulated by the ``periodictable`` package (its ``formula(...).mass``), an
independent route to the numbers stored in ``chem/data/reagents.toml``.
Library values are rounded to 0.01 g/mol, so the tolerance is 0.006 g/mol
(rounding plus the few-thousandths spread between atomic-weight editions).
"""

from __future__ import annotations

import re

import periodictable
import pytest

from chem import Reagent, load_library
from chem.recipe import design_buffer

LIB = load_library()
WITH_FORMULA = [r for r in LIB.reagents if r.formula]
HYDRATE = re.compile(r"^(?P<base>.+?)\(H2O\)(?P<n>[\d.]*)$")
WATER = periodictable.formula("H2O").mass


def test_the_library_gives_formulas_for_nearly_every_reagent():
    # The check below is only as good as its coverage.
    assert len(WITH_FORMULA) >= 0.9 * len(LIB.reagents)


@pytest.mark.parametrize("reagent", WITH_FORMULA, ids=lambda r: r.name)
def test_molar_mass_matches_formula_mass_from_standard_atomic_weights(reagent):
    assert reagent.molar_mass is not None, f"{reagent.name} has a formula but no molar mass"
    expected = periodictable.formula(reagent.formula).mass
    assert reagent.molar_mass == pytest.approx(expected, abs=0.006)


HYDRATES = [r for r in WITH_FORMULA if HYDRATE.match(r.formula)]


def test_the_library_lists_hydrates():
    assert len(HYDRATES) >= 5


@pytest.mark.parametrize("hydrate", HYDRATES, ids=lambda r: r.name)
def test_a_hydrate_is_its_own_reagent_heavier_by_its_water(hydrate):
    m = HYDRATE.match(hydrate.formula)
    n = float(m.group("n") or 1)
    anhydrous_mass = periodictable.formula(m.group("base")).mass
    assert hydrate.molar_mass == pytest.approx(anhydrous_mass + n * WATER, abs=0.006)
    # Looking the hydrate up by its own name gives the hydrate, never the anhydrous salt.
    assert LIB.reagent(hydrate.name) is hydrate
    anhydrous = LIB.find(m.group("base"))
    if isinstance(anhydrous, Reagent):
        assert anhydrous is not hydrate
        assert anhydrous.molar_mass < hydrate.molar_mass


def test_a_recipe_weighs_the_hydrate_asked_for_by_its_own_molar_mass():
    plain = design_buffer("phosphate", 7.0, acid_form="sodium dihydrogen phosphate",
                          base_form="disodium hydrogen phosphate", total="50 mM", volume="1 L")
    hydrated = design_buffer("phosphate", 7.0, acid_form="sodium dihydrogen phosphate monohydrate",
                             base_form="disodium hydrogen phosphate heptahydrate", total="50 mM", volume="1 L")
    for a, b in zip(plain.items, hydrated.items):
        # Same amount of substance (the counter-ions are the same), more grams.
        assert b.conc == pytest.approx(a.conc, rel=1e-9)
        assert b.amount == pytest.approx(b.conc * 1.0 * b.reagent.molar_mass, rel=1e-12)
        assert b.amount > a.amount
    water_gram_ratio = hydrated.items[0].amount / plain.items[0].amount
    expected = periodictable.formula("NaH2PO4(H2O)").mass / periodictable.formula("NaH2PO4").mass
    assert water_gram_ratio == pytest.approx(expected, abs=1e-4)
