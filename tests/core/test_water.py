"""Water: ion product, Debye–Hückel parameters, pure-water pH."""

from __future__ import annotations

import pytest

from chem import Mixture, solve, water

# IAPWS R11-07 (2019), "Revised Release on the Ionization Constant of H2O",
# Table 3: pKw of liquid water at 0.1 MPa (values from memory).
IAPWS_PKW = [(0.0, 14.946), (25.0, 13.995), (50.0, 13.264), (75.0, 12.696), (100.0, 12.252)]


@pytest.mark.parametrize("t_c, expected", IAPWS_PKW)
def test_pkw_matches_iapws_release(t_c, expected):
    assert float(water.pkw(t_c)) == pytest.approx(expected, abs=0.002)


def test_pkw_falls_monotonically_with_temperature():
    # A physical fact of water's ionization (endothermic, ΔH ≈ 56 kJ/mol); common practice.
    values = [float(water.pkw(t)) for t in range(0, 101, 5)]
    assert all(b < a for a, b in zip(values, values[1:]))


# Robinson & Stokes, Electrolyte Solutions, 2nd ed. (1959), Appendix 7.1, Debye–Hückel
# A (molal, log10 basis) — values from memory. Our permittivity correlation (Malmberg &
# Maryott 1956) differs slightly from theirs, so agreement within 1 % is what we claim.
RS_A = [(0.0, 0.4918), (25.0, 0.5115), (50.0, 0.5373)]


@pytest.mark.parametrize("t_c, expected", RS_A)
def test_debye_huckel_a_matches_tabulated(t_c, expected):
    assert float(water.debye_huckel_a(t_c)) == pytest.approx(expected, rel=0.01)


def test_water_density_at_4_and_25_c():
    # Kell (1975) J. Chem. Eng. Data 20, 97: maximum density 0.999972 g/cm³ near 4 °C;
    # 0.997047 g/cm³ at 25 °C (from memory; Kell's IPTS-68 fit sits 2-3 ppm below it).
    assert float(water.density(4.0)) == pytest.approx(0.999972, abs=2e-6)
    assert float(water.density(25.0)) == pytest.approx(0.997047, abs=5e-6)


@pytest.mark.parametrize("t_c", [0.0, 10.0, 25.0, 37.0, 60.0, 100.0])
def test_pure_water_is_neutral_at_half_pkw(t_c):
    eq = solve(Mixture((), temperature_c=t_c, activity="ideal"))
    assert eq.converged
    assert eq.pH == pytest.approx(float(water.pkw(t_c)) / 2, abs=1e-10)
    assert eq.pH + eq.pOH == pytest.approx(eq.pKw, abs=1e-12)
