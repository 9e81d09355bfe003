"""Complexes, solids and gases in the core (DESIGN.md §8), through the preset contract.

Known answers are exact algebra worked out beside each case (a quadratic for
a 1:1 complex, √Ksp for a 1:1 salt, a polynomial for water under CO2), with
the ideal activity model so the algebra is the whole story; the constants
are invented for the test except where a source is named.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

import chem
from chem import PresetError, loads_preset, solve
from chem import _kernel as K
from chem._solver import derivatives, fast_data, kernel_inputs, run_kernel, state_of, assemble, _fast_kernel
from chem.problem import LN10, compile

METAL_LIGAND = """
format = 1
activity = "{activity}"
temperature_c = {t}
precipitate = {precip}

[[custom]]
name = "metal M"
pKa = []
species = ["M^2+"]
charge_fully_protonated = 2
protons = 0
counter_ions = {{ "Cl-" = 2 }}

[[custom]]
name = "ligand L"
pKa = []
species = ["L-"]
charge_fully_protonated = -1
protons = 0
counter_ions = {{ "Na+" = 1 }}

[[ingredient]]
name = "metal M"
conc = "{m}"

[[ingredient]]
name = "ligand L"
conc = "{l}"
"""


def metal_ligand(extra: str = "", *, m="10 mM", l="20 mM", activity="ideal", t=25.0, precip="false"):
    return loads_preset(METAL_LIGAND.format(m=m, l=l, activity=activity, t=t, precip=precip) + extra, "test.toml")


ML = """
[[custom_complex]]
name = "ML+"
reaction = { "M^2+" = 1, "L-" = 1 }
log_K = 3.0
"""


def test_one_to_one_complex_matches_the_quadratic():
    # [ML] = x with K = x / ((Tm − x)(Tl − x)): K x² − (K(Tm + Tl) + 1) x + K Tm Tl = 0 (common practice)
    eq = solve(metal_ligand(ML))
    assert eq.converged
    k, tm, tl = 10.0 ** 3.0, 0.010, 0.020
    b = k * (tm + tl) + 1.0
    x = (b - math.sqrt(b * b - 4.0 * k * k * tm * tl)) / (2.0 * k)
    assert eq.get("ML+").conc == pytest.approx(x, rel=1e-10)
    assert eq.get("M^2+").conc == pytest.approx(tm - x, rel=1e-10)
    assert eq.get("L-").conc == pytest.approx(tl - x, rel=1e-10)
    d = eq.to_dict()
    ml = next(s for s in d["species"] if s["name"] == "ML+")
    assert ml["system"] == "complex" and ml["protons"] is None and ml["fraction"] is None
    assert ml["systems"] == {"metal M": 1, "ligand L": 1} and ml["charge"] == 1
    metal = next(s for s in d["systems"] if s["name"] == "metal M")
    assert metal["total_M"] == pytest.approx(tm) and metal["dissolved_M"] == pytest.approx(tm)
    assert metal["free_M"] == pytest.approx(tm - x, rel=1e-10)
    assert [e["species"] for e in metal["distribution"]] == ["ML+", "M^2+"]       # largest first
    assert sum(e["fraction"] for e in metal["distribution"]) == pytest.approx(1.0, abs=1e-12)


def test_hydroxo_complex_written_with_h_minus_or_with_oh_is_the_same_species():
    # M + H2O − H+ = MOH+ with log *K = -8 is M + OH- = MOH+ with log K = -8 + pKw (25 °C; common practice)
    pkw = float(chem.water.pkw(25.0))
    a = solve(metal_ligand('[[custom_complex]]\nname = "MOH+"\nreaction = { "M^2+" = 1, "H+" = -1 }\nlog_K = -8.0\n'))
    b = solve(metal_ligand(f'[[custom_complex]]\nname = "MOH+"\nreaction = {{ "M^2+" = 1, "OH-" = 1 }}\n'
                           f'log_K = {-8.0 + pkw!r}\n'))
    assert a.pH == pytest.approx(b.pH, abs=1e-10)
    assert a.get("MOH+").conc == pytest.approx(b.get("MOH+").conc, rel=1e-9)
    # hydrolysis releases protons: the solution is acidic although M and L are neutral salts
    assert a.pH < 6.0


MX = """
[[custom_solid]]
name = "MX2(s)"
formula = "ML2"
reaction = { "M^2+" = 1, "L-" = 2 }
log_K = -9.0
"""


def test_solid_forms_only_when_allowed_and_then_leaves_the_solution_saturated():
    # Without precipitation: SI = log(Tm·Tl²/Ksp) = log(0.01·0.02²) + 9 = 2.60 (ideal; common practice)
    closed = solve(metal_ligand(MX))
    [s] = closed.solids
    assert s.saturation_index == pytest.approx(math.log10(0.01 * 0.02 ** 2) + 9.0, abs=1e-10)
    assert s.amount == 0.0 and s.allowed is False
    assert any(w.code == "supersaturated" for w in closed.warnings)
    # With it: n precipitates; (Tm − n)(Tl − 2n)² = Ksp, and SI = 0
    open_ = solve(metal_ligand(MX, precip="true"))
    [s] = open_.solids
    assert s.allowed and s.amount > 0 and s.saturation_index == pytest.approx(0.0, abs=1e-9)
    n = s.amount
    assert (0.01 - n) * (0.02 - 2 * n) ** 2 == pytest.approx(1e-9, rel=1e-8)
    metal = open_.system("metal M")
    assert metal.total == pytest.approx(0.01) and metal.dissolved == pytest.approx(0.01 - n, rel=1e-9)
    assert dict(metal.distribution)["MX2(s)"] == pytest.approx(n / 0.01, rel=1e-9)
    assert not any(w.code == "supersaturated" for w in open_.warnings)


def test_precipitate_list_allows_only_the_named_solids():
    text = MX + '\n[[custom_solid]]\nname = "MOH2(s)"\nreaction = { "M^2+" = 1, "OH-" = 2 }\nlog_K = -30.0\n'
    eq = solve(metal_ligand(text, precip='["MOH2(s)"]'))
    by = {s.name: s for s in eq.solids}
    assert by["MX2(s)"].allowed is False and by["MX2(s)"].amount == 0.0
    assert by["MOH2(s)"].allowed is True
    assert eq.to_dict()["precipitate"] == ["MOH2(s)"]


def test_undersaturated_solid_does_not_form():
    eq = solve(metal_ligand(MX, m="10 uM", l="10 uM", precip="true"))
    [s] = eq.solids
    assert s.amount == 0.0 and s.saturation_index < 0


def test_two_solids_sharing_a_metal_meet_the_phase_rule_conditions():
    # Every present solid at SI = 0 with amount > 0, every absent allowed solid at SI ≤ 0 (DESIGN §8.1).
    text = (MX + '\n[[custom_solid]]\nname = "MOH2(s)"\nreaction = { "M^2+" = 1, "OH-" = 2 }\nlog_K = -18.0\n')
    for m_amt in ("1 mM", "10 mM", "50 mM"):
        eq = solve(metal_ligand(text, m=m_amt, l="30 mM", precip="true"))
        assert eq.converged
        for s in eq.solids:
            if s.amount > 0:
                assert s.saturation_index == pytest.approx(0.0, abs=1e-9)
            else:
                assert s.saturation_index <= 1e-9
        # mass balance with the solids included
        metal = eq.system("metal M")
        assert metal.dissolved + sum(s.amount for s in eq.solids) == pytest.approx(metal.total, rel=1e-10)


CO2_GAS = """
[[custom_gas]]
name = "CO2"
reaction = { "H2CO3" = 1 }
log_K = -1.468
dH_kJ = -19.98
"""


def test_water_open_to_air_is_ph_5_6():
    # Pure water in equilibrium with CO2 at 10^-3.4 atm is pH 5.6 (common practice). With K_H = 10^-1.468
    # mol/(L·atm) (Plummer & Busenberg 1982, Table 1, from memory) and the carbonate pKa of the library,
    # ideal: h = K1·C/h + 2·K1·K2·C/h² + Kw/h with C = K_H·p — solved here with mpmath.
    text = ('format = 1\nactivity = "ideal"\n[[gas]]\nname = "CO2"\npressure = 0.000398107\n' + CO2_GAS)
    eq = solve(loads_preset(text, "air.toml"))
    assert eq.converged and eq.pH == pytest.approx(5.6, abs=0.05)
    carb = chem.load_library().system("carbonate")
    k1, k2 = (10.0 ** -p for p in carb.pka_at(25.0))
    kw = 10.0 ** -float(chem.water.pkw(25.0))
    c = 10.0 ** -1.468 * 0.000398107
    h = mp.findroot(lambda h: h - k1 * c / h - 2 * k1 * k2 * c / h ** 2 - kw / h, 2.5e-6)
    assert eq.pH == pytest.approx(-float(mp.log10(h)), abs=1e-9)
    [g] = eq.gases
    assert g.fixed and g.pressure_atm == pytest.approx(0.000398107)
    assert g.dissolved == pytest.approx(c, rel=1e-9)
    assert g.uptake == pytest.approx(eq.system("carbonate").total, rel=1e-12)
    assert eq.system("carbonate").total > 0      # the gas brought carbonate in


def test_a_closed_solution_reports_the_partial_pressure_over_it():
    # 1 mM NaHCO3 closed: p = [H2CO3*] / K_H (DESIGN §8.1), no uptake.
    text = ('format = 1\nactivity = "ideal"\n[[ingredient]]\nname = "sodium bicarbonate"\nconc = "1 mM"\n' + CO2_GAS)
    eq = solve(loads_preset(text, "closed.toml"))
    [g] = eq.gases
    assert not g.fixed and g.uptake == 0.0
    assert g.pressure_atm == pytest.approx(eq.get("H2CO3").conc / 10.0 ** -1.468, rel=1e-9)


def test_conditional_constant_is_reproduced_at_its_ionic_strength():
    # A constant measured at I = 0.1 M (a concentration quotient) holds at I = 0.1 M whatever the model.
    extra = ML.replace("log_K = 3.0", "log_K = 3.0\nionic_strength_M = 0.1")
    salt = '\n[[ingredient]]\nname = "sodium chloride"\nconc = "{}"\n'
    for model in ("davies", "extended-dh"):
        need = 0.010
        for _ in range(4):       # the NaCl amount that makes I = 0.1 M (I is nearly linear in it)
            eq = solve(metal_ligand(extra + salt.format(repr(need)), m="0.1 mM", l="0.1 mM", activity=model))
            need += 0.1 - eq.ionic_strength
        assert eq.ionic_strength == pytest.approx(0.1, rel=1e-7)
        quotient = eq.get("ML+").conc / (eq.get("M^2+").conc * eq.get("L-").conc)
        assert math.log10(quotient) == pytest.approx(3.0, abs=2e-4)


def test_complex_constant_follows_van_t_hoff():
    # ln K(T) = ln K(298.15) − ΔH/R (1/T − 1/298.15) (van 't Hoff; common practice)
    extra = ML + "dH_kJ = 20.0\n"
    eq = solve(metal_ligand(extra, m="0.1 mM", l="0.1 mM", t=60.0))
    q = eq.get("ML+").conc / (eq.get("M^2+").conc * eq.get("L-").conc)
    want = 3.0 - 20000.0 / (8.314462618 * LN10) * (1.0 / 333.15 - 1.0 / 298.15)
    assert math.log10(q) == pytest.approx(want, abs=1e-9)


def test_alkalinity_counts_acceptors_against_the_pk_4_5_reference():
    # 1 mM Na2CO3: alkalinity = [HCO3-] + 2[CO3^2-] + [OH-] − [H+] = 2 mM exactly (Dickson 1981)
    text = 'format = 1\n[[ingredient]]\nname = "sodium carbonate"\nconc = "1 mM"\n'
    eq = solve(loads_preset(text, "alk.toml"))
    assert eq.alkalinity == pytest.approx(0.002, rel=1e-9)
    assert eq.to_dict()["alkalinity_M"] == pytest.approx(0.002, rel=1e-9)
    # strong acid lowers it one for one
    text2 = text + '[[ingredient]]\nname = "hydrochloric acid"\nconc = "0.5 mM"\n'
    assert solve(loads_preset(text2, "alk.toml")).alkalinity == pytest.approx(0.0015, rel=1e-9)


# --------------------------------------------------------------------------
# the fast acid–base path against the general equations
# --------------------------------------------------------------------------

@pytest.mark.parametrize("model", ["ideal", "davies", "extended-dh"])
def test_fast_path_residual_and_jacobian_equal_the_general_ones(model):
    # At random (x, I), with each system's component chosen so its mass balance holds, the general
    # H+ balance equals the fast path's charge balance F, the ionic-strength equations agree, and the
    # general Jacobian reduced to (x, I) (Schur complement over the systems' components) equals the
    # fast path's four partial derivatives.
    lib = chem.load_library()
    names = ["phosphoric acid", "sodium acetate", "ammonium chloride", "citric acid", "tris base", "NaCl", "NaOH"]
    rng = np.random.default_rng(11)
    for _ in range(12):
        mix = chem.Mixture(tuple(chem.Ingredient(lib.reagent(n), float(10 ** rng.uniform(-5, -0.5))) for n in names),
                           activity=model, temperature_c=float(rng.uniform(0, 90)))
        prob = compile(mix)
        st = prob.structure
        assert st.fast
        lnk = LN10 * prob.log_k()
        pkw, a, b = chem._solver.water_constants(mix.temperature_c)
        _, _, _, joint = _fast_kernel(fast_data(prob, lnk), prob.inert_q, prob.inert_i, 10.0 ** -pkw, a, b,
                                      st.model)
        bases, water_gammas, _, _ = _fast_kernel(fast_data(prob, lnk), prob.inert_q, prob.inert_i,
                                                 10.0 ** -pkw, a, b, st.model)
        x = float(rng.uniform(-12, -2))
        ionic = float(10 ** rng.uniform(-3, -0.5))
        g_h, g_oh = water_gammas(ionic)
        f, g, fx, fi, gx, gi = joint(x, ionic, bases(ionic), g_h, g_oh)
        u, lng, conc = chem._solver._state_from_x(prob, lnk, x, ionic, a, b)
        inp = kernel_inputs(prob)
        res = K.Result(u=u[None], ionic=np.array([ionic]), lng=lng[None], conc=conc[None],
                       amounts=np.zeros((1, 0)), eq_mult=np.zeros((1, 0)), converged=np.array([True]),
                       residual=np.zeros(1), iterations=0)
        resid = conc @ st.nu - prob.totals
        assert np.allclose(resid[1:], 0.0, atol=1e-14 * prob.totals[1:].max())
        assert resid[0] == pytest.approx(f, rel=1e-9, abs=1e-15)
        i_general = 0.5 * conc @ st.z2 + prob.inert_i - ionic
        if model != "ideal":
            assert i_general == pytest.approx(g, rel=1e-9, abs=1e-15)
        jac = K.jacobian(inp, res)[0]
        nc = st.n_components
        keep = [0, nc]
        drop = list(range(1, nc))
        jkk = jac[np.ix_(keep, keep)]
        jkd = jac[np.ix_(keep, drop)]
        jdk = jac[np.ix_(drop, keep)]
        jdd = jac[np.ix_(drop, drop)]
        reduced = jkk - jkd @ np.linalg.solve(jdd, jdk)
        # fast-path variables are x = u_H/ln10 and I; its I-equation has the same sign
        assert reduced[0, 0] * LN10 == pytest.approx(fx, rel=1e-8)
        if model != "ideal":
            assert reduced[0, 1] == pytest.approx(fi, rel=1e-7, abs=1e-12)
            assert reduced[1, 0] * LN10 == pytest.approx(gx, rel=1e-7, abs=1e-12)
            assert reduced[1, 1] == pytest.approx(gi, rel=1e-8)


def test_general_kernel_and_fast_path_give_the_same_equilibrium():
    for path in ("demo.toml", "warm-room-rinse.toml", "well-water-hardness.toml"):
        mix = chem.load_preset(chem.presets.shipped_preset_dir().joinpath(path))
        fast = solve(mix)
        prob = compile(mix)
        res = run_kernel(prob, kernel_inputs(prob))
        general = assemble(prob, state_of(res, 0))
        assert general.converged
        assert general.pH == pytest.approx(fast.pH, abs=1e-10)
        assert general.ionic_strength == pytest.approx(fast.ionic_strength, rel=1e-10)


# --------------------------------------------------------------------------
# derivatives
# --------------------------------------------------------------------------

def test_buffer_capacity_with_complexes_and_a_solid_matches_a_finite_difference():
    # β = dC_b/dpH at the solution (implicit-function theorem) against adding a little NaOH (inert Na+).
    text = ML + MX.replace("-9.0", "-8.0") + '\n[[ingredient]]\nname = "acetic acid"\nconc = "5 mM"\n'
    base = metal_ligand(text, activity="davies", precip="true")
    eq = solve(base)
    beta = chem.buffer_capacity_at(eq)
    h = 1e-7
    naoh = chem.load_library().reagent("NaOH")
    up = solve(base.with_ingredient(chem.Ingredient(naoh, h)))
    assert beta == pytest.approx(h / (up.pH - eq.pH), rel=2e-3)


# --------------------------------------------------------------------------
# bad entries: one line naming the file, the entry and the field (DESIGN §8.2)
# --------------------------------------------------------------------------

BAD = {
    "unknown species": ('[[custom_complex]]\nname = "MQ+"\nreaction = { "M^2+" = 1, "Q-" = 1 }\nlog_K = 1\n',
                        "custom complex 1 (MQ+): reaction: unknown species 'Q-'"),
    "zero coefficient": ('[[custom_complex]]\nname = "ML2"\nreaction = { "M^2+" = 1, "L-" = 0 }\nlog_K = 1\n',
                         "custom complex 1 (ML2): reaction: coefficient of 'L-' must not be 0"),
    "fractional coefficient": ('[[custom_complex]]\nname = "ML+"\nreaction = { "M^2+" = 1, "L-" = 1.5 }\nlog_K = 1\n',
                               "reaction: coefficient of 'L-' must be a whole number"),
    "negative on a species": ('[[custom_complex]]\nname = "ML+"\nreaction = { "M^2+" = 1, "L-" = -1 }\nlog_K = 1\n',
                              "only H+ and OH- may have a negative coefficient"),
    "charge suffix": ('[[custom_complex]]\nname = "ML^2+"\nreaction = { "M^2+" = 1, "L-" = 1 }\nlog_K = 1\n',
                      "custom complex 1 (ML^2+): name: 'ML^2+' must carry the reaction's charge +1"),
    "duplicate": (ML + ML, "custom complex 2 (ML+): name: 'ML+' is already a complex"),
    "named like a species": ('[[custom_complex]]\nname = "L-"\nreaction = { "M^2+" = 1, "OH-" = 3 }\nlog_K = 1\n',
                             "name: 'L-' is already a species"),
    "non-finite log K": ('[[custom_complex]]\nname = "ML+"\nreaction = { "M^2+" = 1, "L-" = 1 }\nlog_K = nan\n',
                         "custom complex 1 (ML+): log_K: must be a finite number"),
    "unknown gas": ('[[gas]]\nname = "XeF6"\npressure = "1 atm"\n', "gas 1 (XeF6): name: unknown gas 'XeF6'"),
    "zero pressure": (CO2_GAS + '[[gas]]\nname = "CO2"\npressure = 0\n', "gas 1 (CO2): pressure:"),
    "pressure unit": (CO2_GAS + '[[gas]]\nname = "CO2"\npressure = "3 furlongs"\n',
                      "gas 1 (CO2): pressure: '3 furlongs': unknown pressure unit"),
    "unknown solid": ("", "precipitate: unknown solid 'unobtainium'"),
    "charged gas species": ('[[custom_gas]]\nname = "L(g)"\nreaction = { "L-" = 1 }\nlog_K = 1\n',
                            "the dissolved species of a gas must be neutral"),
    "unknown key": ('[[custom_solid]]\nname = "S"\nreaction = { "M^2+" = 1 }\nlog_K = 1\ncolour = "red"\n',
                    "custom solid 1 (S): unknown key 'colour'" if False else "unknown key 'colour'"),
}


@pytest.mark.parametrize("case", sorted(BAD), ids=lambda c: c.replace(" ", "-"))
def test_bad_entries_give_one_line_naming_file_entry_and_field(case):
    extra, fragment = BAD[case]
    precip = '["unobtainium"]' if case == "unknown solid" else "false"
    with pytest.raises(PresetError) as info:
        metal_ligand(extra, precip=precip)
    msg = str(info.value)
    assert "\n" not in msg and msg.startswith("test.toml:")
    assert fragment in msg


def test_a_fixed_gas_round_trips_through_save_and_load():
    text = ('format = 1\nactivity = "ideal"\n[[gas]]\nname = "CO2"\npressure = "420 uatm"\n' + CO2_GAS)
    mix = loads_preset(text, "air.toml")
    again = loads_preset(chem.dumps_preset(mix), "again.toml")
    assert solve(again).pH == pytest.approx(solve(mix).pH, abs=1e-12)
    assert again.gases[0].text == "420 uatm"
    mix2 = metal_ligand(ML + MX, precip='["MX2(s)"]')
    again2 = loads_preset(chem.dumps_preset(mix2), "again.toml")
    assert again2.precipitate == ("MX2(s)",)
    assert solve(again2).get("ML+").conc == pytest.approx(solve(mix2).get("ML+").conc, rel=1e-12)


def test_derivatives_of_ph_with_respect_to_a_complex_constant_match_a_finite_difference():
    mix = metal_ligand(ML + '[[custom_complex]]\nname = "MOH+"\nreaction = { "M^2+" = 1, "H+" = -1 }\n'
                       'log_K = -7.0\n', activity="davies")
    eq = solve(mix)
    st = eq._problem.structure
    row = [s.name for s in st.species].index("MOH+")
    d_lnk = np.zeros(st.n_species)
    d_lnk[row] = LN10                     # d ln K per unit log K
    dph = -derivatives(eq, d_lnk=d_lnk)[0] / LN10
    h = 1e-6
    mix2 = metal_ligand(ML + '[[custom_complex]]\nname = "MOH+"\nreaction = { "M^2+" = 1, "H+" = -1 }\n'
                        f'log_K = {-7.0 + h!r}\n', activity="davies")
    assert dph == pytest.approx((solve(mix2).pH - eq.pH) / h, rel=1e-4)


@pytest.mark.parametrize("naoh", ["0", "5 mM", "50 mM", "1 M"])
def test_general_kernel_handles_excess_strong_base(naoh):
    # A negligible complex (log K = -30) sends the mixture through the general kernel; the answer must
    # equal the fast acid–base path's, including a negative proton total (more NaOH than acid).
    base = ('[[ingredient]]\nname = "acetic acid"\nconc = "10 mM"\n'
            f'[[ingredient]]\nname = "sodium hydroxide"\nconc = "{naoh}"\n')
    plain = solve(metal_ligand(base, activity="davies"))
    general = solve(metal_ligand(base + ML.replace("3.0", "-30.0"), activity="davies"))
    assert plain.converged and general.converged
    assert general.pH == pytest.approx(plain.pH, abs=1e-10)
    assert general.ionic_strength == pytest.approx(plain.ionic_strength, rel=1e-10)


def test_a_strong_ion_named_only_by_a_candidate_solid_still_counts_in_the_fast_path():
    # A solid that may not form (here MCl2 with precipitation off) makes Cl- a component of the problem
    # without any complex; the fast acid–base path must still count its charge and ionic strength.
    extra = '[[custom_solid]]\nname = "MCl2(s)"\nreaction = { "M^2+" = 1, "Cl-" = 2 }\nlog_K = -3.0\n'
    mix = metal_ligand(extra + '[[ingredient]]\nname = "acetic acid"\nconc = "10 mM"\n', activity="davies")
    prob = compile(mix)
    assert prob.structure.fast and prob.structure.ions          # the regression's precondition
    fast = solve(mix)
    general = assemble(prob, state_of(run_kernel(prob, kernel_inputs(prob)), 0))
    assert fast.pH == pytest.approx(general.pH, abs=1e-10)
    assert fast.ionic_strength == pytest.approx(0.5 * sum(s.charge ** 2 * s.conc for s in fast.species), rel=1e-10)
    assert abs(fast.balance_error) < 1e-15


def test_a_custom_reagent_may_not_take_a_library_name():
    # A custom "sodium chloride" with a pKa would otherwise make every NaCl in the preset acidic.
    text = ('format = 1\n[[custom]]\nname = "Sodium Chloride"\npKa = [4.0]\ncharge_fully_protonated = 0\n'
            'protons = 1\n[[ingredient]]\nname = "sodium chloride"\nconc = "10 mM"\n')
    with pytest.raises(PresetError, match="custom 1 .*name: .* is already the library's reagent 'sodium chloride'"):
        loads_preset(text, "shadow.toml")


@pytest.mark.parametrize("model", ["ideal", "davies", "extended-dh"])
def test_batch_fast_path_equals_the_general_kernel(model):
    # The vectorised acid–base fast path (titrations and sweeps) and the general kernel, on the same
    # 200 random mixtures of one structure, 0–100 °C: the same state to round-off.
    from chem import _fastbatch
    from chem._solver import _general, layout_of
    from chem.problem import component_totals

    lib = chem.load_library()
    names = ["phosphoric acid", "sodium acetate", "ammonium chloride", "citric acid", "tris base", "NaCl", "NaOH"]
    rng = np.random.default_rng(5)
    base = chem.Mixture(tuple(chem.Ingredient(lib.reagent(n), 0.01) for n in names), activity=model)
    prob = compile(base)
    amounts = 10.0 ** rng.uniform(-6, -0.5, (200, len(names)))
    parts = [component_totals(prob.structure, [chem.Ingredient(lib.reagent(n), float(a)) for n, a in zip(names, row)])
             for row in amounts]
    inp = kernel_inputs(prob, t_c=rng.uniform(0, 100, 200), totals=np.array([p[0] for p in parts]),
                        inert_i=np.array([p[2] for p in parts]), inert_q=np.array([p[1] for p in parts]))
    fast = _fastbatch.solve(inp, layout_of(prob.structure))
    general = _general(prob, inp, 200)
    assert fast.converged.all() and general.converged.all()
    assert np.allclose(fast.u[:, 0], general.u[:, 0], rtol=0, atol=1e-9)
    assert np.allclose(fast.ionic, general.ionic, rtol=1e-10)
    assert np.allclose(fast.conc, general.conc, rtol=1e-8, atol=1e-300)
