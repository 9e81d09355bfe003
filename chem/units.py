"""Reading amounts written the way chemists write them.

Concentrations: M, mM, uM (µM, μM), nM, mol/L, mmol/L, umol/L, and, where
the reagent's molar mass is known, g/L and mg/L.  A bare number is mol/L.
Volumes: L, mL, uL (µL).  All values are checked to be finite and >= 0.
Temperatures: ``37``, ``37 °C``, ``37°C``, ``37 C`` or ``37 ℃``.

Numbers are written with the ASCII digits 0-9: other digits (full-width
"５", Arabic-Indic, ...) are refused with a message that says so, rather than
read and then shown misaligned. An amount too small to be represented (it
would be read as zero while its text says otherwise) is refused too.
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

_NUMBER = re.compile(r"^\s*([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)\s*(.*?)\s*$", re.ASCII)
_CELSIUS = re.compile(r"\s*(?:°\s*C|℃|C)\s*$", re.IGNORECASE)

#: Longest piece of typed text quoted back in an error message (characters).
QUOTE_LIMIT = 40

#: Largest concentration accepted anywhere, mol/L (a sanity bound: nothing in
#: water exceeds about 20 M).
MAX_CONC = 20.0


def shown(value, limit: int = QUOTE_LIMIT) -> str:
    """``value`` quoted for an error message: in quotes, cut to about ``limit`` characters.

    Control characters are written as escapes (``\\x1b``), so the message is safe to print
    and a long input (a 100,000-character name) does not flood it.
    """
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 128:
        return f"an integer of {int(value.bit_length() * 0.30103) + 1} or so digits"
    text = value.strip() if isinstance(value, str) else repr(value)
    if len(text) > limit:
        text = text[: limit - 12] + "…" + text[-8:]
    escaped = "".join(ch if ch.isprintable() or ch == " " else repr(ch)[1:-1] for ch in text)
    return f"'{escaped}'"


def _other_digits(text: str) -> bool:
    """``text`` holds a digit that is not one of the ASCII digits 0-9."""
    return any(ch.isdigit() and not "0" <= ch <= "9" for ch in text)


def _split(text: str, what: str = "an amount") -> tuple[float, str]:
    if _other_digits(text):
        raise UnitError(f"{shown(text)}: write numbers with the digits 0-9 (not full-width or other scripts)")
    m = _NUMBER.match(text)
    if not m:
        example = "'25 mL'" if what == "a volume" else "'50 mM'"
        raise UnitError(f"{shown(text)} is not {what} (expected a number and a unit, e.g. {example})")
    value = float(m.group(1))
    if not math.isfinite(value):
        raise UnitError(f"{shown(text)} is not a finite number")
    if value < 0:
        raise UnitError(f"{shown(text)}: amount cannot be negative")
    if value == 0 and any(ch in "123456789" for ch in m.group(1).split("e")[0].split("E")[0]):
        raise UnitError(f"{shown(text)} is too small to be represented; write 0 for none")
    return value, m.group(2)


def _number(value) -> float:
    """A number given as an int or float, as a finite float >= 0 (a huge integer is refused, not crashed on)."""
    try:
        v = float(value)
    except OverflowError:
        raise UnitError(f"{shown(value)} is too large") from None
    if not math.isfinite(v):
        raise UnitError(f"{shown(value)} is not a finite number")
    if v < 0:
        raise UnitError(f"{shown(value)}: amount cannot be negative")
    return v


def _not_lost(conc: float, value, number: float) -> float:
    """``conc`` unless a non-zero amount came out as zero or a denormal (too small to represent)."""
    if number != 0 and conc < _SMALLEST:
        raise UnitError(f"{shown(value)} is too small to be represented; write 0 for none")
    return conc


#: Smallest non-zero amount kept (mol/L or L): below the normal floats, values lose their digits.
_SMALLEST = 2.2250738585072014e-308


def parse_concentration(value, *, molar_mass: float | None = None) -> float:
    """Concentration in mol/L from a number (mol/L) or a string with a unit.

    >>> parse_concentration("50 mM")
    0.05
    >>> parse_concentration("5.844 g/L", molar_mass=58.44)
    0.1
    """
    if isinstance(value, bool):
        raise UnitError(f"{shown(value)} is not an amount")
    if isinstance(value, (int, float)):
        v = conc = _number(value)
    elif isinstance(value, str):
        v, unit = _split(value)
        if unit == "":
            conc = v
        elif unit in _MOLAR:
            conc = v * _MOLAR[unit]
        elif unit in _MASS:
            if molar_mass is None:
                raise UnitError(f"{shown(value)}: a mass concentration needs a molar mass, "
                                "which this reagent does not have; use mol/L units")
            conc = v * _MASS[unit] / molar_mass
        else:
            raise UnitError(f"{shown(value)}: unknown unit {shown(unit, 16)} "
                            "(use M, mM, uM, nM, mol/L, mmol/L, g/L or mg/L)")
    else:
        raise UnitError(f"{shown(value)} is not an amount (expected a number or a string like '50 mM')")
    if conc > MAX_CONC:
        raise UnitError(f"{shown(value)} is more than {MAX_CONC:g} mol/L; no aqueous solution is that concentrated")
    return _not_lost(conc, value, v)


def parse_volume(value) -> float:
    """Volume in litres from a number (litres) or a string such as "25 mL"."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(f"{shown(value)} is not a volume (expected e.g. '25 mL')")
    if isinstance(value, str):
        v, unit = _split(value, "a volume")
        if unit == "":
            return v
        if unit not in _VOLUME:
            raise UnitError(f"{shown(value)}: unknown volume unit {shown(unit, 16)} (use L, mL or uL)")
        return _not_lost(v * _VOLUME[unit], value, v)
    return _number(value)


