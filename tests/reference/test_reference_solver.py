"""The reference solver against closed forms, and its own equilibrium conditions.

Closed forms are solved with mpmath at 60 digits (polynomial roots); the
reference must agree to 1e-30 relative.  Random mixtures must meet every
condition of the model to 1e-30: mass and charge balances, mass action for
every complex, solid and gas, the self-consistent ionic strength with the
model's activity coefficients, and the phase rule.
"""

from __future__ import annotations

import mpmath as mp
import pytest
from hypothesis import HealthCheck, given, settings

from chem import water

from .solver import solve, strong_ions
from .spec import Complex, FixedGas, Gas, Solid, Spec, System
from .strategies import full_specs

pytestmark = pytest.mark.filterwarnings("ignore:Descending:DeprecationWarning")
TIGHT = mp.mpf("1e-30")


@pytest.fixture(autouse=True)
def _sixty_digits():
    """Closed forms and differences are worked at 60 digits."""
    with mp.workdps(60):
        yield


def metal(name, z, anion="NO3-"):
    return System(f"metal {name}", (f"{name}{'+' if z == 1 else f'^{z}+'}",), (), z, 0, ((anion, z),))


def anion(name, z, cation="Na+"):
    return System(f"anion {name}", (f"{name}{'-' if z == 1 else f'^{z}-'}",), (), -z, 0, ((cation, z),))


def rel(a, b):
    return abs(a - b) / abs(b)


def positive_root(coeffs):
    with mp.workdps(60):
        roots = mp.polyroots(coeffs, maxsteps=400, extraprec=400)
        pos = [r.real for r in roots if abs(r.imag) < mp.mpf("1e-50") and r.real > 0]
    assert len(pos) == 1, roots
    return pos[0]


def ln_k(log_k25, dh_kj, dcp_j, t_c):
    """Integrated van 't Hoff with constant ΔCp, written out again for the test."""
    T, T0, R = mp.mpf(t_c) + mp.mpf("273.15"), mp.mpf("298.15"), mp.mpf("8.314462618")
    return (mp.mpf(log_k25) * mp.log(10) - mp.mpf(dh_kj) * 1000 / R * (1 / T - 1 / T0)
            + mp.mpf(dcp_j) / R * (T0 / T - 1 + mp.log(T / T0)))


@pytest.mark.parametrize("pka", [-1.0, 4.756, 9.25, 13.5])
@pytest.mark.parametrize("conc", [1e-9, 1e-4, 1.0])
@pytest.mark.parametrize("t_c, dh, dcp", [(25.0, 0.0, 0.0), (62.5, 21.0, -150.0), (3.0, -8.0, 40.0)])
def test_weak_acid_matches_the_cubic(pka, conc, t_c, dh, dcp):
    # Charge balance of HA at C (ideal): h = Kw/h + C Ka/(Ka + h), i.e.
    # h³ + Ka h² − (Kw + C Ka) h − Ka Kw = 0, with Ka(T) by van 't Hoff.
    acid = System("acid HA", ("HA", "A-"), (pka,), 0, 1, dh_kj=(dh,), dcp_j=(dcp,))
    r = solve(Spec(temperature_c=t_c, activity="ideal", systems=(acid,), ingredients=(("acid HA", conc),)))
    with mp.workdps(60):
        kw = mp.mpf(10) ** -mp.mpf(float(water.pkw(t_c)))
        ka = mp.exp(ln_k(-pka, dh, dcp, t_c))
        c = mp.mpf(conc)
        h = positive_root([1, ka, -(kw + c * ka), -ka * kw])
        assert rel(r.species["H+"].conc, h) < TIGHT
        assert rel(r.species["A-"].conc, c * ka / (ka + h)) < TIGHT


def test_diprotic_salt_with_strong_base_matches_the_quartic():
    # NaHA (pKa 4, 9) at 0.1 M plus 0.02 M NaOH, ideal: Na + h = Kw/h + C(K1 h + 2K1K2)/(h² + K1 h + K1K2)
    # with Na = 0.12, C = 0.1; multiplied out: a quartic in h.
    acid = System("acid H2A", ("H2A", "HA-", "A^2-"), (4.0, 9.0), 0, 1, (("Na+", 1),))
    r = solve(Spec(activity="ideal", systems=(acid,), ingredients=(("acid H2A", 0.1), ("sodium hydroxide", 0.02))))
    with mp.workdps(60):
        kw = mp.mpf(10) ** -mp.mpf(float(water.pkw(25.0)))
        k1, k2, c, na = mp.mpf(10) ** -4, mp.mpf(10) ** -9, mp.mpf(0.1), mp.mpf(0.1) + mp.mpf(0.02)
        # (h + na)(h² + K1 h + K1K2) h − kw (h² + K1 h + K1K2) − c h (K1 h + 2 K1 K2) = 0
        coeffs = [1, k1 + na, k1 * k2 + na * k1 - kw - c * k1, na * k1 * k2 - kw * k1 - 2 * c * k1 * k2, -kw * k1 * k2]
        h = positive_root(coeffs)
    assert rel(r.species["H+"].conc, h) < TIGHT


