"""The built-in speciation data: metal ions, complexes, solids and gases.

Two kinds of checks:

* reference values: key constants against the published tables they come
  from (named beside each value). The tolerance is tight enough that a
  library value moved by 0.1 log units fails;
* structure: every required entry is there, every reaction names species
  the library knows, every complex's name carries its reaction's charge,
  and the counts the library promises.
"""

from __future__ import annotations

import math

import pytest

from chem import load_library
from chem.library import WATER_IONS
from chem.model import Complex, charge_from_name

LIB = load_library()

# log K tolerance: well below the 0.1 a wrong value would be off by.
TOL = 0.05
# dH tolerance, kJ/mol.
TOL_DH = 0.5

NORD90 = "Nordstrom et al. (1990) ACS Symp. Ser. 416, 398-413, table of selected log K and ΔH°r"
PB82 = "Plummer & Busenberg (1982) Geochim. Cosmochim. Acta 46, 1011-1040, log K(T) equations at 298.15 K"
BM76 = "Baes & Mesmer (1976) The Hydrolysis of Cations, summary table of log *β at 25 °C, I = 0"
MS74 = "Martell & Smith (1974) Critical Stability Constants vol. 1, 25 °C, I = 0.1 M"
SM75 = "Smith & Martell (1975) Critical Stability Constants vol. 2, ammonia, overall β at I = 0"
AL03 = "Alberty (2003) Thermodynamics of Biochemical Reactions, Table 1.2 (298.15 K, I = 0)"
CHOW = "Chow (2001) Monogr. Oral Sci. 18, 94-111, solubility products of calcium phosphates at 25 °C"
KCAL = 4.184

