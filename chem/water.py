"""Properties of liquid water at 0.1 MPa used by the solver.

All functions accept floats or numpy arrays of temperature in °C.

Sources
-------
* Ion product: IAPWS R11-07 (2019 revision), "Revised Release on the
  Ionization Constant of H2O", formulation of Bandura & Lvov (2006),
  J. Phys. Chem. Ref. Data 35, 15, eq. 1-3 with the coefficients of its
  Table 1.
* Density at 0.1 MPa: Kell (1975), J. Chem. Eng. Data 20, 97, eq. 16.
* Relative permittivity: Malmberg & Maryott (1956), J. Res. NBS 56, 1, eq. 1.
* Debye–Hückel A and B from the permittivity and density with the usual
  constants (e.g. Robinson & Stokes, *Electrolyte Solutions*, 2nd ed.,
  1959, Appendix 7.1); molality basis.
"""

from __future__ import annotations

import numpy as np

KELVIN = 273.15
R_J = 8.314462618  # J/(K·mol), CODATA 2018
LN10 = float(np.log(10.0))

#: Temperature range (°C) of the water formulations used here at 0.1 MPa.
T_MIN_C = 0.0
T_MAX_C = 100.0


def density(t_c):
    """Density of air-free water at 0.1 MPa in g/cm³ (Kell 1975, eq. 16)."""
    t = np.asarray(t_c, dtype=float)
    num = (999.83952 + 16.945176 * t - 7.9870401e-3 * t**2 - 46.170461e-6 * t**3
           + 105.56302e-9 * t**4 - 280.54253e-12 * t**5)
    return num / (1.0 + 16.879850e-3 * t) / 1000.0


def pkw(t_c):
    """-log10 Kw of water at 0.1 MPa (IAPWS R11-07, Bandura & Lvov 2006).

    Kw is on the molal scale, (mol/kg)²; for dilute solutions the molar and
    molal scales differ by less than 0.01 in pKw up to about 60 °C.
    """
    t = np.asarray(t_c, dtype=float)
    T = t + KELVIN
    rho = density(t)
    n = 6.0
    a0, a1, a2 = -0.864671, 8659.19, -22786.2
    b0, b1, b2 = 0.642044, -56.8534, -0.375754
    q = rho * np.exp(a0 + a1 / T + a2 / T**2 * rho ** (2.0 / 3.0))
    pkw_gas = 0.61415 + 48251.33 / T - 67707.93 / T**2 + 10102100.0 / T**3
    return (-2.0 * n * (np.log10(1.0 + q) - q / (q + 1.0) * rho * (b0 + b1 / T + b2 * rho))
            + pkw_gas + 2.0 * np.log10(18.015268 / 1000.0))


def permittivity(t_c):
    """Relative static permittivity of water (Malmberg & Maryott 1956)."""
    t = np.asarray(t_c, dtype=float)
    return 87.740 - 0.40008 * t + 9.398e-4 * t**2 - 1.410e-6 * t**3


def debye_huckel_a(t_c):
    """Debye–Hückel A for log10 γ, in (kg/mol)^½."""
    T = np.asarray(t_c, dtype=float) + KELVIN
    return 1.824829e6 * np.sqrt(density(t_c)) * (permittivity(t_c) * T) ** -1.5


def debye_huckel_b(t_c):
    """Debye–Hückel B, in (kg/mol)^½ Å⁻¹ (multiplies the ion size in ångström)."""
    T = np.asarray(t_c, dtype=float) + KELVIN
    return 50.29159 * np.sqrt(density(t_c)) * (permittivity(t_c) * T) ** -0.5