def test_one_to_one_complex_matches_the_quadratic():
    # M²⁺ + L²⁻ = ML, log K = 4.3, no protons involved, ideal: with x = [ML],
    # K (CM − x)(CL − x) = x  ->  K x² − (K (CM + CL) + 1) x + K CM CL = 0, smaller root.
    spec = Spec(activity="ideal", systems=(metal("M", 2), anion("L", 2)),
                ingredients=(("metal M", 1e-3), ("anion L", 2.5e-3)),
                complexes=(Complex("ML", (("M^2+", 1), ("L^2-", 1)), 4.3),))
    r = solve(spec)
    with mp.workdps(60):
        k, cm, cl = mp.mpf(10) ** mp.mpf(4.3), mp.mpf(1e-3), mp.mpf(2.5e-3)
        bq = k * (cm + cl) + 1
        x = (bq - mp.sqrt(bq * bq - 4 * k * k * cm * cl)) / (2 * k)
    assert rel(r.species["ML"].conc, x) < TIGHT
    assert rel(r.species["M^2+"].conc, cm - x) < TIGHT
    assert rel(r.systems["metal M"].free, cm - x) < TIGHT
    assert rel(r.systems["metal M"].dissolved, cm) < TIGHT


SALT = (metal("M", 1), anion("X", 1))
MX = Solid("MX(s)", (("M+", 1), ("X-", 1)), -10.0)


def test_salt_from_equal_amounts_dissolves_to_the_square_root_of_ksp():
    # M⁺ + X⁻ at 1 mM each, MX(s) log Ksp = −10, ideal, precipitation allowed:
    # [M] = [X] = s, s² = Ksp  ->  s = 1e-5 M; precipitated 1e-3 − 1e-5 M.
    r = solve(Spec(activity="ideal", systems=SALT, ingredients=(("metal M", 1e-3), ("anion X", 1e-3)),
                   solids=(MX,), precipitate=True))
    s = mp.mpf(10) ** -5
    assert rel(r.species["M+"].conc, s) < TIGHT and rel(r.species["X-"].conc, s) < TIGHT
    assert rel(r.solids["MX(s)"].amount, mp.mpf(1e-3) - s) < TIGHT
    assert abs(r.solids["MX(s)"].saturation_index) < TIGHT
    assert r.solid_set == ("MX(s)",)


def test_salt_with_an_excess_of_one_ion_matches_the_quadratic():
    # CM = 2 mM, CX = 1 mM: (CM − n)(CX − n) = Ksp  ->  n = ((CM + CX) − √((CM − CX)² + 4 Ksp)) / 2.
    r = solve(Spec(activity="ideal", systems=SALT, ingredients=(("metal M", 2e-3), ("anion X", 1e-3)),
                   solids=(MX,), precipitate=("MX(s)",)))
    with mp.workdps(60):
        cm, cx, ksp = mp.mpf(2e-3), mp.mpf(1e-3), mp.mpf(10) ** -10
        n = ((cm + cx) - mp.sqrt((cm - cx) ** 2 + 4 * ksp)) / 2
    assert rel(r.solids["MX(s)"].amount, n) < TIGHT
    assert rel(r.species["X-"].conc, cx - n) < TIGHT


