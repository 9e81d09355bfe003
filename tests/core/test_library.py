"""The built-in library: size, look-ups, and the loader's checks."""

from __future__ import annotations

import pytest

from chem import LibraryError
from chem.library import build_library


def test_library_is_as_large_as_the_issue_asks(lib):
    assert len(lib.systems) >= 45 and len(lib.reagents) >= 80
    assert all(item.source for item in (*lib.systems, *lib.reagents, *lib.ions))


@pytest.mark.parametrize("name, reagent", [
    ("Na2HPO4", "disodium hydrogen phosphate"), ("KH2PO4", "potassium dihydrogen phosphate"),
    ("HCl", "hydrochloric acid"), ("NaOH", "sodium hydroxide"), ("Tris", "tris base"),
    ("HEPES", "hepes free acid"), ("PIPES", "pipes free acid"), ("glycine", "glycine free base"),
    ("sodium citrate", "trisodium citrate dihydrate"), ("  sodium   ACETATE ", "sodium acetate"),
])
def test_names_aliases_formulas_and_system_names_resolve(lib, name, reagent):
    assert lib.reagent(name).name == reagent


def test_a_system_named_after_an_ion_lists_its_reagents(lib):
    with pytest.raises(LibraryError, match="acid–base system.*sodium dihydrogen phosphate|acid–base system.*phosph"):
        lib.reagent("phosphate")


def test_unknown_names_suggest_close_ones(lib):
    with pytest.raises(LibraryError, match="did you mean"):
        lib.reagent("sodium acetat")


def _one_system():
    return [dict(name="acetate", species=["CH3COOH", "CH3COO-"], pKa=[4.756], charge_fully_protonated=0,
                 source="test")]


def _ions():
    return [dict(name="Na+", charge=1, source="test"), dict(name="Cl-", charge=-1, source="test")]


def test_loader_refuses_a_non_neutral_reagent():
    bad = [dict(name="broken salt", system="acetate", protons=1, counter_ions={"Na+": 1}, source="test")]
    with pytest.raises(LibraryError, match="not electrically neutral"):
        build_library(_one_system(), _ions(), bad)


def test_loader_refuses_unknown_keys_and_wrong_species_charges():
    with pytest.raises(LibraryError, match="unknown key"):
        build_library([{**_one_system()[0], "colour": "red"}], _ions(), [])
    with pytest.raises(LibraryError, match="should carry charge"):
        build_library([{**_one_system()[0], "species": ["CH3COOH", "CH3COO"]}], _ions(), [])