# (kind, name, log K, source). Complexes: formation constant of the reaction
# as written in the library; solids: log Ksp of dissolution; gases: log K_H.
REFERENCE_LOG_K = [
    # carbonate system: the set that goes with carbonate pKa 6.351 / 10.329
    ("solid", "calcite", -8.480, PB82),
    ("solid", "aragonite", -8.336, PB82),
    ("complex", "CaCO3", 3.224, PB82),
    ("complex", "CaHCO3+", 1.106, PB82),
    ("complex", "MgCO3", 2.98, "Siebert & Hostetler (1977) Am. J. Sci. 277, 697, as adopted by " + PB82),
    ("complex", "MgHCO3+", 1.07, "Siebert & Hostetler (1977) Am. J. Sci. 277, 697, as adopted by " + PB82),
    ("gas", "CO2", -1.468, PB82),
    ("solid", "strontianite", -9.271, "Busenberg, Plummer & Parker (1984) Geochim. Cosmochim. Acta 48, 2021"),
    ("solid", "witherite", -8.562, "Busenberg & Plummer (1986) Geochim. Cosmochim. Acta 50, 2225"),
    ("complex", "SrCO3", 2.81, "Busenberg, Plummer & Parker (1984) Geochim. Cosmochim. Acta 48, 2021"),
    ("solid", "magnesite", -8.029, NORD90),
    ("solid", "dolomite", -17.09, NORD90),
    ("solid", "siderite", -10.89, NORD90),
    ("solid", "rhodochrosite", -11.13, NORD90),
    ("solid", "cerussite", -13.13, "Bilinski & Schindler (1982) Geochim. Cosmochim. Acta 46, 921"),
    ("solid", "otavite", -12.1, "Stipp et al. (1993) Geochim. Cosmochim. Acta 57, 2699"),
    ("solid", "malachite", -33.78, "Symes & Kester (1984) Geochim. Cosmochim. Acta 48, 2219 (2Cu2+ + 2OH- + CO3^2-)"),
    # sulfate
    ("solid", "gypsum", -4.58, NORD90),
    ("solid", "anhydrite", -4.36, NORD90),
    ("solid", "barite", -9.97, NORD90),
    ("solid", "celestite", -6.63, NORD90),
    ("complex", "CaSO4", 2.30, NORD90 + " (Bell & George 1953)"),
    ("complex", "MgSO4", 2.37, NORD90),
    ("complex", "NaSO4-", 0.70, NORD90),
    ("complex", "KSO4-", 0.85, NORD90),
    ("complex", "AlSO4+", 3.5, NORD90),
    # fluoride, hydroxides
    ("solid", "fluorite", -10.6, NORD90),
    ("complex", "AlF^2+", 7.0, NORD90),
    ("complex", "FeF^2+", 6.2, NORD90),
    ("solid", "brucite", 16.84, NORD90 + " (Mg(OH)2 + 2H+)"),
    ("solid", "portlandite", 22.8, NORD90 + " (Ca(OH)2 + 2H+)"),
    ("solid", "gibbsite", 8.11, NORD90 + " (Al(OH)3 + 3H+)"),
    ("solid", "ferrihydrite", 4.891, NORD90 + " (amorphous Fe(OH)3 + 3H+)"),
    ("solid", "tenorite", 7.64, "Powell et al. (2007) Pure Appl. Chem. 79, 895 (CuO + 2H+)"),
    ("solid", "zincite", 11.12, "Powell et al. (2013) Pure Appl. Chem. 85, 2249 (ZnO + 2H+)"),
    # hydrolysis
    ("complex", "CaOH+", -12.78, NORD90),
    ("complex", "MgOH+", -11.44, NORD90 + "; same in " + BM76),
    ("complex", "FeOH^2+", -2.19, NORD90 + "; same in " + BM76),
    ("complex", "Fe(OH)2+", -5.67, NORD90),
    ("complex", "Fe(OH)4-", -21.6, NORD90),
    ("complex", "Fe2(OH)2^4+", -2.95, NORD90),
    ("complex", "Fe3(OH)4^5+", -6.3, NORD90),
    ("complex", "AlOH^2+", -5.00, NORD90),
    ("complex", "Al(OH)4-", -22.7, NORD90),
    ("complex", "Al2(OH)2^4+", -7.7, BM76),
    ("complex", "Al3(OH)4^5+", -13.94, BM76),
    ("complex", "Cu2(OH)2^2+", -10.36, BM76),
    ("complex", "Zn(OH)4^2-", -41.2, BM76),
    ("complex", "Pb4(OH)4^4+", -20.88, BM76),
    ("complex", "PbOH+", -7.71, BM76),
    # phosphate solids and ion pairs
    ("solid", "hydroxyapatite", -58.4, CHOW + " (-log Ks 116.8 per Ca10(PO4)6(OH)2)"),
    ("solid", "brushite", -6.59, CHOW),
    ("solid", "struvite", -13.26, "Ohlinger, Young & Schroeder (1998) Water Res. 32, 3607"),
    ("complex", "CaHPO4", 2.739, "Chughtai, Marshall & Nancollas (1968) J. Phys. Chem. 72, 208"),
    # ammonia: Cu(NH3)n^2+ overall β
    ("complex", "Cu(NH3)^2+", 4.04, SM75),
    ("complex", "Cu(NH3)2^2+", 7.47, SM75),
    ("complex", "Cu(NH3)3^2+", 10.27, SM75),
    ("complex", "Cu(NH3)4^2+", 11.75, SM75),
    ("complex", "Ag(NH3)2+", 7.22, SM75),
    # chelators (I = 0.1 M quotients)
    ("complex", "CaEDTA^2-", 10.65, MS74 + ", EDTA"),
    ("complex", "MgEDTA^2-", 8.79, MS74 + ", EDTA"),
    ("complex", "CuEDTA^2-", 18.78, MS74 + ", EDTA"),
    ("complex", "FeEDTA-", 25.1, MS74 + ", EDTA"),
    ("complex", "CaEGTA^2-", 10.86, MS74 + ", EGTA"),
    ("complex", "MgEGTA^2-", 5.21, "Schwarzenbach, Senn & Anderegg (1957) Helv. Chim. Acta 40, 1886 (20 °C, I = 0.1 M)"),
    ("complex", "CaNTA-", 6.39, MS74 + ", NTA"),
    ("complex", "MgATP^2-", 6.18, AL03),
    ("complex", "MgHATP-", 3.63, AL03),
    # chlorine and other gases
    ("complex", "Cl2", 3.34, "Wagman et al. (1982) NBS tables: ΔfG° of Cl2(aq), HClO(aq), Cl-, H2O"),
    ("gas", "NH3", 1.766, "Wagman et al. (1982) NBS tables: ΔfG° of NH3(g), NH3(aq) (1 atm standard state)"),
    ("gas", "H2S", -0.998, "Wagman et al. (1982) NBS tables: ΔfG° of H2S(g), H2S(aq) (1 atm standard state)"),
    ("gas", "SO2", 0.090, "Wagman et al. (1982) NBS tables: ΔfG° of SO2(g), SO2(aq) (1 atm standard state)"),
    ("solid", "chlorargyrite", -9.75, "Wagman et al. (1982) NBS tables: ΔfG° of AgCl(s), Ag+, Cl-"),
]