@pytest.mark.parametrize("precipitate", [False, ("M2X2(s)",)])
def test_salt_that_may_not_form_stays_supersaturated(precipitate):
    # MX(s) not allowed to form: everything stays dissolved, SI = log10(CM CX / Ksp)
    # = log10(1e-6 / 1e-10) = 4.  M2X2(s) (log Ksp = −5), when allowed, is undersaturated:
    # SI = log10(CM² CX²) + 5 = −7, so it does not form either.
    other = Solid("M2X2(s)", (("M+", 2), ("X-", 2)), -5.0)
    r = solve(Spec(activity="ideal", systems=SALT, ingredients=(("metal M", 1e-3), ("anion X", 1e-3)),
                   solids=(MX, other), precipitate=precipitate))
    log_c = mp.log10(mp.mpf(1e-3))          # the float 1e-3, as in the spec
    assert abs(r.solids["MX(s)"].saturation_index - (2 * log_c + 10)) < TIGHT
    assert abs(r.solids["M2X2(s)"].saturation_index - (4 * log_c + 5)) < TIGHT
    assert r.solids["MX(s)"].amount == 0 and not r.solids["MX(s)"].allowed
    assert r.solids["M2X2(s)"].amount == 0 and r.solids["M2X2(s)"].allowed == bool(precipitate)
    assert rel(r.species["M+"].conc, mp.mpf(1e-3)) < TIGHT


# Carbonic acid (H2CO3 stands for CO2(aq) + H2CO3) at 25 °C: log K_H = −1.468, pKa1 = 6.352,
# pKa2 = 10.329 from the expressions of Plummer & Busenberg (1982), Geochim. Cosmochim. Acta 46,
# 1011, abstract (log KH, log K1, log K2 as functions of T, evaluated at 298.15 K).
CARBONIC = System("carbonic acid", ("H2CO3", "HCO3-", "CO3^2-"), (6.352, 10.329), 0, 2)
CO2 = Gas("CO2(g)", "H2CO3", -1.468)


def test_water_open_to_carbon_dioxide_matches_the_cubic_and_is_near_ph_5_6():
    # Pure water held at p(CO2) = 10^-3.4 atm, ideal: [H2CO3] = K_H p is fixed and
    # h = [HCO3-] + 2[CO3 2-] + [OH-] = K1 K_H p / h + 2 K1 K2 K_H p / h² + Kw / h,
    # i.e. h³ − (K1 K_H p + Kw) h − 2 K1 K2 K_H p = 0.  Rain water in equilibrium with
    # air is near pH 5.6 (common practice).
    p = 10 ** -3.4
    r = solve(Spec(activity="ideal", systems=(CARBONIC,), gases=(CO2,), fixed=(FixedGas("CO2(g)", p, f"{p} atm"),)))
    with mp.workdps(60):
        kw = mp.mpf(10) ** -mp.mpf(float(water.pkw(25.0)))
        kh, k1, k2 = (mp.mpf(10) ** mp.mpf(v) for v in (-1.468, -6.352, -10.329))
        h = positive_root([1, 0, -(k1 * kh * p + kw), -2 * k1 * k2 * kh * p])
        uptake = kh * p * (1 + k1 / h + k1 * k2 / h ** 2)
    assert rel(r.species["H+"].conc, h) < TIGHT
    assert abs(r.pH - 5.6) < 0.05
    gas = r.gases["CO2(g)"]
    assert rel(gas.uptake, uptake) < TIGHT and rel(r.systems["carbonic acid"].total, uptake) < TIGHT
    assert rel(gas.dissolved, kh * p) < TIGHT


def test_closed_solution_reports_the_equilibrium_pressure():
    # 1 mM carbonic acid in a closed flask: p = [H2CO3] / K_H, nothing taken up.
    r = solve(Spec(activity="ideal", systems=(CARBONIC,), ingredients=(("carbonic acid", 1e-3),), gases=(CO2,)))
    gas = r.gases["CO2(g)"]
    assert rel(gas.pressure, r.species["H2CO3"].conc / mp.mpf(10) ** mp.mpf(-1.468)) < TIGHT
    assert gas.uptake == 0 and not gas.fixed


@pytest.mark.parametrize("model", ["davies", "extended-dh"])
def test_sodium_chloride_solution_is_self_consistent(model):
    # 0.05 M NaCl: [H+] = [OH-] = h with h² γ(H+) γ(OH-) = Kw, and I = 0.05 + h.
    # γ of each ion from the model at that I, with the sizes of chem/data/ions.toml.
    r = solve(Spec(activity=model, ingredients=(("sodium chloride", 0.05),)))
    sizes = {name: mp.mpf(size) for name, (_z, size) in strong_ions().items()}
    a, b = mp.mpf(float(water.debye_huckel_a(25.0))), mp.mpf(float(water.debye_huckel_b(25.0)))
    ionic = r.ionic_strength
    si = mp.sqrt(ionic)

    def gamma(name):
        if model == "davies":
            return mp.mpf(10) ** (-a * (si / (1 + si) - mp.mpf("0.3") * ionic))
        return mp.mpf(10) ** (-a * si / (1 + b * sizes[name] * si))

    h = r.species["H+"].conc
    assert rel(r.species["OH-"].conc, h) < TIGHT
    assert rel(ionic, mp.mpf(0.05) + h) < TIGHT
    for name in ("H+", "OH-", "Na+", "Cl-"):
        assert rel(r.species[name].gamma, gamma(name)) < TIGHT
    assert rel(h * h * gamma("H+") * gamma("OH-"), mp.mpf(10) ** -mp.mpf(float(water.pkw(25.0)))) < TIGHT


