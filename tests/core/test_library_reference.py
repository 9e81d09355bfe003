"""Every acid–base system in ``chem/data/systems.toml`` against published tables.

Each row gives the published 25 °C pKa values (and ΔH where the library has one)
with the table they come from. Rows marked "(from memory)" were recalled, not
re-read; rows marked "read" were read in the named table or equation while the
library was checked. Where the source is a fitted equation of pK(T) its
coefficients are written down and the 25 °C pK and ΔH are worked out here.

Tolerances: pKa 0.02 and ΔH 0.9 kJ/mol, so that moving any library pKa by 0.05
or any ΔH by 2 kJ/mol fails (checked below as well).

Calcium and magnesium (metal hydrolysis) are checked with the other metal data;
systems kept in other data files are not covered here.
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass
from importlib import resources

import numpy as np
import pytest

from chem import Ingredient, Mixture, solve, water

PKA_TOL = 0.02
DH_TOL_KJ = 0.9
R_LN10 = 8.314462618 * math.log(10.0)       # J/(K·mol)
T0 = 298.15
NOT_HERE = {"calcium", "magnesium"}         # metal hydrolysis: checked with the metal data


@dataclass(frozen=True)
class Ref:
    pka: tuple[float | None, ...]
    """Published pKa per step at 25 °C; None for a step the library holds as a nominal value."""
    source: str
    dh: tuple[float | None, ...] | None = None
    """Published ΔH per step, kJ/mol (None: not compared)."""
    ionic_strength: float = 0.0
    """The published values are concentration quotients at this ionic strength (mol/L)."""


def harned(a: float, b: float, c: float) -> tuple[float, float]:
    """pK and ΔH (kJ/mol) at 25 °C from pK = a/T + b + c·T."""
    return a / T0 + b + c * T0, R_LN10 * (a - c * T0 * T0) / 1000.0


def clarke_glew(a: float, b: float, c: float) -> tuple[float, float]:
    """pK and ΔH (kJ/mol) at 25 °C from pK = a/T + b + c·ln T."""
    return a / T0 + b + c * math.log(T0), R_LN10 * (a - c * T0) / 1000.0


def from_k_table(k_values, t_first: float = 0.0, t_step: float = 5.0) -> tuple[float, float]:
    """pK and ΔH (kJ/mol) at 25 °C from a table of K at evenly spaced temperatures.

    A least-squares fit of pK = a/T + b + c·T, the form used by the emf studies the tables come from.
    """
    k = np.asarray(k_values, dtype=float)
    t = t_first + t_step * np.arange(k.size) + 273.15
    a, b, c = np.linalg.lstsq(np.column_stack([1.0 / t, np.ones_like(t), t]), -np.log10(k), rcond=None)[0]
    return harned(a, b, c)


# Equations of pK(T) read or recalled from the papers named in the rows below.
MORRIS_1966 = harned(3000.00, -10.0686, 0.0253)
MILLERO_1988_H2S = clarke_glew(5765.4, -98.080, 15.0455)
HARNED_EMBREE_1934_FORMIC = harned(1342.85, -5.2743, 0.015168)
HARNED_EHLERS_1933_ACETIC = harned(1170.48, -3.1649, 0.013399)
HARNED_EHLERS_1933_PROPIONIC = harned(1213.26, -3.3860, 0.014055)
HARNED_FALLON_1939_OXALIC_2 = harned(1423.8, -6.5007, 0.020095)
HAMER_1945_PHTHALIC_1 = harned(561.57, -1.2843, 0.0078833)
HAMER_ACREE_1945_PHTHALIC_2 = harned(2175.83, -9.55294, 0.025694)
EDEN_BATES_1959_MALIC_1 = harned(1357.85, -5.1382, 0.013550)
EDEN_BATES_1959_MALIC_2 = harned(1658.53, -6.2364, 0.019353)
ROY_1997_ACES = clarke_glew(2548.60, -20.03159, 3.2172)
ROY_1997_CHES = clarke_glew(1917.66, 5.7940, -0.4971)
ROY_1997_CAPS = clarke_glew(1046.64, 35.10191, -4.9342)
ROY_1997_CAPSO = clarke_glew(2106.21, 9.08772, -1.11049)
ROY_1997_EPPS = clarke_glew(359.23, 21.0324, -2.50647)
ROY_1997_MOPSO = clarke_glew(432.25, 22.99923, -3.08415)
ROY_1997_TAPSO = clarke_glew(2254.0057, -4.9783, 0.88672)
ROY_2004_TABS = clarke_glew(1671.305, 14.8737, -2.04383)
ROY_2006_TAPS = clarke_glew(2969.61, -17.05052, 2.73697)
ROY_2014_BISTRIS = clarke_glew(921.66, 14.0007, -1.86197)
WAHMAN_2018_CYANURIC = (1743.0 / T0 + 1.12, R_LN10 * 1743.0 / 1000.0)

# K at 0, 5, ..., °C as reprinted in the 0–60 °C dissociation-constant table of Robinson &
# Stokes (1959) Electrolyte Solutions, 2nd ed., Appendix 12.1 (read in a reprint; attribution of
# the table and of each row to its emf study from memory).
CITRIC_K1 = [6.03e-4, 6.31e-4, 6.69e-4, 6.92e-4, 7.21e-4, 7.45e-4, 7.66e-4, 7.78e-4, 7.96e-4, 7.99e-4, 8.04e-4]
CITRIC_K2 = [1.45e-5, 1.54e-5, 1.60e-5, 1.65e-5, 1.70e-5, 1.73e-5, 1.76e-5, 1.77e-5, 1.78e-5, 1.76e-5, 1.75e-5]
CITRIC_K3 = [4.05e-7, 4.11e-7, 4.14e-7, 4.13e-7, 4.09e-7, 4.02e-7, 3.99e-7, 3.78e-7, 3.69e-7, 3.45e-7, 3.28e-7]
FORMIC_K = [1.638e-4, 1.691e-4, 1.728e-4, 1.749e-4, 1.765e-4, 1.772e-4, 1.768e-4, 1.747e-4, 1.716e-4,
            1.685e-4, 1.650e-4, 1.607e-4, 1.551e-4]
PROPIONIC_K = [1.274e-5, 1.305e-5, 1.326e-5, 1.336e-5, 1.338e-5, 1.336e-5, 1.326e-5, 1.310e-5, 1.280e-5,
               1.257e-5, 1.229e-5, 1.195e-5, 1.160e-5]
MALONIC_K2 = [2.140e-6, 2.165e-6, 2.152e-6, 2.124e-6, 2.076e-6, 2.014e-6, 1.948e-6, 1.863e-6, 1.768e-6,
              1.670e-6, 1.575e-6, 1.469e-6, 1.362e-6]
CITRATE_TABLE = [from_k_table(k) for k in (CITRIC_K1, CITRIC_K2, CITRIC_K3)]
FORMIC_TABLE = from_k_table(FORMIC_K)
PROPIONIC_TABLE = from_k_table(PROPIONIC_K)
MALONIC_TABLE_2 = from_k_table(MALONIC_K2)

GKL = ("Goldberg, Kishore & Lennen (2002) J. Phys. Chem. Ref. Data 31, 231, table of selected "
       "pK, ΔrH°, ΔrCp° at 298.15 K, I = 0")
HARRIS = ("Harris (2010) Quantitative Chemical Analysis, 8th ed., Appendix G, μ = 0 column "
          "(from Martell, Smith & Motekaitis (2001) NIST database 46) (read)")
CRC = ("CRC Handbook of Chemistry and Physics, 86th ed. (2005), 'Dissociation constants of "
       "organic acids and bases', 25 °C (from memory)")
VEGA_BATES = "Vega & Bates (1976) Anal. Chem. 48, 1293, pK2 at 25 °C (read)"

REFERENCE: dict[str, Ref] = {
    # ---- inorganic
    "phosphate": Ref((2.148, 7.198, 12.35), f"{GKL}, phosphate (from memory)", dh=(-8.0, 3.6, 16.0)),
    "carbonate": Ref((6.352, 10.329), "Harned & Davis (1943) J. Am. Chem. Soc. 65, 2030 and Harned & Scholes "
                     f"(1941) J. Am. Chem. Soc. 63, 1706 (from memory); ΔH: {GKL}, carbonate (from memory)",
                     dh=(9.15, 14.70)),
    "sulfate": Ref((None, 1.979), "pK2: Dickson, Wesolowski, Palmer & Mesmer (1990) J. Phys. Chem. 94, 7978 "
                   "(from memory); step 1 is a nominal strong step; ΔH2 from ΔfH° of HSO4- and SO4^2- in Wagman "
                   "et al. (1982) J. Phys. Chem. Ref. Data 11, Suppl. 2 (from memory)", dh=(None, -21.9)),
    "sulfite": Ref((1.857, 7.172), "Goldberg & Parker (1985) J. Res. Natl. Bur. Stand. 90, 341 (from memory)"),
    "nitrite": Ref((3.148,), "Lumme & Tummavuori (1965) Acta Chem. Scand. 19, 617 (from memory); Smith & Martell "
                   "(1976) Critical Stability Constants vol. 4: 3.15 (from memory)"),
    "fluoride": Ref((3.17,), "Smith & Martell (1976) Critical Stability Constants vol. 4, I = 0 (from memory); "
                    "ΔH from Wagman et al. (1982) J. Phys. Chem. Ref. Data 11, Suppl. 2 (from memory)",
                    dh=(-12.55,)),
    "hypochlorite": Ref((MORRIS_1966[0],), "Morris (1966) J. Phys. Chem. 70, 3798: pK = 3000.00/T − 10.0686 + "
                        "0.0253·T", dh=(MORRIS_1966[1],)),
    "sulfide": Ref((MILLERO_1988_H2S[0],), "Millero, Plese & Fernandez (1988) Limnol. Oceanogr. 33, 269: "
                   "pK1 = −98.080 + 5765.4/T + 15.0455·ln T at infinite dilution (read)",
                   dh=(MILLERO_1988_H2S[1],)),
    "cyanide": Ref((9.21,), "Izatt, Christensen, Pack & Bench (1962) Inorg. Chem. 1, 828 (from memory)",
                   dh=(43.5,)),
    "silicate": Ref((9.84,), "Busey & Mesmer (1977) Inorg. Chem. 16, 2444 (from memory)"),
    "arsenate": Ref((2.24, 6.96, 11.50), f"{HARRIS}, arsenic acid"),
    "borate": Ref((9.237,), f"Owen (1934) J. Am. Chem. Soc. 56, 1695 (from memory); ΔH: {GKL}, boric acid "
                  "(from memory)", dh=(13.8,)),
    "ammonia": Ref((9.245,), f"{HARRIS}, ammonia; ΔH: {GKL}, ammonia (from memory)", dh=(51.95,)),
    # ---- carboxylic acids
    "acetate": Ref((4.756,), f"{HARRIS}, acetic acid; ΔH from Harned & Ehlers (1933) J. Am. Chem. Soc. 55, 652: "
                   "pK = 1170.48/T − 3.1649 + 0.013399·T (from memory)", dh=(HARNED_EHLERS_1933_ACETIC[1],)),
    "formate": Ref((FORMIC_TABLE[0],), "Harned & Embree (1934) J. Am. Chem. Soc. 56, 1042, K at 0–60 °C (table "
                   "above)", dh=(FORMIC_TABLE[1],)),
    "oxalate": Ref((1.27, HARNED_FALLON_1939_OXALIC_2[0]),
                   f"pK1, ΔH1: {GKL}, oxalate (from memory); pK2, ΔH2: Harned & Fallon (1939) J. Am. Chem. Soc. 61, "
                   "3111: pK2 = 1423.8/T − 6.5007 + 0.020095·T (from memory)",
                   dh=(-3.9, HARNED_FALLON_1939_OXALIC_2[1])),
    "succinate": Ref((4.207, 5.636), f"Pinching & Bates (1948) J. Res. Natl. Bur. Stand. 40, 405 (from memory); "
                     f"ΔH: {GKL}, succinate (from memory)", dh=(3.0, -0.5)),
    "phthalate": Ref((HAMER_1945_PHTHALIC_1[0], HAMER_ACREE_1945_PHTHALIC_2[0]),
                     "Hamer, Pinching & Acree (1945) J. Res. Natl. Bur. Stand. 35, 539: pK1 = 561.57/T − 1.2843 + "
                     "0.0078833·T; Hamer & Acree (1945) ibid. 35, 381: pK2 = 2175.83/T − 9.55294 + 0.025694·T "
                     "(both from memory)",
                     dh=(HAMER_1945_PHTHALIC_1[1], HAMER_ACREE_1945_PHTHALIC_2[1])),
    "citrate": Ref(tuple(p for p, _ in CITRATE_TABLE), "Bates & Pinching (1949) J. Am. Chem. Soc. 71, 1274, "
                   "K1, K2, K3 at 0–50 °C (table above)", dh=tuple(h for _, h in CITRATE_TABLE)),
    "lactate": Ref((3.860,), "Martin & Tartar (1937) J. Am. Chem. Soc. 59, 2672 (from memory)"),
    "benzoate": Ref((4.204,), CRC),
    "malonate": Ref((2.847, MALONIC_TABLE_2[0]), "pK1: Smith & Martell (1977) Critical Stability Constants vol. 3, "
                    "I = 0 (from memory); pK2: Hamer, Burton & Acree (1940) J. Res. Natl. Bur. Stand. 24, 269, "
                    "K2 at 0–60 °C (table above)"),
    "tartrate": Ref((3.036, 4.366), "Bates & Canham (1951) J. Res. Natl. Bur. Stand. 47, 343 (from memory)"),
    "malate": Ref((EDEN_BATES_1959_MALIC_1[0], EDEN_BATES_1959_MALIC_2[0]),
                  "Eden & Bates (1959) J. Res. Natl. Bur. Stand. 62, 161: −log K1 = 1357.85/T − 5.1382 + 0.013550·T, "
                  "−log K2 = 1658.53/T − 6.2364 + 0.019353·T (read)",
                  dh=(EDEN_BATES_1959_MALIC_1[1], EDEN_BATES_1959_MALIC_2[1])),
    "maleate": Ref((1.92, 6.23), CRC),
    "propionate": Ref((PROPIONIC_TABLE[0],), "Harned & Ehlers (1933) J. Am. Chem. Soc. 55, 2379, K at 0–60 °C "
                      "(table above)", dh=(PROPIONIC_TABLE[1],)),
    "chloroacetate": Ref((2.87,), CRC),
    # ---- amino acids, imidazole, EDTA
    "glycine": Ref((2.350, 9.780), f"Owen (1934) J. Am. Chem. Soc. 56, 24 (pK1) and King (1951) J. Am. Chem. Soc. "
                   f"73, 155 (pK2) (from memory); ΔH: {GKL}, glycine (from memory)", dh=(4.0, 44.2)),
    "glycylglycine": Ref((3.140, 8.265), f"{GKL}, glycylglycine (from memory)", dh=(0.11, 43.4)),
    "imidazole": Ref((6.993,), f"{GKL}, imidazole (from memory)", dh=(36.64,)),
    "edta": Ref((2.00, 2.69, 6.13, 10.37), "Martell & Smith (1974) Critical Stability Constants vol. 1, EDTA, "
                "25 °C, I = 0.1 M concentration quotients (from memory)", ionic_strength=0.1),
    # ---- Good's and related buffers
    "tris": Ref((8.072,), f"{GKL}, Tris (from memory)", dh=(47.45,)),
    "hepes": Ref((7.565,), f"{VEGA_BATES}; ΔH: {GKL}, HEPES (from memory)", dh=(20.4,)),
    "mops": Ref((7.184,), f"{GKL}, MOPS (from memory)", dh=(21.1,)),
    "mes": Ref((6.270,), f"{VEGA_BATES}; ΔH: {GKL}, MES (from memory)", dh=(14.8,)),
    "pipes": Ref((7.141,), f"{GKL}, PIPES (from memory)", dh=(11.2,)),
    "tes": Ref((7.550,), f"{VEGA_BATES}; ΔH: {GKL}, TES (from memory)", dh=(32.13,)),
    "bicine": Ref((8.334,), f"{GKL}, bicine (from memory)", dh=(26.34,)),
    "tricine": Ref((8.135,), f"{GKL}, tricine (from memory)", dh=(31.37,)),
    "aces": Ref((ROY_1997_ACES[0],), "Roy et al. (1997) J. Chem. Eng. Data 42, 41: pK2 = 2548.60/T − 20.03159 + "
                "3.2172·ln T (read)", dh=(ROY_1997_ACES[1],)),
    "ada": Ref((6.844,), f"{GKL}, ADA section p. 242, reaction 3 (read)", dh=(12.23,)),
    "bes": Ref((7.187,), f"{VEGA_BATES}; ΔH: {GKL}, BES (from memory)", dh=(24.25,)),
    "caps": Ref((ROY_1997_CAPS[0],), "Roy et al. (1997) J. Chem. Thermodyn. 29, 749: pK2 = 1046.64/T + 35.10191 − "
                "4.9342·ln T (equation as entered in the library, not re-read)", dh=(ROY_1997_CAPS[1],)),
    "capso": Ref((ROY_1997_CAPSO[0],), "Roy et al. (1997) J. Chem. Thermodyn. 29, 749: pK2 = 2106.21/T + 9.08772 − "
                 "1.11049·ln T (equation as entered in the library, not re-read)", dh=(ROY_1997_CAPSO[1],)),
    "ches": Ref((ROY_1997_CHES[0],), "Roy et al. (1997) J. Chem. Eng. Data 42, 41: pK2 = 1917.66/T + 5.7940 − "
                "0.4971·ln T (read)", dh=(ROY_1997_CHES[1],)),
    "epps": Ref((ROY_1997_EPPS[0],), "Roy et al. (1997) J. Chem. Thermodyn. 29, 1323: pK2 = 359.23/T + 21.0324 − "
                "2.50647·ln T (equation as entered in the library, not re-read)", dh=(ROY_1997_EPPS[1],)),
    "mopso": Ref((ROY_1997_MOPSO[0],), "Roy et al. (1997) J. Chem. Thermodyn. 29, 1323: pK2 = 432.25/T + 22.99923 − "
                 "3.08415·ln T (equation as entered in the library, not re-read)", dh=(ROY_1997_MOPSO[1],)),
    "taps": Ref((ROY_2006_TAPS[0],), "Roy et al. (2006) J. Chem. Thermodyn. 38, 413: pK2 = 2969.61/T − 17.05052 + "
                "2.73697·ln T (equation as entered in the library, not re-read)", dh=(ROY_2006_TAPS[1],)),
    "tapso": Ref((ROY_1997_TAPSO[0],), "Roy et al. (1997) J. Chem. Eng. Data 42, 446: pK2 = 2254.0057/T − 4.9783 + "
                 "0.88672·ln T (equation as entered in the library, not re-read)", dh=(ROY_1997_TAPSO[1],)),
    "heppso": Ref((8.042,), "Roy et al. (1998) J. Solution Chem. 27, 425 (value as entered in the library, "
                  "not re-read)"),
    "tabs": Ref((ROY_2004_TABS[0],), "Roy et al. (2004) J. Solution Chem. 33, 353: pK2 = 1671.305/T + 14.8737 − "
                "2.04383·ln T (equation as entered in the library, not re-read)", dh=(ROY_2004_TABS[1],)),
    "bis-tris": Ref((ROY_2014_BISTRIS[0],), "Roy et al. (2014) J. Biophys. Chem. 5, 118: pKa = 921.66/T + 14.0007 − "
                    "1.86197·ln T (equation as entered in the library, not re-read)", dh=(ROY_2014_BISTRIS[1],)),
    "bis-tris-propane": Ref((6.65, 9.10), f"{GKL}, bis-tris propane (from memory)"),
    # ---- amines
    "triethanolamine": Ref((7.762,), f"{GKL}, triethanolamine (from memory); ΔH: Bates & Allen (1960) J. Res. Natl. "
                           "Bur. Stand. 64A, 343, 33.450 kJ/mol at 25 °C (read)", dh=(33.450,)),
    "ethanolamine": Ref((9.498,), f"{HARRIS}, 2-aminoethanol; ΔH: {GKL}, ethanolamine (from memory)", dh=(50.52,)),
    "diethanolamine": Ref((8.883,), f"{GKL}, diethanolamine (from memory)", dh=(42.08,)),
    "methylamine": Ref((10.66,), CRC),
    "dimethylamine": Ref((10.73,), CRC),
    "trimethylamine": Ref((9.80,), CRC),
    "triethylamine": Ref((10.75,), CRC),
    "ethylenediamine": Ref((6.848, 9.928), "Smith & Martell (1975) Critical Stability Constants vol. 2, "
                           "I = 0 (from memory)"),
    "pyridine": Ref((5.23,), CRC),
    "aniline": Ref((4.601,), f"{HARRIS}, aminobenzene"),
    # ---- other
    "cyanurate": Ref((WAHMAN_2018_CYANURIC[0],), "Wahman (2018) Environ. Sci.: Water Res. Technol. 4, 1522: "
                     "pK = 1743/T + 1.12, ΔH = 33.4 kJ/mol (read)", dh=(WAHMAN_2018_CYANURIC[1],)),
}


def system_entries() -> list[dict]:
    text = resources.files("chem.data").joinpath("systems.toml").read_text(encoding="utf-8")
    return [s for s in tomllib.loads(text).get("system", []) if s["name"] not in NOT_HERE]


def systems_in_data_file() -> list[str]:
    return [s["name"] for s in system_entries()]


@pytest.mark.parametrize("entry", system_entries(), ids=lambda e: e["name"])
def test_every_source_names_its_works_with_a_year(entry):
    src = entry["source"]
    assert re.search(r"\((?:[^()]*, )?(1[89]|20)\d\d\)", src), "no (year) in the source"
    for m in re.finditer(r"CRC Handbook", src):
        assert re.search(r"\b(19|20)\d\d\)", src[m.start():m.start() + 90]), "CRC Handbook without a year"
    for m in re.finditer(r"Critical Stability Constants", src):
        assert re.search(r"\((19|20)\d\d\) ", src[max(0, m.start() - 16):m.start()]), "compilation without a year"


def pka_matches(value: float, published: float) -> bool:
    return abs(value - published) <= PKA_TOL


def dh_matches(value: float, published: float) -> bool:
    return abs(value - published) <= DH_TOL_KJ


def test_every_system_in_the_data_file_has_a_reference_row():
    missing = sorted(set(systems_in_data_file()) - set(REFERENCE))
    assert not missing, f"no published reference row for: {', '.join(missing)}"


def test_every_reference_row_names_a_system_of_the_data_file():
    assert sorted(set(REFERENCE) - set(systems_in_data_file())) == []


@pytest.mark.parametrize("name", sorted(REFERENCE))
def test_pka_matches_the_published_table(lib, name):
    ref, sys_ = REFERENCE[name], lib.system(name)
    assert len(ref.pka) == sys_.steps, ref.source
    assert sys_.ionic_strength == pytest.approx(ref.ionic_strength), ref.source
    for step, (value, published) in enumerate(zip(sys_.pka, ref.pka), start=1):
        if published is None:
            assert value < 0.0, f"{name} step {step}: a nominal strong step must stay below 0"
            continue
        assert pka_matches(value, published), f"{name} pKa{step} = {value} vs {published:.3f} ({ref.source})"


@pytest.mark.parametrize("name", sorted(n for n, r in REFERENCE.items() if r.dh is not None))
def test_enthalpy_matches_the_published_table(lib, name):
    ref, sys_ = REFERENCE[name], lib.system(name)
    assert sys_.dh_kj is not None, f"{name}: the library has lost its ΔH ({ref.source})"
    for step, (value, published) in enumerate(zip(sys_.dh_kj, ref.dh), start=1):
        if published is not None:
            assert dh_matches(value, published), f"{name} ΔH{step} = {value} vs {published:.2f} ({ref.source})"


def test_every_library_enthalpy_has_a_published_row(lib):
    lacking = [n for n in REFERENCE if lib.system(n).dh_kj is not None and REFERENCE[n].dh is None]
    assert lacking == []


def test_the_tolerances_catch_a_shift_of_005_in_any_pka_or_2_kj_in_any_enthalpy(lib):
    for name, ref in REFERENCE.items():
        sys_ = lib.system(name)
        for value, published in zip(sys_.pka, ref.pka):
            if published is not None:
                assert not pka_matches(value + 0.05, published) and not pka_matches(value - 0.05, published), name
        for value, published in zip(sys_.dh_kj or (), ref.dh or ()):
            if published is not None:
                assert not dh_matches(value + 2.0, published) and not dh_matches(value - 2.0, published), name


def test_edta_quotients_at_i_01_are_reproduced_by_the_activity_model(lib):
    # Martell & Smith (1974) vol. 1 (from memory): log K(HY) = 10.37 at 25 °C as a concentration
    # quotient at I = 0.1 M. EDTA^4- half neutralised, brought to I = 0.1 with NaCl (Davies): the
    # solver's quotient [H+][Y]/[HY] must give back 10.37, i.e. the I = 0.1 values are taken as
    # quotients at I = 0.1 and not corrected a second time.
    mix = Mixture((Ingredient(lib.reagent("tetrasodium edta"), 0.001),
                   Ingredient(lib.reagent("hydrochloric acid"), 0.0005),
                   Ingredient(lib.reagent("sodium chloride"), 0.0915)), activity="davies")
    eq = solve(mix)
    assert eq.converged
    assert eq.ionic_strength == pytest.approx(0.1, abs=0.002)
    h, hy, y = eq.get("H+"), eq.get("HEDTA^3-"), eq.get("EDTA^4-")
    assert -math.log10(h.conc * y.conc / hy.conc) == pytest.approx(10.37, abs=0.01)


# ---------------------------------------------------------------------------
# The phthalate primary standard (0.05 mol/kg potassium hydrogen phthalate) between 0 and
# 50 °C depends on ΔH and ΔCp of both steps. The activity model shifts the whole curve by a
# near-constant amount, so the change from 25 °C is compared.
#  - Hetzer, Durst, Robinson & Bates (1977) J. Res. Natl. Bur. Stand. 81A, 21 (read):
#    pH(S) = 2073.44/T − 13.3270 + 0.045199·T − 3.4846e-5·T², 0–60 °C.
#  - Buck et al. (2002) Pure Appl. Chem. 74, 2169, table of pH(PS) values: 4.000 at 0 °C and
#    4.005 at 25 °C (from memory).
# Without ΔCp the library's change from 25 to 0 °C was −0.031 (standards: +0.004 and −0.005).
# ---------------------------------------------------------------------------
def hetzer_1977(t_c: float) -> float:
    t = t_c + 273.15
    return 2073.44 / t - 13.3270 + 0.045199 * t - 3.4846e-5 * t * t


def khp_ph(lib, t_c: float, model: str) -> float:
    rho = float(water.density(t_c))
    eq = solve(Mixture((Ingredient(lib.reagent("potassium hydrogen phthalate"), 0.05 * rho),),
                       temperature_c=t_c, activity=model))
    assert eq.converged
    return eq.pH


@pytest.mark.parametrize("model", ["davies", "extended-dh"])
@pytest.mark.parametrize("t_c", [0.0, 10.0, 37.0, 50.0])
def test_phthalate_standard_follows_the_nbs_redetermination(lib, t_c, model):
    change = khp_ph(lib, t_c, model) - khp_ph(lib, 25.0, model)
    assert change == pytest.approx(hetzer_1977(t_c) - hetzer_1977(25.0), abs=0.008)


@pytest.mark.parametrize("model", ["davies", "extended-dh"])
def test_phthalate_standard_at_0c_against_the_iupac_table(lib, model):
    change = khp_ph(lib, 0.0, model) - khp_ph(lib, 25.0, model)
    assert change == pytest.approx(4.000 - 4.005, abs=0.015)
