"""protomix set beside the reference solver, through the public contract only.

Every case goes preset text -> ``chem.loads_preset`` -> ``chem.solve`` ->
``to_dict()`` and is compared field by field with the reference (see
:mod:`tests.reference.compare` for the tolerances), and its balances are
recomputed from the JSON.  Random mixtures come from hypothesis; the
hand-made cases below carry their working.  Constants of the hand-made
cases are invented test inputs unless a source is named.
"""

from __future__ import annotations

import os

import pytest
from hypothesis import HealthCheck, Phase, given, settings

from chem import load_library

from .compare import balance_errors, differences, protomix_json
from .solver import solve
from .spec import Complex, FixedGas, Gas, Solid, Spec, System, to_toml
from .strategies import acid_base_specs, full_specs

# Shrinking a failure calls the reference hundreds of times (minutes), so by default a failing
# example is reported as found, with its preset text; PROTOMIX_REFERENCE_SHRINK=1 shrinks it.
PHASES = [Phase.explicit, Phase.reuse, Phase.generate, Phase.target]
if os.environ.get("PROTOMIX_REFERENCE_SHRINK"):
    PHASES.append(Phase.shrink)
SETTINGS = settings(max_examples=25, deadline=None, report_multiple_bugs=False, phases=PHASES,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


def check(spec: Spec, *, full: bool) -> dict:
    """Solve with protomix and the reference; fail with the preset and every difference."""
    text = to_toml(spec)
    try:
        got = protomix_json(spec)
    except Exception as exc:
        raise AssertionError(f"{text}\nprotomix raised {exc!r}") from exc
    ref = solve(spec)
    problems = differences(spec, ref, got, full=full) + balance_errors(spec, got, full=full)
    assert not problems, "\n".join([text, *problems])
    return got


@SETTINGS
@given(acid_base_specs)
def test_random_acid_base_mixtures_match_the_reference(spec):
    check(spec, full=False)


@SETTINGS
@given(full_specs)
def test_random_full_speciation_mixtures_match_the_reference(spec):
    check(spec, full=True)


# ---------------------------------------------------------------------------
# Hand-made cases
# ---------------------------------------------------------------------------
def metal(name, z, anion="NO3-"):
    charge = "+" if z == 1 else f"^{z}+"
    return System(f"{name} salt", (f"{name}{charge}",), (), z, 0, ((anion, z),))


def anion(name, z, cation="Na+"):
    charge = "-" if z == 1 else f"^{z}-"
    return System(f"sodium {name}", (f"{name}{charge}",), (), -z, 0, ((cation, z),))


# Carbonate at 25 °C from the expressions of Plummer & Busenberg (1982), Geochim. Cosmochim.
# Acta 46, 1011, abstract, evaluated at 298.15 K: log K_H(CO2) = −1.468, pKa1 = 6.352,
# pKa2 = 10.329; calcite log Ksp = −8.480; CaHCO3+ log K = 1.11; CaCO3° log K = 3.22.
# Species names carry "(test)" so that they never stand for the library's own carbonate and calcium.
BICARBONATE = System("sodium bicarbonate (test)", ("H2CO3(test)", "HCO3(test)-", "CO3(test)^2-"), (6.352, 10.329),
                     0, 1, (("Na+", 1),))
CO2 = Gas("CO2 (test gas)", "H2CO3(test)", -1.468)
CALCIUM = System("calcium chloride (test)", ("Ca(test)^2+",), (), 2, 0, (("Cl-", 2),))
CALCIUM_CARBONATE = (
    Complex("CaHCO3(test)+", (("Ca(test)^2+", 1), ("HCO3(test)-", 1)), 1.11),
    Complex("CaCO3(test)", (("Ca(test)^2+", 1), ("CO3(test)^2-", 1)), 3.22),
)
CALCITE = Solid("calcite (test)", (("Ca(test)^2+", 1), ("CO3(test)^2-", 1)), -8.48)

ACID_HA = System("acid HA", ("HA", "A-"), (4.756,), 0, 1, dh_kj=(-0.4,))
AMPHOLYTE = System("ampholyte H2B", ("H3B+", "H2B", "HB-", "B^2-"), (2.0, 6.5, 11.0), 1, 2,
                   dh_kj=(5.0, -20.0, 40.0), dcp_j=(-100.0, 0.0, -250.0), ion_size=6.0)
MX_SALT = (metal("M", 1), anion("X", 1))
MX = Solid("MX(s)", (("M+", 1), ("X-", 1)), -10.0)
M2 = metal("Q", 2)
X2 = anion("Z", 2)

CASES = {
    # Half-neutralised weak acid: [HA] ≈ [A-] ≈ 0.05 M, so pH ≈ pKa(37 °C) + log γ(A-)
    # ≈ 4.756 − 0.1 ≈ 4.66 (Davies, I ≈ 0.05).  Acid–base only: DESIGN §4 keys.
    "half-neutralised acid, 37 C, Davies": (Spec(
        temperature_c=37.0, activity="davies", systems=(ACID_HA,),
        ingredients=(("acid HA", 0.1), ("sodium hydroxide", 0.05))), False),
    # Ampholyte H2B at 10 mM with 0.1 mM HCl at 5 °C (ΔH and ΔCp move every pKa): near the
    # isoelectric point, pH ≈ (pKa1 + pKa2)/2 ≈ 4.25, pulled down a little by the acid.
    "ampholyte with a little acid, 5 C, extended DH": (Spec(
        temperature_c=5.0, activity="extended-dh", systems=(AMPHOLYTE,),
        ingredients=(("ampholyte H2B", 0.01), ("hydrochloric acid", 1e-4))), False),
    # 1 nM of an acid with pKa 3 in pure water at 90 °C (pKw ≈ 12.4): fully dissociated,
    # h² − C h − Kw = 0 (in the ideal limit) so water's own ions dominate.
    "nanomolar acid in hot water, ideal": (Spec(
        temperature_c=90.0, activity="ideal", systems=(System("acid HY", ("HY", "Y-"), (3.0,), 0, 1),),
        ingredients=(("acid HY", 1e-9),)), False),
    # M²⁺ + Z²⁻ = MZ with log K 4.3, no protons involved, ideal: x = [MZ] solves
    # K (CM − x)(CZ − x) = x, the smaller root of K x² − (K (CM + CZ) + 1) x + K CM CZ = 0
    # (CM = 1 mM, CZ = 2.5 mM: x ≈ 0.968 mM).
    "1:1 complex, closed form, ideal": (Spec(
        activity="ideal", systems=(M2, X2), ingredients=(("Q salt", 1e-3), ("sodium Z", 2.5e-3)),
        complexes=(Complex("QZ", (("Q^2+", 1), ("Z^2-", 1)), 4.3),), write_precipitate=True), True),
    # MX(s), log Ksp = −10, from 1 mM M⁺ and 1 mM X⁻, ideal, precipitation allowed:
    # [M] = [X] = √Ksp = 1e-5 M, precipitated 1e-3 − 1e-5 = 9.9e-4 M.
    "salt dissolves to sqrt Ksp": (Spec(
        activity="ideal", systems=MX_SALT, ingredients=(("M salt", 1e-3), ("sodium X", 1e-3)),
        solids=(MX,), precipitate=True), True),
    # The same flask with precipitation off: nothing forms and SI = log10(1e-6/1e-10) = 4
    # (a supersaturated warning is due).
    "salt supersaturated, precipitation off": (Spec(
        activity="ideal", systems=MX_SALT, ingredients=(("M salt", 1e-3), ("sodium X", 1e-3)),
        solids=(MX,), precipitate=False, write_precipitate=True), True),
    # Q²⁺ 10 mM, Z²⁻ 3 mM, NaOH 10 mM, 25 °C, Davies: QZ(s) (log Ksp −9) and Q(OH)2(s)
    # (log Ksp −15.2) both form.  Roughly: Z goes into QZ(s) (3 mM Q), OH into Q(OH)2(s)
    # (5 mM Q), [Q] ≈ 2 mM, [OH] ≈ √(10^-15.2 / 2e-3) ≈ 6e-7 M, pH ≈ 7.8; two solids,
    # three components: the phase rule leaves one degree of freedom, taken by the totals.
    "two solids at once": (Spec(
        activity="davies", systems=(M2, X2),
        ingredients=(("Q salt", 0.01), ("sodium Z", 0.003), ("sodium hydroxide", 0.01)),
        complexes=(Complex("QOH+", (("Q^2+", 1), ("H+", -1)), -9.0, dh_kj=55.0),),
        solids=(Solid("QZ(s)", (("Q^2+", 1), ("Z^2-", 1)), -9.0),
                Solid("Q(OH)2(s)", (("Q^2+", 1), ("OH-", 2)), -15.2, dh_kj=30.0)),
        precipitate=True), True),
    # The same, only Q(OH)2(s) allowed: QZ(s) stays supersaturated (SI > 0, warned), and
    # Q(OH)2(s) takes the hydroxide: [Q] ≈ 5 mM, pH ≈ 7.6.
    "precipitation limited to a list": (Spec(
        activity="davies", systems=(M2, X2),
        ingredients=(("Q salt", 0.01), ("sodium Z", 0.003), ("sodium hydroxide", 0.01)),
        solids=(Solid("QZ(s)", (("Q^2+", 1), ("Z^2-", 1)), -9.0),
                Solid("Q(OH)2(s)", (("Q^2+", 1), ("OH-", 2)), -15.2)),
        precipitate=("Q(OH)2(s)",)), True),
    # Hydrolysing trivalent metal at 90 °C, 1 mM as nitrate: FeOH-like log *K1 = −2.2 and a
    # dimer log *β22 = −2.9 (both with ΔH); the metal's own acidity sets pH ≈ 2.6–3.
    "hydrolysing trivalent metal, dimer, 90 C": (Spec(
        temperature_c=90.0, activity="davies", systems=(metal("T", 3),),
        ingredients=(("T salt", 1e-3),),
        complexes=(Complex("TOH^2+", (("T^3+", 1), ("H+", -1)), -2.2, dh_kj=40.0, ion_size=5.0),
                   Complex("T(OH)2+", (("T^3+", 1), ("H+", -2)), -5.7, dh_kj=70.0),
                   Complex("T2(OH)2^4+", (("T^3+", 2), ("H+", -2)), -2.9, dh_kj=55.0, ion_size=6.0))), True),
    # Chloro complex and a sodium ion pair (strong ions as components), 60 °C, extended DH:
    # Q²⁺ 10 mM as chloride, Na2Z 20 mM; QCl+ log K 0.4, NaZ- log K 0.7, QZ log K 2.5.
    "chloro complex and ion pair, 60 C": (Spec(
        temperature_c=60.0, activity="extended-dh", systems=(metal("Q", 2, "Cl-"), X2),
        ingredients=(("Q salt", 0.01), ("sodium Z", 0.02)),
        complexes=(Complex("QCl+", (("Q^2+", 1), ("Cl-", 1)), 0.4, dh_kj=10.0),
                   Complex("NaZ-", (("Na+", 1), ("Z^2-", 1)), 0.7),
                   Complex("QZ", (("Q^2+", 1), ("Z^2-", 1)), 2.5, dh_kj=-8.0)),
        write_precipitate=True), True),
    # Water open to CO2 at 10^-3.4 atm and nothing else: h³ − (K1 K_H p + Kw) h − 2 K1 K2 K_H p = 0,
    # pH ≈ 5.6 (common practice for rain water); the carbonate total is all uptake.
    "pure water open to CO2": (Spec(
        activity="ideal", systems=(BICARBONATE,), gases=(CO2,),
        fixed=(FixedGas("CO2 (test gas)", 10 ** -3.4, f"{10 ** -3.4!r} atm"),)), True),
    # 1 mM NaHCO3 in a closed flask: pH ≈ (6.352 + 10.329)/2 ≈ 8.3; the equilibrium CO2
    # pressure p = [H2CO3]/K_H is about 10^-3.4 atm, nothing taken up.
    "bicarbonate, closed flask": (Spec(
        activity="davies", systems=(BICARBONATE,), ingredients=(("sodium bicarbonate (test)", 1e-3),),
        gases=(CO2,)), True),
    # Calcite-saturated water under air (420 µatm CO2), 1 mM CaCl2 + 2 mM NaHCO3, Davies:
    # [H2CO3] = 10^-1.468 · 4.2e-4 ≈ 1.4e-5 M, so the bicarbonate alone would give pH ≈
    # 6.352 + log(2e-3/1.4e-5) ≈ 8.5 and [CO3 2-] ≈ 3e-5 M: IAP ≈ 3e-8 > 10^-8.48, calcite forms
    # and gives CO2 off until SI = 0.
    "calcite under air": (Spec(
        activity="davies", systems=(CALCIUM, BICARBONATE),
        ingredients=(("calcium chloride (test)", 1e-3), ("sodium bicarbonate (test)", 2e-3)),
        complexes=CALCIUM_CARBONATE, solids=(CALCITE,), gases=(CO2,),
        fixed=(FixedGas("CO2 (test gas)", 420e-6, "420 uatm"),), precipitate=True), True),
    # Strong base with a hydroxo complex, ideal: Q²⁺ 1 mM, NaOH 0.5 mM, QOH+ log *K = −9.
    # Proton condition [OH-] + [QOH+] = 0.5 mM + [H+], with [QOH+]/[Q²⁺] = 10^-9/a(H+): about
    # half the metal hydrolyses, [QOH+] ≈ 0.49 mM, [OH-] ≈ 10 µM, pH ≈ 8.98.
    "strong base and a hydroxo complex": (Spec(
        activity="ideal", systems=(M2,), ingredients=(("Q salt", 1e-3), ("sodium hydroxide", 5e-4)),
        complexes=(Complex("QOH+", (("Q^2+", 1), ("H+", -1)), -9.0),)), True),
    # Hydroxide from a strong base, ideal: T³⁺ 0.1 mM, NaOH 10 mM, T(OH)3(s) log Ksp −34.74,
    # allowed: 0.3 mM OH- goes into the solid, [OH-] ≈ 9.7 mM, pH ≈ pKw + log 0.0097 ≈ 11.98,
    # dissolved T = Ksp/[OH-]³ ≈ 2e-29 M.
    "hydroxide precipitated by a strong base": (Spec(
        activity="ideal", systems=(metal("T", 3),), ingredients=(("T salt", 1e-4), ("sodium hydroxide", 0.01)),
        solids=(Solid("T(OH)3(s)", (("T^3+", 1), ("OH-", 3)), -34.74),), precipitate=True), True),
    # A hydrolysing metal precipitating against a polybasic ligand, Davies: T³⁺ 40 mM (chloride),
    # K5L 40 mM (pKa 1.354, 5.854, 7.712, 10.687), TCl²⁺ log K 1.137, T(OH)3(s) log Ksp −39.
    # Precipitating the metal frees 120 mM H+, which turns L⁵⁻ into H3L²⁻ (3 × 40 mM), so
    # pH ≈ 3.4 (between pKa1 and pKa2); [T³⁺] = Ksp/(γ³ [OH-]³) ≈ 1e-6 M; the solid holds the rest.
    "metal hydroxide against a polybasic ligand": (Spec(
        activity="davies",
        systems=(metal("T", 3, "Cl-"),
                 System("potassium L", ("H4L-", "H3L^2-", "H2L^3-", "HL^4-", "L^5-"),
                        (1.3541, 5.8541, 7.7118, 10.687), -1, 0, (("K+", 5),))),
        ingredients=(("T salt", 0.04), ("potassium L", 0.04)),
        complexes=(Complex("TCl^2+", (("T^3+", 1), ("Cl-", 1)), 1.137),),
        solids=(Solid("T(OH)3(s)", (("T^3+", 1), ("OH-", 3)), -39.0),), precipitate=True), True),
    # Ampholyte HA at 1 M (pKa 6.796, 7.919) with 12.6 mM M⁺ (chloride) and MA2⁻ log β2 7.44,
    # Davies: pH ≈ (6.80 + 7.92)/2 ≈ 7.36, a little less with the activity corrections (≈ 7.3);
    # most of the metal is MA2⁻; I ≈ 0.22 (past the Davies range: a warning is due, the numbers
    # are still the model's).
    "ampholyte at 1 M with a 1:2 complex": (Spec(
        activity="davies",
        systems=(metal("M", 1, "Cl-"), System("ampholyte HA", ("H2A+", "HA", "A-"), (6.7962, 7.9193), 1, 1)),
        ingredients=(("M salt", 0.0125893), ("ampholyte HA", 1.0)),
        complexes=(Complex("M(A)2-", (("M+", 1), ("A-", 2)), 7.4367),), write_precipitate=True), True),
    # A trace metal in a strong 1:2 complex, Davies: T³⁺ 0.92 pM (chloride), Na2HL 14.8 mM
    # (pKa 0, 1.59, 2.63, 3.63 from H4L+), TL2³⁻ log β2 21.43: the metal is all TL2³⁻, the pH
    # (≈ 2.9) is the ligand's own.
    "trace metal in a strong 1:2 complex": (Spec(
        activity="davies",
        systems=(metal("T", 3, "Cl-"),
                 System("sodium HL", ("H4L+", "H3L", "H2L-", "HL^2-", "L^3-"), (0.0, 1.5917, 2.6275, 3.6275),
                        1, 1, (("Na+", 2),))),
        ingredients=(("T salt", 9.17923e-13), ("sodium HL", 0.0148117)),
        complexes=(Complex("T(L)2^3-", (("T^3+", 1), ("L^3-", 2)), 21.4314, dh_kj=1.25),),
        write_precipitate=True), True),
}


@pytest.mark.parametrize("name", list(CASES))
def test_hand_made_case_matches_the_reference(name):
    spec, full = CASES[name]
    got = check(spec, full=full)
    if full and spec.solids:
        allowed = spec.precipitate
        for s in got["solids"]:
            may_form = allowed is True or (isinstance(allowed, tuple) and s["name"] in allowed)
            if not may_form and s["saturation_index"] > 0:
                assert any(w["code"] == "supersaturated" for w in got["warnings"]), got["warnings"]


def spec_names(spec: Spec) -> set[str]:
    """Every name a spec defines: systems, their species, complexes, solids, gases."""
    names = {s.name for s in spec.systems} | {sp for s in spec.systems for sp in s.species}
    return names | {x.name for x in (*spec.complexes, *spec.solids, *spec.gases)}


def library_names() -> set[str]:
    lib = load_library()
    names = {s.name for s in lib.systems} | {sp for s in lib.systems for sp in s.species}
    names |= {x.name for x in (*lib.complexes, *lib.solids, *lib.gases)}
    names |= {r.name for r in lib.reagents} | {a for r in lib.reagents for a in r.aliases}
    return {n.casefold() for n in names}


@pytest.mark.parametrize("name", list(CASES))
def test_hand_made_case_defines_no_name_of_the_library(name):
    # A custom name that is also a library name would make the comparison depend on how
    # the loader settles the clash, which the contract does not say.
    assert not {n.casefold() for n in spec_names(CASES[name][0])} & library_names()


@settings(max_examples=50, deadline=None)
@given(full_specs)
def test_random_mixtures_define_no_name_of_the_library(spec):
    assert not {n.casefold() for n in spec_names(spec)} & library_names()
