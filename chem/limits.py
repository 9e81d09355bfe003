"""Ranges and reference points shared by every front end.

One rule for every command and the explorer: a pH typed by the user (a target
pH, the ends of a pH axis) lies on the pH scale from :data:`PH_MIN` to
:data:`PH_MAX`; a working temperature lies in the range of the water
formulations (:data:`T_MIN_C` to :data:`T_MAX_C`). Front ends read the limits
from here instead of writing their own numbers, so every command gives the
same answer and the same message.

A *solved* pH is not limited: a concentrated strong acid can have a pH below
0, and the result says so.
"""

from __future__ import annotations

import math

from .errors import UnitError
from .water import T_MAX_C, T_MIN_C

#: No free activity above this (mol/L) can be a solution: no aqueous solution holds much more than 30
#: mol/L of anything (water itself is 55 mol/L). A held pH, solid or gas that would pin a free ion
#: above it leaves that point without a solution (see notices.check_possible for totals).
PINNED_ACTIVITY_MAX = 30.0

#: The pH scale offered for targets and pH axes (common practice: 0 to 14).
PH_MIN = 0.0
PH_MAX = 14.0

#: Default pH axis of the curves that hold the pH at each point (distribution of one system with
#: its complexes and solids, solubility, saturation indices): the range of natural and process
#: waters and of most lab work, where a pH-stat's acid or base stays far below molar levels
#: (common practice).
HELD_PH_RANGE = (2.0, 12.0)

#: Temperature at which the library's constants are tabulated, °C (the standard
#: reference temperature of the compilations the library cites).
STANDARD_TEMPERATURE_C = 25.0

__all__ = ["PH_MIN", "PH_MAX", "T_MIN_C", "T_MAX_C", "STANDARD_TEMPERATURE_C", "LOG_C_FLOOR", "check_ph",
           "check_ph_range", "check_temperature", "neutral_ph", "ph_grid", "AIR_GAS", "AIR_PRESSURE"]


def check_ph(value: float, what: str = "pH") -> float:
    """``value`` as a float if it is a finite pH from :data:`PH_MIN` to :data:`PH_MAX`.

    Raises :class:`~chem.errors.UnitError` naming ``what`` otherwise.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise UnitError(f"{what}: expected a number, got {type(value).__name__}")
    v = float(value)
    if not math.isfinite(v):
        raise UnitError(f"{what}: must be a finite number")
    if not PH_MIN <= v <= PH_MAX:
        raise UnitError(f"{what}: {v:g} is outside the pH range {PH_MIN:g} to {PH_MAX:g}")
    return v


def check_ph_range(lo: float, hi: float, what: str = "pH range") -> tuple[float, float]:
    """(lo, hi) if both are pHs within the limits and ``lo`` < ``hi``; raises :class:`UnitError`."""
    lo = check_ph(lo, f"{what} start")
    hi = check_ph(hi, f"{what} end")
    if not lo < hi:
        raise UnitError(f"{what}: the start must be below the end (got {lo:g} and {hi:g})")
    return lo, hi


def ph_grid(points: int, lo: float = PH_MIN, hi: float = PH_MAX):
    """``points`` evenly spaced pH values from ``lo`` to ``hi`` (default: the whole scale)."""
    import numpy as np

    lo, hi = check_ph_range(lo, hi)
    return np.linspace(lo, hi, int(points))


def check_temperature(value: float, what: str = "temperature") -> float:
    """``value`` (°C) as a float if it is in the range of the water formulations; raises :class:`UnitError`."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise UnitError(f"{what}: expected a number of °C, got {type(value).__name__}")
    v = float(value)
    if not math.isfinite(v):
        raise UnitError(f"{what}: must be a finite number of °C")
    if not T_MIN_C <= v <= T_MAX_C:
        raise UnitError(f"{what}: {v:g} °C is outside {T_MIN_C:g} to {T_MAX_C:g} °C")
    return v


def neutral_ph(temperature_c: float) -> float:
    """pH of neutral water at ``temperature_c`` (°C): pKw(T)/2, where a(H+) = a(OH-).

    About 7.00 at 25 °C, 6.81 at 37 °C and 7.47 at 0 °C (Kw from IAPWS R11-07).
    """
    from .water import pkw

    return float(pkw(check_temperature(temperature_c))) / 2.0

#: Lowest log10 C (mol/L) drawn in a log C plot: lower values are clipped to it for drawing
#: only (common practice: the range of interest of aqueous log C diagrams); data keep their values.
LOG_C_FLOOR = -14.0

#: The gas an open flask exchanges with room air, and its partial pressure as a user would write
#: it (the explorer's "open to air"). Globally averaged CO2 in air was about 419 ppm in 2023
#: (NOAA Global Monitoring Laboratory, globally averaged marine surface annual mean, Lan, Tans &
#: Thoning; from memory), rounded up; at 1 atm total pressure ppm and µatm agree to within the
#: share of water vapour, which is the precision such a default has anyway.
AIR_GAS = "CO2"
AIR_PRESSURE = "420 uatm"
