"""Fitting measured titrations (chem.fit): recovery, coverage, Gran end points, bad data.

Synthetic "measurements" come from an independent reference (closed-form charge
balances solved with mpmath, tests/core/titration_reference.py), never from
protomix's own solver, with normal noise added.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

import chem
from chem import Ingredient, Mixture, load_library, loads_preset, solve
from chem.fit import FitError, TitrationData, fit_titration, gran_end_points, parse_titration, read_titration
from chem.model import AcidBaseSystem, Reagent

sys.path.insert(0, str(Path(__file__).resolve().parent))
from titration_reference import weak_acid_curve  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore:Descending:DeprecationWarning")

# The titration used throughout: 100 mL of a monoprotic acid, 10 mM, pKa 4.76, titrated
# with 0.1 M NaOH; the stoichiometric end point is 10.00 mL.
C_ACID, PKA, C_BASE, V0_ML = 0.010, 4.76, 0.100, 100.0
V_EQ = C_ACID * V0_ML / C_BASE
VOLUMES = np.linspace(0.2, 18.0, 60)


@pytest.fixture(scope="module")
def truth() -> np.ndarray:
    return weak_acid_curve(C_ACID, PKA, C_BASE, V0_ML, VOLUMES)


@pytest.fixture(scope="module")
def naoh() -> Reagent:
    return load_library().reagent("NaOH")


def acid_sample(conc: float = 0.0105, pka: float = 4.9, activity: str = "ideal") -> Mixture:
    """The sample as believed: a custom monoprotic acid (starting guesses away from the truth)."""
    system = AcidBaseSystem("acid Y", ("HY", "Y-"), (pka,), 0, custom=True)
    return Mixture((Ingredient(Reagent("acid Y", system, 1, custom=True), conc),), activity=activity)


VARY = ["amount:acid Y", "pKa:acid Y:1", "titrant"]
TRUE = np.array([C_ACID, PKA, C_BASE])


class TestRecovery:
    def test_noiseless_reference_data_are_fitted_exactly(self, truth, naoh):
        """The model and the independent reference agree: the fit lands on the true values."""
        res = fit_titration(acid_sample(), TitrationData(VOLUMES, truth), naoh, 0.098, V0_ML / 1000, VARY)
        assert res.converged, res.message
        got = np.array([p.value for p in res.parameters])
        assert got == pytest.approx(TRUE, rel=1e-6)
        assert res.rms_pH < 1e-6
        assert [p.name for p in res.parameters] == VARY
        assert [p.unit for p in res.parameters] == ["mol/L", "", "mol/L"]

    def test_standard_errors_cover_the_true_values_at_the_nominal_rates(self, truth, naoh):
        """Over many noise draws, |fit − true| ≤ 1 se about 68 % of the time and ≤ 1.96 se about 95 %."""
        seeds = 120
        within1 = within2 = 0
        for seed in range(seeds):
            rng = np.random.default_rng(seed)
            data = TitrationData(VOLUMES, truth + rng.normal(0.0, 0.01, VOLUMES.size))
            res = fit_titration(acid_sample(), data, naoh, 0.098, V0_ML / 1000, VARY)
            assert res.converged
            val = np.array([p.value for p in res.parameters])
            se = np.array([p.stderr for p in res.parameters])
            z = np.abs(val - TRUE) / se
            within1 += int((z <= 1.0).sum())
            within2 += int((z <= 1.959964).sum())
        n = 3 * seeds
        assert 0.58 <= within1 / n <= 0.78, within1 / n
        assert 0.90 <= within2 / n <= 0.99, within2 / n

    def test_residual_scale_estimates_the_noise(self, truth, naoh):
        rng = np.random.default_rng(42)
        data = TitrationData(VOLUMES, truth + rng.normal(0.0, 0.02, VOLUMES.size))
        res = fit_titration(acid_sample(), data, naoh, 0.1, V0_ML / 1000, VARY)
        assert res.dof == VOLUMES.size - 3
        s = math.sqrt(float(res.residuals @ res.residuals) / res.dof)
        assert 0.015 < s < 0.025
        assert res.residuals == pytest.approx(data.pH - res.fitted_pH)
        assert res.correlation.shape == (3, 3)
        assert np.allclose(np.diag(res.correlation), 1.0)
        assert np.allclose(res.correlation, res.correlation.T)
        # amount and titrant are tied by the end point volume: strongly correlated
        assert res.correlation[0, 2] > 0.9

    def test_an_electrode_offset_is_found(self, truth, naoh):
        rng = np.random.default_rng(7)
        data = TitrationData(VOLUMES, truth + 0.05 + rng.normal(0.0, 0.005, VOLUMES.size))
        res = fit_titration(acid_sample(), data, naoh, C_BASE, V0_ML / 1000,
                            ["amount:acid Y", "pKa:acid Y:1", "offset"])
        off = res.value("offset")
        assert off.unit == "pH"
        assert abs(off.value - 0.05) < 3 * off.stderr
        assert abs(res.value("pKa:acid Y:1").value - PKA) < 3 * res.value("pKa:acid Y:1").stderr

    def test_fitted_end_point_and_gran_end_points_match_the_stoichiometric_volume(self, truth, naoh):
        res = fit_titration(acid_sample(), TitrationData(VOLUMES, truth), naoh, 0.098, V0_ML / 1000, VARY)
        [ep] = res.equivalence_points
        # the steepest point of a weak-acid curve lies a hair before the stoichiometric volume
        assert ep.volume_mL == pytest.approx(V_EQ, rel=2e-3)
        gran = {g.branch: g for g in res.gran}
        assert gran["before"].function == "V·10^-pH"
        assert gran["before"].volume_mL == pytest.approx(V_EQ, rel=3e-3)
        assert gran["after"].volume_mL == pytest.approx(V_EQ, rel=3e-3)

    def test_gran_for_a_strong_acid_picks_the_strong_form(self, naoh):
        """0.01 M HCl (100 mL) with 0.1 M NaOH: (V0+V)·10^-pH is the straight one; end point 10.00 mL."""
        ph = weak_acid_curve(0.0, PKA, C_BASE, V0_ML, VOLUMES, c_strong=0.01)
        gran = {g.branch: g for g in gran_end_points(TitrationData(VOLUMES, ph), V0_ML / 1000, naoh)}
        assert gran["before"].function == "(V0+V)·10^-pH"
        assert gran["before"].volume_mL == pytest.approx(10.0, rel=2e-3)
        assert gran["after"].volume_mL == pytest.approx(10.0, rel=2e-3)

    def test_gran_is_not_misled_by_scatter_in_the_buffer_region(self, naoh):
        """Fine volume steps and 0.01 pH of scatter make small false maxima of ΔpH/ΔV; the end point stays."""
        v = np.arange(0.1, 16.0, 0.15)
        ph = weak_acid_curve(C_ACID, PKA, C_BASE, V0_ML, v)
        for seed in range(40):
            noisy = ph + np.random.default_rng(seed).normal(0.0, 0.01, v.size)
            gran = {g.branch: g for g in gran_end_points(TitrationData(v, noisy), V0_ML / 1000, naoh)}
            assert gran["before"].function == "V·10^-pH"
            assert abs(gran["before"].volume_mL - V_EQ) < 4 * gran["before"].sd_mL + 0.01
            assert abs(gran["after"].volume_mL - V_EQ) < 4 * gran["after"].sd_mL + 0.01

    def test_gran_end_points_ignore_an_electrode_offset(self, truth, naoh):
        a = gran_end_points(TitrationData(VOLUMES, truth), 0.1, naoh)
        b = gran_end_points(TitrationData(VOLUMES, truth + 0.3), 0.1, naoh)
        assert [g.volume_mL for g in a] == pytest.approx([g.volume_mL for g in b], rel=1e-9)

    def test_gran_needs_a_strong_titrant(self, truth):
        ammonia = load_library().reagent("ammonia")
        assert gran_end_points(TitrationData(VOLUMES, truth), 0.1, ammonia) == ()

    def test_the_fitted_sample_reproduces_the_fitted_curve(self, truth, naoh):
        rng = np.random.default_rng(3)
        data = TitrationData(VOLUMES, truth + rng.normal(0.0, 0.01, VOLUMES.size))
        res = fit_titration(acid_sample(), data, naoh, C_BASE, V0_ML / 1000, ["amount:acid Y", "pKa:acid Y:1"])
        mix = res.mixture
        assert mix is not None and "Fitted by protomix fit" in mix.notes
        assert mix.ingredients[0].conc == pytest.approx(res.value("amount:acid Y").value)
        sys_ = mix.ingredients[0].reagent.system
        assert sys_.pka[0] == pytest.approx(res.value("pKa:acid Y:1").value)
        assert sys_.pka_sd[0] == pytest.approx(res.value("pKa:acid Y:1").stderr)
        # one point solved on its own: the fitted sample diluted by the titrant added
        v = VOLUMES[20] / 1000

        def at_point(sample):
            return sample.scaled(0.1 / (0.1 + v)).with_ingredient(Ingredient(naoh, C_BASE * v / (0.1 + v)))

        assert solve(at_point(mix)).pH == pytest.approx(res.fitted_pH[20], abs=1e-9)
        # through a preset (amounts written to six digits)
        back = loads_preset(chem.dumps_preset(mix), "fitted")
        assert solve(at_point(back)).pH == pytest.approx(res.fitted_pH[20], abs=1e-5)

    def test_a_library_pka_is_fitted_through_the_full_model(self, naoh):
        """Acetic acid from the library in 0.1 M NaCl, Davies activity, 25 °C: pKa and amount from the
        model's own curve (the salt's ions are diluted with the sample, as in chem.titration)."""
        lib = load_library()
        salt = Ingredient(lib.reagent("NaCl"), 0.1)
        true_mix = Mixture((Ingredient(lib.reagent("acetic acid"), 0.0100), salt))
        v = np.linspace(0.5, 4.0, 36)
        curve = chem.titration(true_mix, naoh, 0.05, 0.01, 0.004, points=201)
        measured = np.interp(v, curve.x, curve.pH)
        guess = Mixture((Ingredient(lib.reagent("acetic acid"), 0.0090), salt))
        res = fit_titration(guess, TitrationData(v, measured), naoh, 0.05, 0.01,
                            ["amount:acetic acid", "pKa:acetate:1"])
        assert res.value("amount:acetic acid").value == pytest.approx(0.0100, rel=1e-3)
        assert res.value("pKa:acetate:1").value == pytest.approx(lib.system("acetate").pka[0], abs=2e-3)
        # a library system's fitted pKa is carried by a custom copy of its one reagent
        assert res.mixture.ingredients[0].reagent.name == "acetic acid (fitted)"
        assert res.mixture.ingredients[0].reagent.custom

    def test_a_fitted_library_pka_held_by_two_ingredients_is_reported_not_written(self, naoh):
        """A preset can carry a fitted pKa only as a custom reagent: one ingredient per system."""
        lib = load_library()
        buffer = Mixture((Ingredient(lib.reagent("acetic acid"), 0.010), Ingredient(lib.reagent("sodium acetate"),
                                                                                   0.005)))
        v = np.linspace(0.5, 3.0, 20)
        curve = chem.titration(buffer, naoh, 0.05, 0.01, 0.003, points=101)
        res = fit_titration(buffer, TitrationData(v, np.interp(v, curve.x, curve.pH)), naoh, 0.05, 0.01,
                            ["pKa:acetate:1"])
        assert res.value("pKa:acetate:1").value == pytest.approx(lib.system("acetate").pka[0], abs=1e-4)
        assert res.mixture is None
        assert any("2 ingredients hold acetate" in n for n in res.notes)

    def test_temperature_column_sets_each_point(self, truth, naoh):
        sample = acid_sample()
        plain = fit_titration(sample, TitrationData(VOLUMES, truth), naoh, C_BASE, 0.1, ["amount:acid Y"])
        same = fit_titration(sample, TitrationData(VOLUMES, truth, np.full(VOLUMES.size, 25.0)), naoh, C_BASE, 0.1,
                             ["amount:acid Y"])
        assert same.value("amount:acid Y").value == pytest.approx(plain.value("amount:acid Y").value, rel=1e-12)
        warm_col = fit_titration(sample, TitrationData(VOLUMES, truth, np.full(VOLUMES.size, 40.0)), naoh, C_BASE,
                                 0.1, ["amount:acid Y"])
        warm_mix = fit_titration(sample.with_temperature(40.0), TitrationData(VOLUMES, truth), naoh, C_BASE, 0.1,
                                 ["amount:acid Y"])
        assert warm_col.value("amount:acid Y").value == pytest.approx(warm_mix.value("amount:acid Y").value,
                                                                       rel=1e-9)
        assert warm_col.rms_pH != pytest.approx(plain.rms_pH, rel=1e-3)   # Kw moved: the fit is worse


class TestBadInput:
    def test_undetermined_parameter_is_named(self, truth, naoh):
        """Ideal activity: NaCl changes nothing, so its amount cannot be determined."""
        lib = load_library()
        mix = acid_sample().with_ingredient(Ingredient(lib.reagent("NaCl"), 0.05))
        with pytest.raises(FitError, match=r"cannot determine amount:NaCl: it does not change"):
            fit_titration(mix, TitrationData(VOLUMES, truth), naoh, C_BASE, 0.1, ["amount:acid Y", "amount:NaCl"])

    def test_parameters_that_cannot_be_told_apart_are_named(self, naoh):
        """Two strong acids act alike on the curve (ideal model): a singular Jacobian."""
        lib = load_library()
        mix = Mixture((Ingredient(lib.reagent("HCl"), 0.005), Ingredient(lib.reagent("HNO3"), 0.005)),
                      activity="ideal")
        ph = weak_acid_curve(0.0, PKA, C_BASE, V0_ML, VOLUMES, c_strong=0.01)
        with pytest.raises(FitError, match=r"cannot be told apart.*singular Jacobian"):
            fit_titration(mix, TitrationData(VOLUMES, ph), naoh, C_BASE, 0.1, ["amount:HCl", "amount:HNO3"])

    def test_fewer_points_than_parameters(self, naoh):
        data = TitrationData([1.0, 2.0], [4.0, 4.5])
        with pytest.raises(FitError, match="2 points cannot determine 3 parameters"):
            fit_titration(acid_sample(), data, naoh, C_BASE, 0.1, VARY)

    @pytest.mark.parametrize("vary, message", [
        ("amount:sugar", "not an ingredient"),
        ("pKa:acid Y:2", "has 1 step"),
        ("pKa:nothing:1", "no acid–base system"),
        ("pKa:acid Y", "write pKa:SYSTEM:STEP"),
        ("pKa:acid Y:one", "step must be a whole number"),
        ("volume", "not a parameter"),
    ])
    def test_bad_parameters(self, truth, naoh, vary, message):
        with pytest.raises(FitError, match=message):
            fit_titration(acid_sample(), TitrationData(VOLUMES, truth), naoh, C_BASE, 0.1, [vary])

    def test_a_parameter_given_twice(self, truth, naoh):
        with pytest.raises(FitError, match="given twice"):
            fit_titration(acid_sample(), TitrationData(VOLUMES, truth), naoh, C_BASE, 0.1, ["offset", "offset"])


class TestReading:
    def test_header_names_columns_in_any_order_and_extra_columns_are_ignored(self):
        data = parse_titration("# run 4\nnote,pH,Volume_mL,temperature_c\na,3.1,0.0,24.5\nb,3.3,1.0,\n", "x.csv")
        assert list(data.volume_mL) == [0.0, 1.0] and list(data.pH) == [3.1, 3.3]
        assert data.temperature_c[0] == 24.5 and math.isnan(data.temperature_c[1])
        assert list(data.temperatures(25.0)) == [24.5, 25.0]

    def test_semicolons_and_a_byte_order_mark(self):
        data = parse_titration("\ufeffvolume_mL;pH\n0;3.0\n1;3.5\n".encode(), "x.csv")
        assert list(data.pH) == [3.0, 3.5]

    @pytest.mark.parametrize("text, message", [
        ("volume_mL,pH\n0,3.1\n1,abc\n", r"row 3, column pH: 'abc' is not a number"),
        ("volume_mL,reading\n0,3.1\n", r"no 'pH' column"),
        ("pH\n3.1\n", r"no 'volume_mL' column"),
        ("volume_mL,pH\n", r"no data rows"),
        ("", r"empty"),
        ("volume_mL,pH\n0,3.1\n2,3.5\n1,3.9\n", r"volumes must increase.*point 3: 1 mL after 2 mL"),
        ("volume_mL,pH\n0,3.1\n1,3.1\n1,3.2\n", r"volumes must increase"),
        ("volume_mL,pH\n0,3.1\n1\n", r"row 3: no pH cell"),
        ("volume_mL,pH\n0,nan\n", r"not a finite number"),
        ("volume_mL,pH\n-1,3\n", r"cannot be negative"),
        ("volume_mL,pH\n0,30\n", r"between -2 and 16"),
        ("volume_mL,pH,temperature_c\n0,3,150\n", r"between 0 and 100"),
    ])
    def test_bad_data_give_one_line(self, text, message):
        with pytest.raises(FitError, match=message) as err:
            parse_titration(text, "run.csv")
        assert "\n" not in str(err.value) and str(err.value).startswith("run.csv: ")

    def test_control_characters_in_a_cell_are_not_echoed(self):
        with pytest.raises(FitError) as err:
            parse_titration("volume_mL,pH\n0,\x1b[31mred\x07\n", "run.csv")
        text = str(err.value)
        assert "\x1b" not in text and "\x07" not in text and "?[31mred?" in text

    def test_files(self, tmp_path):
        path = tmp_path / "run.csv"
        path.write_text("volume_mL,pH\n0,3\n1,4\n")
        assert len(read_titration(path)) == 2
        with pytest.raises(FitError, match="no such file"):
            read_titration(tmp_path / "missing.csv")
        with pytest.raises(FitError, match="not UTF-8"):
            (tmp_path / "bin.csv").write_bytes(b"\xff\xfe\x00volume")
            read_titration(tmp_path / "bin.csv")
        big = tmp_path / "big.csv"
        big.write_bytes(b"volume_mL,pH\n" + b"#" * 5_000_100)
        with pytest.raises(FitError, match="larger than"):
            read_titration(big)
