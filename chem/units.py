"""Reading amounts written the way chemists write them.

Concentrations: M, mM, uM (µM, μM), nM, mol/L, mmol/L, umol/L, and, where
the reagent's molar mass is known, g/L and mg/L.  A bare number is mol/L.
Volumes: L, mL, uL (µL).  All values are checked to be finite and >= 0.
"""

from __future__ import annotations

import math
import re

from .errors import UnitError

_MOLAR = {
    "M": 1.0, "mol/L": 1.0, "mol/l": 1.0,
    "mM": 1e-3, "mmol/L": 1e-3, "mmol/l": 1e-3,
    "uM": 1e-6, "µM": 1e-6, "μM": 1e-6, "umol/L": 1e-6, "µmol/L": 1e-6, "umol/l": 1e-6,
    "nM": 1e-9, "nmol/L": 1e-9, "nmol/l": 1e-9,
}
_MASS = {"g/L": 1.0, "g/l": 1.0, "mg/L": 1e-3, "mg/l": 1e-3, "ug/L": 1e-6, "µg/L": 1e-6}
_VOLUME = {"L": 1.0, "l": 1.0, "mL": 1e-3, "ml": 1e-3, "uL": 1e-6, "µL": 1e-6, "μL": 1e-6, "ul": 1e-6}

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")

#: Largest concentration accepted anywhere, mol/L (a sanity bound: nothing in
#: water exceeds about 20 M).
MAX_CONC = 20.0


def _split(text: str) -> tuple[float, str]:
    m = _NUMBER.match(text)
    if not m:
        raise UnitError(f"'{text.strip()}' is not an amount (expected a number and a unit, e.g. '50 mM')")
    value = float(m.group(1))
    if not math.isfinite(value):
        raise UnitError(f"'{text.strip()}' is not a finite number")
    if value < 0:
        raise UnitError(f"'{text.strip()}': amount cannot be negative")
    return value, m.group(2)


def parse_concentration(value, *, molar_mass: float | None = None) -> float:
    """Concentration in mol/L from a number (mol/L) or a string with a unit.

    >>> parse_concentration("50 mM")
    0.05
    >>> parse_concentration("5.844 g/L", molar_mass=58.44)
    0.1
    """
    if isinstance(value, bool):
        raise UnitError(f"{value!r} is not an amount")
    if isinstance(value, (int, float)):
        v = float(value)
        if not math.isfinite(v):
            raise UnitError(f"{value!r} is not a finite number")
        if v < 0:
            raise UnitError(f"{value!r}: amount cannot be negative")
        conc = v
    elif isinstance(value, str):
        v, unit = _split(value)
        if unit == "":
            conc = v
        elif unit in _MOLAR:
            conc = v * _MOLAR[unit]
        elif unit in _MASS:
            if molar_mass is None:
                raise UnitError(f"'{value.strip()}': a mass concentration needs a molar mass, "
                                "which this reagent does not have; use mol/L units")
            conc = v * _MASS[unit] / molar_mass
        else:
            raise UnitError(f"'{value.strip()}': unknown unit '{unit}' "
                            "(use M, mM, uM, nM, mol/L, mmol/L, g/L or mg/L)")
    else:
        raise UnitError(f"{value!r} is not an amount (expected a number or a string like '50 mM')")
    if conc > MAX_CONC:
        raise UnitError(f"'{value}' is more than {MAX_CONC:g} mol/L; no aqueous solution is that concentrated")
    return conc


def parse_volume(value) -> float:
    """Volume in litres from a number (litres) or a string such as "25 mL"."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(f"{value!r} is not a volume (expected e.g. '25 mL')")
    if isinstance(value, str):
        v, unit = _split(value)
        if unit == "":
            return v
        if unit not in _VOLUME:
            raise UnitError(f"'{value.strip()}': unknown volume unit '{unit}' (use L, mL or uL)")
        return v * _VOLUME[unit]
    v = float(value)
    if not math.isfinite(v) or v < 0:
        raise UnitError(f"{value!r} is not a volume (must be finite and >= 0)")
    return v


#: Pressure units -> atm. ppm and % are parts of a 1 atm total pressure.
_PRESSURE = {
    "atm": 1.0, "bar": 1.0 / 1.01325, "kPa": 1.0 / 101.325, "Pa": 1.0 / 101325.0, "mmHg": 1.0 / 760.0,
    "torr": 1.0 / 760.0, "Torr": 1.0 / 760.0, "uatm": 1e-6, "µatm": 1e-6, "μatm": 1e-6, "mbar": 1e-3 / 1.01325,
    "ppm": 1e-6, "ppmv": 1e-6, "%": 1e-2,
}

#: Largest partial pressure accepted, atm (a sanity bound for open-vessel work).
MAX_PRESSURE_ATM = 1000.0


def parse_pressure(value) -> float:
    """Partial pressure in atm from a number (atm) or a string with a unit.

    Units: atm, bar, mbar, kPa, Pa, mmHg (torr), uatm (µatm), and ppm or %
    of a 1 atm total pressure.  The pressure must be above 0.

    >>> parse_pressure("420 uatm")
    0.00042
    >>> parse_pressure("5 %")
    0.05
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(f"{value!r} is not a pressure (expected e.g. '420 uatm' or '5 %')")
    if isinstance(value, str):
        text = value.strip()
        m = _NUMBER.match(text)
        if not m:
            raise UnitError(f"'{text[:40]}' is not a pressure (expected a number and a unit, e.g. '420 uatm')")
        v = float(m.group(1))
        unit = m.group(2)
        if unit == "":
            factor = 1.0
        elif unit in _PRESSURE:
            factor = _PRESSURE[unit]
        else:
            raise UnitError(f"'{text[:40]}': unknown pressure unit '{unit[:20]}' "
                            "(use atm, bar, kPa, Pa, mmHg, uatm, ppm or %)")
        p = v * factor
    else:
        p = float(value)
    if not math.isfinite(p) or p <= 0:
        raise UnitError(f"{value!r}: a pressure must be above 0")
    if p > MAX_PRESSURE_ATM:
        raise UnitError(f"{value!r}: more than {MAX_PRESSURE_ATM:g} atm")
    return p