# (kind, name, ΔH kJ/mol of the reaction as written, source)
REFERENCE_DH = [
    ("solid", "calcite", -9.61, PB82),
    ("solid", "aragonite", -10.83, PB82),
    ("complex", "CaCO3", 14.83, PB82),
    ("complex", "CaHCO3+", 11.27, PB82),
    ("gas", "CO2", -19.98, PB82),
    ("solid", "gypsum", -0.109 * KCAL, NORD90),
    ("solid", "fluorite", 4.69 * KCAL, NORD90),
    ("complex", "CaSO4", 1.65 * KCAL, NORD90),
    ("complex", "FeOH^2+", 10.4 * KCAL, NORD90),
    ("complex", "Al(OH)4-", 42.30 * KCAL, NORD90),
]


def _get(kind: str, name: str):
    return {"complex": LIB.complex, "solid": LIB.solid, "gas": LIB.gas}[kind](name)


@pytest.mark.parametrize("kind, name, log_k, source", REFERENCE_LOG_K, ids=[f"{k}-{n}" for k, n, *_ in REFERENCE_LOG_K])
def test_log_k_matches_the_published_table(kind, name, log_k, source):
    item = _get(kind, name)
    assert item.log_k == pytest.approx(log_k, abs=TOL), f"{name}: library {item.log_k}, {source} {log_k}"


@pytest.mark.parametrize("kind, name, dh, source", REFERENCE_DH, ids=[f"{k}-{n}" for k, n, *_ in REFERENCE_DH])
def test_reaction_enthalpy_matches_the_published_table(kind, name, dh, source):
    item = _get(kind, name)
    assert item.dh_kj is not None and item.dh_kj == pytest.approx(dh, abs=TOL_DH), f"{name}: {source}"


def test_the_reference_list_covers_forty_constants():
    assert len(REFERENCE_LOG_K) >= 40


def test_ionic_strength_of_chelate_constants_is_stated():
    # Martell & Smith's chelate constants are I = 0.1 M quotients; Alberty's are I = 0.
    for name in ("CaEDTA^2-", "CaEGTA^2-", "MgEGTA^2-", "CaNTA-", "CuGly+"):
        assert LIB.complex(name).ionic_strength == pytest.approx(0.1)
    for name in ("MgATP^2-", "CaCO3", "CaSO4", "FeOH^2+"):
        assert LIB.complex(name).ionic_strength == 0.0
    assert LIB.system("egta").ionic_strength == pytest.approx(0.1)
    assert LIB.system("nta").ionic_strength == pytest.approx(0.1)
    assert LIB.system("atp").ionic_strength == 0.0


def test_egta_protonation_steps_are_the_tabulated_ones():
    # Martell & Smith (1974) Critical Stability Constants vol. 1, EGTA, 25 °C, I = 0.1 M.
    assert LIB.system("egta").pka == pytest.approx((2.0, 2.68, 8.78, 9.40), abs=TOL)
    # Alberty (2003) Thermodynamics of Biochemical Reactions, Table 1.2, I = 0.
    assert LIB.system("atp").pka == pytest.approx((4.68, 7.60), abs=TOL)


# --------------------------------------------------------------------------
# structure
# --------------------------------------------------------------------------

