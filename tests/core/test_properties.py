"""Property tests: random mixtures from the library always solve and balance."""

from __future__ import annotations

import math

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from chem import FixedGas, Ingredient, Mixture, ModelError, load_library, solve

LIB = load_library()
REAGENTS = LIB.reagents
MODELS = ["ideal", "davies", "extended-dh"]

ingredient = st.builds(
    lambda i, logc: Ingredient(REAGENTS[i], 10.0 ** logc),
    st.integers(0, len(REAGENTS) - 1), st.floats(-12.0, math.log10(0.5)))
mixtures = st.builds(
    lambda ings, t, model: Mixture(tuple(ings), temperature_c=t, activity=model),
    st.lists(ingredient, min_size=0, max_size=30), st.floats(0.0, 100.0), st.sampled_from(MODELS))

SETTINGS = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def charge_scale(eq) -> float:
    return sum(abs(s.charge) * s.conc for s in eq.species)


@SETTINGS
@given(mixtures)
def test_random_mixtures_converge_and_balance(mix):
    eq = solve(mix)
    assert eq.converged, eq.message
    assert math.isfinite(eq.pH)
    # charge balance to 1e-12 relative to the total charge carried
    net = sum(s.charge * s.conc for s in eq.species)
    assert abs(net) <= 1e-12 * charge_scale(eq)
    # mass balance and fractions of every system
    # (its own forms, plus the complexes holding it, counted by the units they hold)
    for state in eq.systems:
        name, total = state.name, state.total
        forms = eq.species_of(name)
        bound = [s for s in eq.species if s.system == "complex" and name in dict(s.holds)]
        held = math.fsum(s.conc for s in forms) + math.fsum(dict(s.holds)[name] * s.conc for s in bound)
        assert held == pytest.approx(total, rel=1e-10, abs=1e-300)
        assert math.fsum(s.conc for s in forms) == pytest.approx(state.free, rel=1e-12, abs=1e-300)
        assert math.fsum(f for _, f in state.distribution) == pytest.approx(1.0, abs=1e-10)
        if not bound:
            assert math.fsum(s.fraction for s in forms) == pytest.approx(1.0, abs=1e-12)
    # ionic strength is self-consistent
    i_calc = 0.5 * math.fsum(s.charge ** 2 * s.conc for s in eq.species)
    assert eq.ionic_strength == pytest.approx(i_calc, rel=1e-8, abs=1e-18)


@SETTINGS
@given(mixtures, st.floats(-6.0, -1.0), st.sampled_from(["hydrochloric acid", "sodium hydroxide"]))
def test_adding_acid_lowers_and_base_raises_ph(mix, log_amount, titrant):
    before = solve(mix)
    after = solve(mix.with_ingredient(Ingredient(LIB.reagent(titrant), 10.0 ** log_amount)))
    if titrant == "hydrochloric acid":
        assert after.pH < before.pH
    else:
        assert after.pH > before.pH


@pytest.mark.parametrize("name", ["hydrochloric acid", "sodium hydroxide", "sulfuric acid", "potassium hydroxide"])
@pytest.mark.parametrize("conc", [1e-12, 1e-7, 1.0, 5.0])
@pytest.mark.parametrize("model", MODELS)
def test_strong_excess_and_extremes_converge(name, conc, model):
    mix = Mixture((Ingredient(LIB.reagent(name), conc), Ingredient(LIB.reagent("acetic acid"), 0.01)),
                  activity=model)
    eq = solve(mix)
    assert eq.converged
    net = sum(s.charge * s.conc for s in eq.species)
    assert abs(net) <= 1e-12 * charge_scale(eq)


def test_thirty_systems_at_once_converge():
    with_systems = [r for r in REAGENTS if r.system is not None]
    seen, picked = set(), []
    for r in with_systems:
        if r.system.name not in seen:
            seen.add(r.system.name)
            picked.append(Ingredient(r, 0.01))
        if len(picked) == 30:
            break
    eq = solve(Mixture(tuple(picked), temperature_c=37.0))
    assert len(eq.systems) == 30 and eq.converged


def test_starved_solver_says_it_did_not_converge():
    # As scipy's root finders do: a result that ran out of iterations reports it.
    mix = Mixture((Ingredient(LIB.reagent("KH2PO4"), 0.025), Ingredient(LIB.reagent("Na2HPO4"), 0.025)))
    eq = solve(mix, max_iter=1)
    assert eq.converged is False
    assert any(w.code == "not-converged" for w in eq.warnings)


concentrated = st.builds(
    lambda ings, t, model: Mixture(tuple(ings), temperature_c=t, activity=model),
    st.lists(st.builds(lambda i, logc: Ingredient(REAGENTS[i], 10.0 ** logc),
                       st.integers(0, len(REAGENTS) - 1), st.floats(-12.0, math.log10(5.0))),
             min_size=1, max_size=4),
    st.floats(0.0, 100.0), st.sampled_from(MODELS))


@settings(max_examples=100, deadline=None)
@given(concentrated)
def test_concentrated_mixtures_up_to_5_molar_converge(mix):
    try:
        eq = solve(mix)
    except ModelError as exc:
        # refused only when beyond any real solution (chem.notices: 30 mol/L of solute, 2500 g/L)
        mass = sum(i.conc * (i.reagent.molar_mass or 0.0) for i in mix.ingredients)
        assert sum(i.conc for i in mix.ingredients) > 30.0 or mass > 2500.0, str(exc)
        return
    assert eq.converged, eq.message
    net = sum(s.charge * s.conc for s in eq.species)
    assert abs(net) <= 1e-12 * charge_scale(eq)


GASES = LIB.gases
open_mixtures = st.builds(
    lambda ings, t, model, precip, gas, log_p: Mixture(
        tuple(ings), temperature_c=t, activity=model, precipitate=precip,
        gases=() if gas is None else (FixedGas(GASES[gas], 10.0 ** log_p),)),
    st.lists(ingredient, min_size=1, max_size=8), st.floats(0.0, 100.0), st.sampled_from(MODELS), st.booleans(),
    st.one_of(st.none(), st.integers(0, len(GASES) - 1)), st.floats(-7.0, -1.0))


@SETTINGS
@given(open_mixtures)
def test_random_library_mixtures_with_solids_and_gases_converge_and_balance(mix):
    # Metals, chelators, the library's complexes and solids (allowed to form or not) and a gas held at a
    # pressure: every mixture converges, closes its charge balance and meets the phase-rule conditions.
    try:
        eq = solve(mix)
    except ModelError:
        return
    assert eq.converged, eq.message
    net = sum(s.charge * s.conc for s in eq.species)
    assert abs(net) <= 1e-10 * charge_scale(eq)
    for s in eq.solids:
        if s.amount > 0:
            assert s.allowed and abs(s.saturation_index) < 1e-7
        elif s.allowed:
            assert s.saturation_index < 1e-7
    for state in eq.systems:
        assert math.fsum(f for _, f in state.distribution) == pytest.approx(1.0, abs=1e-9)