def parse_temperature(value, what: str = "temperature") -> float:
    """Temperature in °C from a number or text such as ``37``, ``37 °C``, ``37C`` or ``37 ℃``.

    The value must lie in the range of the water formulations (see :mod:`chem.limits`);
    raises :class:`~chem.errors.UnitError` naming ``what`` otherwise.
    """
    from .limits import check_temperature

    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(f"{what}: {shown(value)} is not a temperature (expected e.g. '37' or '37 °C')")
    if isinstance(value, str):
        text = _CELSIUS.sub("", value)
        if _other_digits(text):
            raise UnitError(f"{what}: {shown(value)}: write numbers with the digits 0-9")
        try:
            number = float(text.strip()) if re.fullmatch(r"\s*[+-]?[0-9.]+(?:[eE][+-]?[0-9]+)?\s*", text) else None
        except ValueError:
            number = None
        if number is None:
            raise UnitError(f"{what}: {shown(value)} is not a temperature (expected e.g. '37' or '37 °C')")
        value = number
    return check_temperature(value, what)


#: Pressure units -> atm. ppm and % are parts of a 1 atm total pressure.
_PRESSURE = {
    "atm": 1.0, "bar": 1.0 / 1.01325, "kPa": 1.0 / 101.325, "Pa": 1.0 / 101325.0, "mmHg": 1.0 / 760.0,
    "torr": 1.0 / 760.0, "Torr": 1.0 / 760.0, "uatm": 1e-6, "µatm": 1e-6, "μatm": 1e-6, "mbar": 1e-3 / 1.01325,
    "ppm": 1e-6, "ppmv": 1e-6, "%": 1e-2,
}

#: Largest partial pressure accepted, atm (a sanity bound for open-vessel work).
MAX_PRESSURE_ATM = 1000.0


def parse_pressure(value, *, allow_zero: bool = False) -> float:
    """Partial pressure in atm from a number (atm) or a string with a unit.

    Units: atm, bar, mbar, kPa, Pa, mmHg (torr), uatm (µatm), and ppm or %
    of a 1 atm total pressure.  The pressure must be above 0 (or, with
    ``allow_zero``, at least 0: the start of a sweep of a gas's pressure).

    >>> parse_pressure("420 uatm")
    0.00042
    >>> parse_pressure("5 %")
    0.05
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(f"{shown(value)} is not a pressure (expected e.g. '420 uatm' or '5 %')")
    if isinstance(value, str):
        text = value.strip()
        if _other_digits(text):
            raise UnitError(f"{shown(text)}: write numbers with the digits 0-9 (not full-width or other scripts)")
        m = _NUMBER.match(text)
        if not m:
            raise UnitError(f"{shown(text)} is not a pressure (expected a number and a unit, e.g. '420 uatm')")
        v = float(m.group(1))
        unit = m.group(2)
        if unit == "":
            factor = 1.0
        elif unit in _PRESSURE:
            factor = _PRESSURE[unit]
        else:
            raise UnitError(f"{shown(text)}: unknown pressure unit {shown(unit, 16)} "
                            "(use atm, bar, kPa, Pa, mmHg, uatm, ppm or %)")
        p = v * factor
    else:
        try:
            p = float(value)
        except OverflowError:
            raise UnitError(f"{shown(value)} is too large") from None
    if not math.isfinite(p) or p < 0 or (p == 0 and not allow_zero):
        raise UnitError(f"{shown(value)}: a pressure must be {'0 or more' if allow_zero else 'above 0'}")
    if p > MAX_PRESSURE_ATM:
        raise UnitError(f"{shown(value)}: more than {MAX_PRESSURE_ATM:g} atm")
    return p


# -- showing pressures -------------------------------------------------------------------

def pressure_ppm(atm: float) -> float:
    """A partial pressure in atm as ppm of a 1 atm total pressure (how exposure limits are written)."""
    return atm / _PRESSURE["ppm"]


def format_pressure(atm: float) -> str:
    """A partial pressure for display: atm from 0.1 atm up, % from 1 %, ppm below.

    >>> format_pressure(0.00042), format_pressure(0.0012), format_pressure(0.05), format_pressure(2.0)
    ('420 ppm', '1200 ppm', '5 %', '2 atm')
    """
    if not math.isfinite(atm):
        return "-"
    if atm >= 0.1:
        return f"{atm:.3g} atm"
    if atm >= 1e-2:
        return f"{atm / _PRESSURE['%']:.3g} %"
    ppm = pressure_ppm(atm)
    return f"{ppm:.0f} ppm" if ppm >= 100 else f"{ppm:.3g} ppm"