METALS = {
    "calcium": "Ca^2+", "magnesium": "Mg^2+", "strontium": "Sr^2+", "barium": "Ba^2+",
    "manganese": "Mn^2+", "iron(II)": "Fe^2+", "iron(III)": "Fe^3+", "cobalt": "Co^2+",
    "nickel": "Ni^2+", "copper": "Cu^2+", "zinc": "Zn^2+", "cadmium": "Cd^2+", "lead": "Pb^2+",
    "aluminium": "Al^3+", "silver": "Ag+",
}
REQUIRED_SOLIDS = [
    "calcite", "aragonite", "gypsum", "anhydrite", "fluorite", "barite", "celestite", "brucite",
    "portlandite", "magnesite", "dolomite", "hydroxyapatite", "brushite", "struvite", "siderite",
    "rhodochrosite", "ferrihydrite", "gibbsite", "cerussite", "malachite", "tenorite", "zincite",
]
REQUIRED_GASES = ["CO2", "NH3", "H2S", "HCN", "SO2", "Cl2"]
TOXIC_GASES = ["NH3", "H2S", "HCN", "SO2", "Cl2"]
REQUIRED_REAGENTS = [
    "calcium carbonate", "calcium sulfate dihydrate", "calcium fluoride", "barium sulfate",
    "magnesium hydroxide", "calcium hydroxide", "calcium chloride", "magnesium chloride",
    "iron(III) chloride hexahydrate", "iron(II) sulfate heptahydrate", "aluminium sulfate",
    "silver nitrate", "zinc sulfate heptahydrate", "copper(II) sulfate pentahydrate",
    "egta free acid", "nitrilotriacetic acid", "trisodium NTA", "ATP disodium salt",
]
POLYNUCLEAR = ["Fe2(OH)2^4+", "Fe3(OH)4^5+", "Al2(OH)2^4+", "Al3(OH)4^5+", "Cu2(OH)2^2+", "Pb4(OH)4^4+"]
ANIONIC_HYDROXO = ["Fe(OH)4-", "Al(OH)4-", "Zn(OH)4^2-"]


def test_counts():
    assert len(LIB.complexes) >= 150
    assert len(LIB.solids) >= 30
    assert len(LIB.gases) >= 6


@pytest.mark.parametrize("name, ion", METALS.items())
def test_each_metal_is_a_system_with_only_its_aqua_ion(name, ion):
    sys_ = LIB.system(name)
    assert sys_.species == (ion,) and sys_.pka == ()
    assert sys_.charge_fully_protonated == charge_from_name(ion)
    assert not sys_.buffer
    # Every metal hydrolyses: at least one complex is the ion with protons removed.
    hydroxo = [c for c in LIB.complexes
               if dict(c.reaction).get(ion, 0) >= 1 and dict(c.reaction).get("H+", 0) < 0
               and len(c.reaction) == 2]
    assert hydroxo, f"no hydrolysis species for {name}"


def test_aluminum_is_an_alias_and_calcium_has_no_hydroxo_step_left():
    assert LIB.system("aluminum") is LIB.system("aluminium")
    assert "CaOH+" not in LIB.system("calcium").species
    assert "MgOH+" not in LIB.system("magnesium").species
    assert dict(LIB.complex("CaOH+").reaction) == {"Ca^2+": 1, "H+": -1}


@pytest.mark.parametrize("name", REQUIRED_SOLIDS)
def test_required_solids_are_present(name):
    assert LIB.solid(name).name == name


@pytest.mark.parametrize("name", POLYNUCLEAR + ANIONIC_HYDROXO)
def test_polynuclear_and_anionic_hydroxo_species_are_present(name):
    assert LIB.complex(name).name == name


@pytest.mark.parametrize("name", REQUIRED_GASES)
def test_required_gases_are_present_with_a_dissolution_enthalpy(name):
    gas = LIB.gas(name)
    assert gas.dh_kj is not None and gas.dh_kj < 0     # every one of these dissolves exothermically
    assert len(gas.reaction) == 1 and gas.reaction[0][1] == 1


