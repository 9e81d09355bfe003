"""Titration, buffer capacity, dilution and sweeps (chem.curves) and the vectorised kernel.

Reference values: stoichiometry and the behaviour of titration curves are
facts of the trade (common practice); Kw from IAPWS R11-07 (chem.water.pkw);
pKa values from the built-in library (Goldberg, Kishore & Lennen 2002,
J. Phys. Chem. Ref. Data 31, 231, table of selected values, as cited there);
buffer capacity against Van Slyke (1922), J. Biol. Chem. 52, 525, eq. for a
weak monoprotic acid with water terms.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

import chem
from chem import AcidBaseSystem, Ingredient, Mixture, Reagent, solve, water
from chem import curves
from chem import _kernel as K
from chem._solver import assemble, kernel_inputs, run_kernel, state_of
from chem.problem import compile, component_totals
from chem.curves import (Cancelled, CurveError, buffer_capacity, buffer_capacity_at, dilution, sweep,
                         titration)

LN10 = math.log(10.0)


def mix(lib, *items, activity="ideal", t=25.0):
    return Mixture(tuple(Ingredient(lib.reagent(n), c) for n, c in items), activity=activity, temperature_c=t)


def assert_matches_solve(curve, indices, *, rel=1e-9):
    """Every quantity of the curve at these points equals a separate chem.solve."""
    for i in indices:
        eq = solve(curve.mixture_at(int(i)))
        assert eq.converged
        assert curve.pH[i] == pytest.approx(eq.pH, abs=1e-9)
        assert curve.ionic_strength[i] == pytest.approx(eq.ionic_strength, rel=rel, abs=1e-15)
        for sp in eq.species:
            if sp.system == "strong":
                continue
            assert curve.conc_of(sp.name)[i] == pytest.approx(sp.conc, rel=rel, abs=1e-300)
            if sp.fraction is not None:
                assert curve.fraction_of(sp.name)[i] == pytest.approx(sp.fraction, abs=1e-10)


# --------------------------------------------------------------------------
# titration
# --------------------------------------------------------------------------

def test_strong_acid_with_strong_base_has_its_equivalence_at_the_stoichiometric_volume_and_ph_7(lib):
    # 25 mL of 0.1 M HCl needs 25 mL of 0.1 M NaOH (stoichiometry, common practice); at 25 °C
    # the equivalence pH is pKw/2 = 6.998 (IAPWS R11-07), i.e. about 7.
    curve = titration(mix(lib, ("HCl", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.050)
    assert curve.all_converged
    [ep] = curve.equivalence_points
    assert ep.volume_mL == pytest.approx(25.0, rel=1e-5)
    assert ep.pH == pytest.approx(7.0, abs=0.01)
    assert ep.pH == pytest.approx(float(water.pkw(25.0)) / 2, abs=1e-3)
    assert ep.slope > 1000.0          # pH per mL: the jump is steep


@pytest.mark.parametrize("t_c", [5.0, 37.0, 60.0, 90.0])
def test_strong_acid_equivalence_ph_follows_kw_with_temperature(lib, t_c):
    # At the equivalence point of a strong acid and a strong base [H+] = [OH-], so pH = pKw/2
    # (common practice), with pKw(T) from IAPWS R11-07 (Bandura & Lvov 2006).
    curve = titration(mix(lib, ("HCl", 0.1), t=t_c), lib.reagent("NaOH"), 0.1, 0.025, 0.050)
    [ep] = curve.equivalence_points
    assert ep.volume_mL == pytest.approx(25.0, rel=1e-5)
    assert ep.pH == pytest.approx(float(water.pkw(t_c)) / 2, abs=1e-3)


def test_weak_acid_half_equivalence_ph_is_pka_and_equivalence_volume_is_stoichiometric(lib):
    # Acetic acid, pKa 4.756 at 25 °C, I = 0 (Goldberg, Kishore & Lennen 2002, as in the library;
    # Harned & Ehlers 1933 emf data): at half-equivalence [HA] = [A-], so pH = pKa for the
    # ideal model at moderate concentration (Henderson–Hasselbalch; common practice).
    pka = lib.system("acetate").pka[0]
    assert pka == pytest.approx(4.756, abs=1e-3)
    curve = titration(mix(lib, ("acetic acid", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.050)
    [half] = np.nonzero(np.isclose(curve.x, 12.5))[0]
    assert curve.pH[half] == pytest.approx(pka, abs=0.002)
    [ep] = curve.equivalence_points
    assert abs(ep.volume_mL - 25.0) / 25.0 < 1e-3
    assert 8.5 < ep.pH < 9.0          # acetate solution: basic (common practice)


def test_phosphoric_acid_shows_two_breaks_where_its_pka_values_put_them(lib):
    # H3PO4, pKa 2.148, 7.198, 12.35 (library; Goldberg et al. 2002). Two breaks, at one and two
    # equivalents; the third proton (pKa 12.35) gives none in water (common practice).
    # pH at each break: the amphiprotic-salt expression [H+]² = (K1 K2 C + K1 Kw)/(K1 + C)
    # (e.g. Harris, Quantitative Chemical Analysis, chapter on polyprotic acids; from memory).
    k1, k2, k3 = (10.0 ** -p for p in lib.system("phosphate").pka)
    kw = 10.0 ** -float(water.pkw(25.0))
    curve = titration(mix(lib, ("phosphoric acid", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.0875)
    first, second = curve.equivalence_points
    assert first.volume_mL == pytest.approx(25.0, rel=5e-3)
    assert second.volume_mL == pytest.approx(50.0, rel=5e-3)

    def amphiprotic_ph(ka, kb, c):
        return -math.log10(math.sqrt((ka * kb * c + ka * kw) / (ka + c)))

    assert first.pH == pytest.approx(amphiprotic_ph(k1, k2, 0.1 * 25 / 50), abs=0.02)
    assert second.pH == pytest.approx(amphiprotic_ph(k2, k3, 0.1 * 25 / 75), abs=0.02)
    assert first.pH == pytest.approx((2.148 + 7.198) / 2, abs=0.1)


def test_citric_acid_steps_too_close_to_separate_give_one_break_at_three_equivalents(lib):
    # Citric acid, pKa 3.128, 4.761, 6.396 (library): steps under two units apart do not give
    # separate breaks; the curve has one, after the third proton (common practice).
    curve = titration(mix(lib, ("citric acid", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.100)
    [ep] = curve.equivalence_points
    assert ep.volume_mL == pytest.approx(75.0, rel=5e-3)


def test_back_titration_of_excess_base_with_acid(lib):
    # Acetic acid 50 mM with 80 mM NaOH: 30 mM base in excess. With 0.1 M HCl into 25 mL the
    # excess is used up at 7.5 mL (stoichiometry, common practice); the pH falls.
    sample = mix(lib, ("acetic acid", 0.05), ("NaOH", 0.08))
    curve = titration(sample, lib.reagent("HCl"), 0.1, 0.025, 0.030)
    assert curve.equivalence_points[0].volume_mL == pytest.approx(7.5, rel=5e-3)
    assert curve.equivalence_points[0].slope < 0
    assert curve.pH[0] > 12 and curve.pH[-1] < 3
    assert np.all(np.diff(curve.pH) < 0)


def test_weak_base_titrated_with_strong_acid(lib):
    # Ammonia, pKa(NH4+) 9.245 (library): half-equivalence pH = pKa; equivalence at 25 mL with
    # an acidic pH (ammonium solution; common practice).
    curve = titration(mix(lib, ("ammonium hydroxide", 0.1)), lib.reagent("HCl"), 0.1, 0.025, 0.050)
    [half] = np.nonzero(np.isclose(curve.x, 12.5))[0]
    assert curve.pH[half] == pytest.approx(lib.system("ammonia").pka[0], abs=0.002)
    [ep] = curve.equivalence_points
    assert ep.volume_mL == pytest.approx(25.0, rel=1e-3)
    assert 5.0 < ep.pH < 5.6


def test_custom_titrant_reagent(lib):
    # Any reagent works as titrant, including one defined on the spot.
    system = AcidBaseSystem("test acid", ("HT", "T-"), (4.0,), 0)
    custom = Reagent("test acid", system, 1, custom=True)
    curve = titration(mix(lib, ("NaOH", 0.05)), custom, 0.1, 0.020, 0.020)
    [ep] = curve.equivalence_points
    assert ep.volume_mL == pytest.approx(10.0, rel=1e-3)
    assert_matches_solve(curve, [0, len(curve) // 2, len(curve) - 1])


def test_titration_points_agree_with_separate_solves(lib):
    sample = mix(lib, ("sodium dihydrogen phosphate", 0.02), ("acetic acid", 0.01), ("sodium chloride", 0.1),
                 activity="davies", t=37.0)
    curve = titration(sample, lib.reagent("KOH"), 0.2, 0.020, 0.010, points=41)
    assert curve.all_converged
    assert len(curve) > 41                     # refined in the steep parts
    steep = int(np.argmax(np.abs(curve.slope)))
    assert_matches_solve(curve, sorted({0, 7, steep - 1, steep, steep + 1, len(curve) - 1}))


def test_titration_slope_is_the_derivative_of_the_curve(lib):
    sample = mix(lib, ("acetic acid", 0.05), ("sodium chloride", 0.05), activity="extended-dh")
    titrant = lib.reagent("NaOH")
    curve = titration(sample, titrant, 0.1, 0.025, 0.020, points=21)
    dv = 1e-8

    def ph_at(v):
        return solve(sample.scaled(0.025 / (0.025 + v)).with_ingredient(
            Ingredient(titrant, 0.1 * v / (0.025 + v)))).pH

    for i in (3, 10, int(np.argmax(curve.slope))):
        v = float(curve.volume_L[i])
        numeric = (ph_at(v + dv) - ph_at(v - dv)) / (2 * dv) / 1000.0      # pH per mL
        assert curve.slope[i] == pytest.approx(numeric, rel=1e-4)


def test_titration_curve_is_refined_where_it_is_steep(lib):
    curve = titration(mix(lib, ("HCl", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.050, points=51,
                      max_step=0.05)
    assert np.all(np.abs(np.diff(curve.pH)) <= 0.05 + 1e-12)
    assert np.count_nonzero((curve.pH > 4) & (curve.pH < 10)) >= 100
    assert np.all(np.diff(curve.x) > 0)
    assert curve.x[0] == 0.0 and curve.x[-1] == pytest.approx(50.0)


def test_titration_result_is_frozen_and_read_only(lib):
    curve = titration(mix(lib, ("HCl", 0.01)), lib.reagent("NaOH"), 0.01, 0.010, 0.020, points=11)
    for arr in (curve.x, curve.pH, curve.slope, curve.conc, curve.volume_L):
        assert not arr.flags.writeable
    with pytest.raises(ValueError):
        curve.pH[0] = 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        curve.kind = "other"


@pytest.mark.parametrize("kwargs, fragment", [
    (dict(titrant_conc=-0.1), "titrant concentration"),
    (dict(titrant_conc=30.0), "at most 20"),
    (dict(sample_volume_L=0.0), "sample volume"),
    (dict(to_volume_L=float("nan")), "final titrant volume"),
    (dict(from_volume_L=0.06), "upwards"),
    (dict(points=1), "points"),
    (dict(max_step=0.0), "pH step"),
])
def test_bad_titration_settings_raise_one_line_errors(lib, kwargs, fragment):
    args = dict(titrant_conc=0.1, sample_volume_L=0.025, to_volume_L=0.05)
    args.update(kwargs)
    with pytest.raises(CurveError) as err:
        titration(mix(lib, ("HCl", 0.1)), lib.reagent("NaOH"), **args)
    assert fragment in str(err.value) and "\n" not in str(err.value)
    assert isinstance(err.value, chem.ChemError)


def test_progress_is_reported_and_can_cancel(lib):
    seen = []
    titration(mix(lib, ("HCl", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.05, progress=seen.append)
    assert seen[-1] == 1.0 and all(0 <= f <= 1 for f in seen) and seen == sorted(seen)
    with pytest.raises(Cancelled):
        titration(mix(lib, ("HCl", 0.1)), lib.reagent("NaOH"), 0.1, 0.025, 0.05, progress=lambda f: False)
    with pytest.raises(Cancelled):
        sweep(mix(lib, ("HCl", 0.1)), "temperature", np.linspace(5, 50, 10), progress=lambda f: False)


# --------------------------------------------------------------------------
# buffer capacity
# --------------------------------------------------------------------------

def test_buffer_capacity_matches_van_slyke_for_a_weak_acid(lib):
    # β = ln10([H+] + [OH-] + C Ka [H+] / (Ka + [H+])²)  (Van Slyke 1922, J. Biol. Chem. 52, 525).
    c = 0.01
    ka = 10.0 ** -lib.system("acetate").pka[0]
    kw = 10.0 ** -float(water.pkw(25.0))
    grid = np.linspace(2.0, 12.0, 101)
    cap = buffer_capacity(mix(lib, ("acetic acid", c)), grid)
    h = 10.0 ** -grid
    expected = LN10 * (h + kw / h + c * ka * h / (ka + h) ** 2)
    assert cap.all_converged
    np.testing.assert_allclose(cap.beta, expected, rtol=1e-9)


def test_buffer_capacity_peaks_at_the_pka_of_a_dilute_monoprotic_buffer(lib):
    # A monoprotic buffer's capacity is largest at pH = pKa (Van Slyke 1922); for a dilute buffer
    # the water terms move the peak by under 0.01 pH.
    grid = np.linspace(3.5, 6.0, 2501)
    cap = buffer_capacity(mix(lib, ("acetic acid", 0.01)), grid)
    assert grid[np.argmax(cap.beta)] == pytest.approx(lib.system("acetate").pka[0], abs=0.01)


@pytest.mark.parametrize("activity", ["davies", "extended-dh", "ideal"])
def test_buffer_capacity_at_matches_a_numerical_derivative_of_solve(lib, activity):
    base = lib.reagent("NaOH")
    m = mix(lib, ("sodium dihydrogen phosphate", 0.02), ("NaOH", 0.01), ("sodium acetate", 0.01),
            activity=activity, t=37.0)
    d = 1e-6

    def ph(c):
        return solve(m.with_replaced(1, Ingredient(base, c))).pH

    numeric = 2 * d / (ph(0.01 + d) - ph(0.01 - d))
    assert buffer_capacity_at(m) == pytest.approx(numeric, rel=1e-6)
    assert buffer_capacity_at(solve(m)) == buffer_capacity_at(m)


def test_buffer_capacity_curve_points_are_reached_by_the_added_base(lib):
    m = mix(lib, ("sodium dihydrogen phosphate", 0.02), ("sodium chloride", 0.1), activity="davies")
    grid = np.array([4.0, 6.5, 7.5, 9.0])
    cap = buffer_capacity(m, grid)
    naoh, hcl = lib.reagent("NaOH"), lib.reagent("HCl")
    for p, cb, beta in zip(cap.pH, cap.added_base, cap.beta):
        extra = Ingredient(naoh, cb) if cb >= 0 else Ingredient(hcl, -cb)
        reached = m.with_ingredient(extra)
        eq = solve(reached)
        assert eq.pH == pytest.approx(p, abs=1e-9)
        if cb > 0:      # on the base side the curve's β is the capacity of the mixture reached
            assert buffer_capacity_at(reached) == pytest.approx(beta, rel=1e-9)
    assert cap.added_base[0] < 0 < cap.added_base[-1]


# --------------------------------------------------------------------------
# dilution and sweeps
# --------------------------------------------------------------------------

def test_dilution_agrees_with_solve_and_approaches_water(lib):
    # 0.01 M HCl diluted a million-fold is 1e-8 M: pH 6.98, not 8, because water's own ions
    # dominate (the classic example; common practice). Exact: [H+] = (c + sqrt(c² + 4Kw))/2.
    curve = dilution(mix(lib, ("HCl", 0.01)), np.logspace(0, 6, 25))
    c = 1e-8
    kw = 10.0 ** -float(water.pkw(25.0))
    assert curve.pH[-1] == pytest.approx(-math.log10((c + math.sqrt(c * c + 4 * kw)) / 2), abs=1e-9)
    assert curve.pH[0] == pytest.approx(2.0, abs=1e-6)
    assert np.all(np.diff(curve.pH) > 0)
    buffer = mix(lib, ("sodium dihydrogen phosphate", 0.05), ("disodium hydrogen phosphate", 0.05),
                 activity="davies")
    assert_matches_solve(dilution(buffer, points=9), range(9))


def test_sweep_of_an_ingredient_agrees_with_solve(lib):
    m = mix(lib, ("sodium dihydrogen phosphate", 0.02), ("tris base", 0.01), ("NaOH", 0.005),
            ("sodium chloride", 0.05), activity="davies", t=30.0)
    values = np.linspace(0.0, 0.04, 21)
    curve = sweep(m, "NaOH", values)
    assert curve.x_label == "sodium hydroxide_M"
    np.testing.assert_array_equal(curve.x, values)
    assert np.all(np.diff(curve.pH) > 0)
    assert_matches_solve(curve, range(0, 21, 4))
    by_index = sweep(m, 2, values)
    np.testing.assert_array_equal(by_index.pH, curve.pH)


def test_temperature_sweep_agrees_with_solve(lib):
    m = mix(lib, ("tris base", 0.02), ("tris hydrochloride", 0.02), activity="extended-dh")
    curve = sweep(m, "temperature", np.linspace(0.0, 100.0, 11))
    assert curve.x_label == "temperature_C"
    assert np.all(np.diff(curve.pH) < 0)       # tris: pKa falls as it warms (common practice)
    assert_matches_solve(curve, range(11))


def test_sweeps_are_vectorised_not_a_loop_of_solves(lib, monkeypatch):
    def no_solve(*args, **kwargs):
        raise AssertionError("a sweep must not call chem.solve per point")

    monkeypatch.setattr(curves, "solve", no_solve)
    m = mix(lib, ("acetic acid", 0.01), ("NaOH", 0.005), activity="davies")
    assert len(sweep(m, "acetic acid", np.linspace(0.001, 0.1, 1000))) == 1000
    assert len(sweep(m, "temperature", np.linspace(0.0, 100.0, 1000))) == 1000
    assert len(dilution(m, np.logspace(0, 3, 500))) == 500
    assert len(titration(m, lib.reagent("NaOH"), 0.1, 0.01, 0.01)) >= 201


@pytest.mark.parametrize("vary, values, fragment", [
    ("potassium chloride", [0.1], "not an ingredient"),
    (5, [0.1], "does not exist"),
    ("NaOH", [-0.1], "between 0 and 20"),
    ("NaOH", [float("inf")], "finite"),
    ("temperature", [-5.0, 20.0], "between 0 and 100"),
    ("NaOH", [], "no values"),
])
def test_bad_sweeps_raise_one_line_errors(lib, vary, values, fragment):
    with pytest.raises(CurveError) as err:
        sweep(mix(lib, ("acetic acid", 0.01), ("NaOH", 0.005)), vary, values)
    assert fragment in str(err.value) and "\n" not in str(err.value)


def test_unknown_species_name_is_a_clear_error(lib):
    curve = dilution(mix(lib, ("acetic acid", 0.01)), [1.0, 10.0])
    with pytest.raises(CurveError, match="no species 'HPO4"):
        curve.conc_of("HPO4^2-")


# --------------------------------------------------------------------------
# the vectorised kernel
# --------------------------------------------------------------------------

def _batch_of(mixtures, **kw):
    """The kernel on many mixtures of one structure: (problem, inputs, result)."""
    prob = compile(mixtures[0])
    parts = [component_totals(prob.structure, m.ingredients) for m in mixtures]
    totals = np.array([np.where((p[0] <= 0) & (np.arange(p[0].size) > 0), 1e-200, p[0]) for p in parts])
    inp = kernel_inputs(prob, t_c=np.array([m.temperature_c for m in mixtures]), totals=totals,
                        inert_i=np.array([p[2] for p in parts]), inert_q=np.array([p[1] for p in parts]))
    return prob, inp, run_kernel(prob, inp, **kw)


@pytest.mark.parametrize("activity", ["ideal", "davies", "extended-dh"])
def test_kernel_agrees_with_solve_over_wild_amounts(lib, activity):
    # Random mixtures of four systems from 1 nM to 2 M, with strong acid or base, 0-100 °C.
    rng = np.random.default_rng(7)
    names = ["phosphoric acid", "sodium acetate", "ammonium chloride", "citric acid", "HCl", "NaOH"]
    mixtures = []
    for _ in range(60):
        conc = 10.0 ** rng.uniform(-9, np.log10(2.0), len(names))
        t = float(rng.uniform(0, 100))
        mixtures.append(Mixture(tuple(Ingredient(lib.reagent(n), float(c)) for n, c in zip(names, conc)),
                                temperature_c=t, activity=activity))
    _, _, batch = _batch_of(mixtures)
    assert batch.converged.all()
    for i, m in enumerate(mixtures):
        eq = solve(m)
        got = assemble(compile(m), state_of(batch, i))
        assert got.pH == pytest.approx(eq.pH, abs=1e-8)
        assert got.ionic_strength == pytest.approx(eq.ionic_strength, rel=1e-8)


def test_kernel_starved_of_iterations_says_it_did_not_converge(lib):
    m = mix(lib, ("phosphoric acid", 0.5), ("NaOH", 0.7), activity="davies")
    _, _, batch = _batch_of([m], max_iter=1)
    assert not batch.converged[0]


def test_kernel_handles_a_mixture_without_acid_base_systems(lib):
    curve = sweep(mix(lib, ("HCl", 0.001), activity="davies"), "HCl", [0.0, 1e-3, 1e-1])
    assert curve.species == ("H+", "OH-")
    assert curve.pH[0] == pytest.approx(solve(mix(lib, activity="davies")).pH, abs=1e-12)
    assert_matches_solve(curve, range(3))


def _exotic(lib, naoh: float, activity: str) -> Mixture:
    """Highly charged custom systems: ions up to ±6 at ionic strengths of several mol/L."""
    acid = AcidBaseSystem("X", ("H5X", "H4X-", "H3X^2-", "H2X^3-", "HX^4-", "X^5-"), (1.0, 5.0, 9.0, 13.0, 15.5), 0)
    base = AcidBaseSystem("Y", ("H6Y^6+", "H5Y^5+", "H4Y^4+", "H3Y^3+", "H2Y^2+", "HY+", "Y"),
                          (-1.5, 0.5, 3.0, 7.0, 11.0, 15.0), 6)
    return Mixture((Ingredient(Reagent("H5X", acid, 5, custom=True), 1.0),
                    Ingredient(Reagent("Y base", base, 0, custom=True), 0.5),
                    Ingredient(lib.reagent("NaOH"), naoh)), temperature_c=80.0, activity=activity)


@pytest.mark.parametrize("activity", ["davies", "extended-dh"])
def test_kernel_converges_for_highly_charged_ions_at_high_ionic_strength(lib, activity):
    m = _exotic(lib, 0.1, activity)
    curve = sweep(m, "NaOH", np.concatenate([[0.0], np.logspace(-9, np.log10(15.0), 120)]))
    assert curve.all_converged
    assert_matches_solve(curve, range(0, 121, 10), rel=1e-7)


def test_nested_ionic_strength_stage_alone_converges_from_a_poor_start(lib):
    # The fallback behind the fast stage (inner solve at fixed I, bracketed outer search on I),
    # run on its own from pH 7, every component free and the inert ions' ionic strength.
    mixtures = [_exotic(lib, c, "davies") for c in (0.0, 0.2434, 0.308, 3.0)]
    prob, inp, _ = _batch_of(mixtures)
    n = len(mixtures)
    u0 = np.zeros((n, prob.structure.n_components))
    u0[:, 0] = -7.0 * LN10
    u0[:, 1:] = np.log(inp.totals[:, 1:])
    idx = np.arange(n)
    u, ionic, _, _, _, converged, _ = K._nested(inp, idx, u0, inp.inert_i.copy(), np.zeros((n, 0), bool), 4000)
    assert converged.all()
    for m, ui, ii in zip(mixtures, u, ionic):
        eq = solve(m)
        assert -ui[0] / LN10 == pytest.approx(eq.pH, abs=1e-8)
        assert ii == pytest.approx(eq.ionic_strength, rel=1e-8)