@settings(max_examples=8, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                                                 HealthCheck.function_scoped_fixture])
@given(full_specs)
def test_random_reference_results_meet_every_condition_of_the_model(spec):
    r = solve(spec)
    assert r.mass_residual < TIGHT and r.charge_residual < TIGHT
    with mp.workdps(45):
        species = r.species
        assert rel(mp.fsum(s.charge ** 2 * s.conc for s in species.values()) / 2, r.ionic_strength) < TIGHT
        log_a = {n: mp.log10(s.conc * s.gamma) for n, s in species.items() if s.conc > 0}
        assert abs(log_a["H+"] + r.pH) < TIGHT
        t_c = spec.temperature_c
        lg10 = mp.log(10)
        # water
        assert abs(log_a["H+"] + log_a["OH-"] + mp.mpf(float(water.pkw(t_c)))) < TIGHT
        # acid–base steps
        for sys_ in spec.systems:
            if sys_.name not in r.systems:
                continue
            for k, pka in enumerate(sys_.pka):
                dh = 0.0 if sys_.dh_kj is None else sys_.dh_kj[k]
                dcp = 0.0 if sys_.dcp_j is None or sys_.dh_kj is None else sys_.dcp_j[k]
                lhs = log_a[sys_.species[k + 1]] + log_a["H+"] - log_a[sys_.species[k]]
                assert abs(lhs - ln_k(-pka, dh, dcp, t_c) / lg10) < TIGHT
        # complexes: log a(complex) = log K(T) + Σ ν log a(reactant)
        for c in spec.complexes:
            if c.name in species:
                rhs = ln_k(c.log_k, c.dh_kj or 0.0, 0.0, t_c) / lg10 + mp.fsum(k * log_a[n] for n, k in c.reaction)
                assert abs(log_a[c.name] - rhs) < TIGHT
        # solids: SI from activities; phase rule
        for s in spec.solids:
            if s.name not in r.solids:
                continue
            rs = r.solids[s.name]
            si = mp.fsum(k * log_a[n] for n, k in s.reaction) - ln_k(s.log_k, s.dh_kj or 0.0, 0.0, t_c) / lg10
            assert abs(rs.saturation_index - si) < TIGHT
            assert rs.amount >= 0
            if rs.amount > 0:
                assert abs(si) < TIGHT and rs.allowed
            if rs.allowed:
                assert si < TIGHT
        # gases: a = K_H p
        for g in spec.gases:
            if g.name in r.gases:
                rg = r.gases[g.name]
                lhs = log_a[g.species] - ln_k(g.log_k, g.dh_kj or 0.0, 0.0, t_c) / lg10
                assert abs(lhs - mp.log10(rg.pressure)) < TIGHT
        # activity coefficients from the model at the reported ionic strength
        sizes = {n: z_size[1] for n, z_size in strong_ions().items()}
        for sys_ in spec.systems:
            for n in sys_.species:
                sizes[n] = sys_.ion_size if sys_.ion_size is not None else 4.0
        for c in spec.complexes:
            sizes[c.name] = c.ion_size if c.ion_size is not None else 4.0
        sizes["H+"], sizes["OH-"] = 9.0, 3.5
        a = mp.mpf(float(water.debye_huckel_a(t_c)))
        b = mp.mpf(float(water.debye_huckel_b(t_c)))
        si_ = mp.sqrt(r.ionic_strength)
        for n, s in species.items():
            z2 = s.charge ** 2
            if spec.activity == "ideal" or z2 == 0:
                lg = mp.mpf(0)
            elif spec.activity == "davies":
                lg = -a * z2 * (si_ / (1 + si_) - mp.mpf("0.3") * r.ionic_strength)
            else:
                lg = -a * z2 * si_ / (1 + b * mp.mpf(sizes[n]) * si_)
            assert abs(mp.log10(s.gamma) - lg) < TIGHT