@pytest.mark.parametrize("name", TOXIC_GASES)
def test_toxic_gases_carry_a_published_exposure_limit(name):
    gas = LIB.gas(name)
    assert gas.exposure_limit_ppm is not None and 0 < gas.exposure_limit_ppm < 1000
    assert "NIOSH" in gas.exposure_limit_source
    assert any(kind in gas.exposure_limit_source for kind in ("ceiling", "short-term"))


def test_chlorine_dissolves_into_the_cl2_complex_formed_from_hypochlorous_acid():
    assert dict(LIB.complex("Cl2").reaction) == {"HOCl": 1, "H+": 1, "Cl-": 1}
    assert LIB.gas("Cl2").reaction == (("Cl2", 1),)
    assert LIB.gas("CO2").reaction == (("H2CO3", 1),)
    assert LIB.gas("SO2").reaction == (("H2SO3", 1),)


@pytest.mark.parametrize("name", REQUIRED_REAGENTS)
def test_required_reagents_are_present(name):
    assert LIB.reagent(name).name == name


def test_multi_system_salts_hold_their_systems():
    def held(name):
        return {s.name: n for s, n in LIB.reagent(name).systems}
    assert held("copper(II) sulfate pentahydrate") == {"copper": 1, "sulfate": 1}
    assert held("calcium carbonate") == {"calcium": 1, "carbonate": 1}
    assert held("aluminium sulfate") == {"aluminium": 2, "sulfate": 3}
    brushite = LIB.reagent("calcium hydrogen phosphate dihydrate")
    assert {s.name: n for s, n in brushite.systems} == {"calcium": 1, "phosphate": 1} and brushite.protons == 1
    lime = LIB.reagent("calcium hydroxide")
    assert {i.name: n for i, n in lime.counter_ions} == {"OH-": 2} and lime.protons == 0


def _owner_names() -> set[str]:
    names = {sp for s in LIB.systems for sp in s.species}
    names |= {i.name for i in LIB.ions}
    return names | set(WATER_IONS)


def test_every_reaction_names_known_species_and_complex_names_carry_their_charge():
    known = _owner_names()
    complexes = {c.name for c in LIB.complexes}
    charge = {sp: s.charge_of(k) for s in LIB.systems for k, sp in enumerate(s.species)}
    charge.update({i.name: i.charge for i in LIB.ions})
    charge.update({"H+": 1, "OH-": -1})
    for c in LIB.complexes:
        assert all(sp in known for sp, _ in c.reaction), c.name
        assert sum(charge[sp] * n for sp, n in c.reaction) == c.charge, c.name
    for s in LIB.solids:
        assert all(sp in known for sp, _ in s.reaction), s.name
        assert sum(charge[sp] * n for sp, n in s.reaction) == 0, f"{s.name} dissolves into a charged set"
    for g in LIB.gases:
        (sp, _), = g.reaction
        assert sp in known or sp in complexes, g.name


def test_species_and_solid_names_are_unique():
    names = [sp for s in LIB.systems for sp in s.species] + [c.name for c in LIB.complexes]
    assert len(names) == len(set(names))
    solids = [s.name for s in LIB.solids]
    assert len(solids) == len(set(solids)) and not set(solids) & set(names)


def test_every_constant_is_finite_and_sourced():
    for item in (*LIB.complexes, *LIB.solids, *LIB.gases):
        assert math.isfinite(item.log_k) and item.source, item.name
        assert "(from memory)" in item.source or "read" in item.source or "computed here" in item.source \
            or "Table 1.2" in item.source, f"{item.name}: say whether the value was read or recalled"


def test_hydroxo_complexes_get_weaker_as_protons_are_removed():
    # Successive hydrolysis constants of one metal decrease (log *β(n) < log *β(n-1)),
    # a check on transcription slips in the mononuclear series.
    for ion in METALS.values():
        series = sorted((-dict(c.reaction)["H+"], c.log_k) for c in LIB.complexes
                        if isinstance(c, Complex) and set(dict(c.reaction)) == {ion, "H+"}
                        and dict(c.reaction)[ion] == 1)
        steps = [b - a for (_, a), (_, b) in zip([(0, 0.0)] + series, series)]
        assert all(s < 0 for s in steps), (ion, series)
