"""Frozen model objects: what goes into a solve and what comes out.

Data flows one way: a :class:`Mixture` (immutable; an edit makes a new one)
goes into :func:`chem.solve`, which returns an :class:`Equilibrium`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from typing import NamedTuple

import numpy as np

from .activity import MODELS
from .errors import ModelError
from .water import KELVIN, LN10, R_J, T_MAX_C, T_MIN_C

#: Reference temperature of tabulated constants, °C.
T_REF_C = 25.0

_CHARGE_SUFFIX = re.compile(r"(\^(\d+)([+-])|([+-]))$")


def charge_from_name(name: str) -> int:
    """Charge written at the end of a species name: ``HPO4^2-`` -> -2, ``NH4+`` -> 1."""
    m = _CHARGE_SUFFIX.search(name)
    if not m:
        return 0
    if m.group(4):
        return 1 if m.group(4) == "+" else -1
    n = int(m.group(2))
    return n if m.group(3) == "+" else -n


def charge_label(z: int) -> str:
    """``-2`` -> ``"^2-"``, ``1`` -> ``"+"``, ``0`` -> ``""``."""
    if z == 0:
        return ""
    sign = "+" if z > 0 else "-"
    return sign if abs(z) == 1 else f"^{abs(z)}{sign}"


def _tuple_of_floats(values, what: str, owner: str) -> tuple[float, ...]:
    try:
        out = tuple(float(v) for v in values)
    except (TypeError, ValueError):
        raise ModelError(f"{owner}: {what} must be a list of numbers") from None
    if not all(math.isfinite(v) for v in out):
        raise ModelError(f"{owner}: {what} must be finite numbers")
    return out


@dataclass(frozen=True)
class Ion:
    """A fully dissociated ion that takes part in no equilibrium (Na+, Cl-, ...)."""

    name: str
    charge: int
    ion_size_a: float = 4.0
    molar_mass: float | None = None
    source: str = ""


@dataclass(frozen=True)
class AcidBaseSystem:
    """An acid–base backbone: a base form L and its protonated forms HjL.

    Species are listed fully protonated first; step ``k`` (``pka[k]``)
    removes a proton from ``species[k]`` to give ``species[k+1]``.
    """

    name: str
    species: tuple[str, ...]
    pka: tuple[float, ...]
    """Thermodynamic stepwise pKa at 25 °C and I = 0, first proton first."""
    charge_fully_protonated: int
    dh_kj: tuple[float, ...] | None = None
    """Standard enthalpy of each dissociation step, kJ/mol (None: unknown)."""
    dcp_j: tuple[float, ...] | None = None
    """Heat-capacity change of each step, J/(K·mol) (None: taken as 0)."""
    ion_size_a: float = 4.0
    t_range_c: tuple[float, float] | None = None
    aliases: tuple[str, ...] = ()
    hazard: str | None = None
    source: str = ""
    custom: bool = False
    buffer: bool = True
    """Offered as a pH buffer by the recipe designer (False for chelators and metal ions)."""

    def __post_init__(self) -> None:
        owner = f"system {self.name!r}"
        object.__setattr__(self, "pka", _tuple_of_floats(self.pka, "pKa", owner))
        n = len(self.pka)
        if n < 1:
            raise ModelError(f"{owner}: needs at least one pKa")
        if any(b <= a for a, b in zip(self.pka, self.pka[1:])):
            raise ModelError(f"{owner}: pKa values must increase step by step (first proton first)")
        if any(not -3.0 <= p <= 17.0 for p in self.pka):
            raise ModelError(f"{owner}: pKa outside -3..17")
        if len(self.species) != n + 1:
            raise ModelError(f"{owner}: needs {n + 1} species names for {n} pKa values")
        for opt in ("dh_kj", "dcp_j"):
            val = getattr(self, opt)
            if val is not None:
                val = _tuple_of_floats(val, opt, owner)
                if len(val) != n:
                    raise ModelError(f"{owner}: {opt} needs one value per pKa ({n})")
                object.__setattr__(self, opt, val)
        if not (0.0 < self.ion_size_a < 20.0):
            raise ModelError(f"{owner}: ion size must be between 0 and 20 Å")
        object.__setattr__(self, "species", tuple(self.species))
        object.__setattr__(self, "aliases", tuple(self.aliases))

    @property
    def steps(self) -> int:
        return len(self.pka)

    def charge_of(self, k: int) -> int:
        """Charge of ``species[k]`` (k protons removed from the fully protonated form)."""
        return self.charge_fully_protonated - k

    def pka_at(self, t_c):
        """Stepwise pKa at temperature ``t_c`` (°C; float or array) by van 't Hoff.

        Integrated van 't Hoff equation with a constant heat-capacity change:
        ln K(T) = ln K(T0) - ΔH/R (1/T - 1/T0) + ΔCp/R (T0/T - 1 + ln(T/T0)).
        Without enthalpy data the 25 °C value is used unchanged.
        Returns an array shaped ``np.shape(t_c) + (steps,)``.
        """
        t = np.asarray(t_c, dtype=float)[..., None]
        pka0 = np.asarray(self.pka)
        if self.dh_kj is None:
            return np.broadcast_to(pka0, t.shape[:-1] + pka0.shape).copy()
        T = t + KELVIN
        T0 = T_REF_C + KELVIN
        dh = np.asarray(self.dh_kj) * 1000.0
        dcp = np.asarray(self.dcp_j) if self.dcp_j is not None else 0.0
        ln_k = (-pka0 * LN10 - dh / R_J * (1.0 / T - 1.0 / T0)
                + dcp / R_J * (T0 / T - 1.0 + np.log(T / T0)))
        return -ln_k / LN10

    def has_temperature_data(self) -> bool:
        return self.dh_kj is not None


@dataclass(frozen=True)
class Reagent:
    """What a chemist weighs out: ``units`` of a system carrying ``protons``, plus counter-ions.

    Strong acids and bases carry ``H+`` or ``OH-`` among their counter-ions.
    A reagent is electrically neutral; this is checked on creation.
    """

    name: str
    system: AcidBaseSystem | None
    protons: int
    counter_ions: tuple[tuple[Ion, int], ...] = ()
    units: int = 1
    formula: str = ""
    molar_mass: float | None = None
    """g/mol, or None where unknown (then g/L amounts are refused)."""
    aliases: tuple[str, ...] = ()
    source: str = ""
    custom: bool = False

    def __post_init__(self) -> None:
        owner = f"reagent {self.name!r}"
        if self.units < 1:
            raise ModelError(f"{owner}: units must be at least 1")
        max_protons = self.units * self.system.steps if self.system else 0
        if not 0 <= self.protons <= max_protons:
            raise ModelError(f"{owner}: protons must be between 0 and {max_protons}")
        if self.molar_mass is not None and not (math.isfinite(self.molar_mass) and self.molar_mass > 0):
            raise ModelError(f"{owner}: molar mass must be a positive number")
        if self.net_charge != 0:
            raise ModelError(f"{owner}: not electrically neutral (net charge {self.net_charge:+d}); "
                             "check protons and counter_ions")
        object.__setattr__(self, "counter_ions", tuple(self.counter_ions))
        object.__setattr__(self, "aliases", tuple(self.aliases))

    @property
    def net_charge(self) -> int:
        q = sum(ion.charge * n for ion, n in self.counter_ions)
        if self.system is not None:
            q += self.units * (self.system.charge_fully_protonated - self.system.steps) + self.protons
        return q

    @property
    def strong_acid_equivalents(self) -> int:
        """H+ (positive) or OH- (negative) released completely per formula unit."""
        return sum(n if ion.name == "H+" else -n if ion.name == "OH-" else 0
                   for ion, n in self.counter_ions)


@dataclass(frozen=True)
class Ingredient:
    """A reagent in the flask at an analytical concentration (mol/L)."""

    reagent: Reagent
    conc: float
    text: str | None = None
    """The amount as the user wrote it (e.g. "30 mM"), kept for display and saving."""

    def __post_init__(self) -> None:
        if not (math.isfinite(self.conc) and 0.0 <= self.conc <= 20.0):
            raise ModelError(f"{self.reagent.name}: concentration must be between 0 and 20 mol/L")

    @property
    def label(self) -> str:
        return self.text if self.text else format_molar(self.conc)

    def with_conc(self, conc: float, text: str | None = None) -> "Ingredient":
        return replace(self, conc=float(conc), text=text)


def format_molar(c: float, digits: int = 6) -> str:
    """A concentration with a readable unit and ``digits`` significant digits: 0.03 -> "30 mM"."""
    if c == 0:
        return "0 M"
    for unit, f in (("M", 1.0), ("mM", 1e-3), ("uM", 1e-6), ("nM", 1e-9)):
        if c >= f * 0.9999999:
            return f"{c / f:.{digits}g} {unit}"
    return f"{c:.{digits}g} M"


@dataclass(frozen=True)
class Mixture:
    """The contents of the flask. Immutable: edits return a new mixture."""

    ingredients: tuple[Ingredient, ...] = ()
    temperature_c: float = 25.0
    activity: str = "davies"
    title: str = ""
    notes: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "ingredients", tuple(self.ingredients))
        t = self.temperature_c
        if not (isinstance(t, (int, float)) and math.isfinite(t) and T_MIN_C <= t <= T_MAX_C):
            raise ModelError(f"temperature must be between {T_MIN_C:g} and {T_MAX_C:g} °C (got {t!r})")
        object.__setattr__(self, "temperature_c", float(t))
        if self.activity not in MODELS:
            raise ModelError(f"unknown activity model {self.activity!r}; use one of {', '.join(MODELS)}")

    # -- edits ---------------------------------------------------------------
    def with_ingredient(self, ingredient: Ingredient) -> "Mixture":
        return replace(self, ingredients=self.ingredients + (ingredient,))

    def without(self, index: int) -> "Mixture":
        ing = list(self.ingredients)
        del ing[index]
        return replace(self, ingredients=tuple(ing))

    def with_replaced(self, index: int, ingredient: Ingredient) -> "Mixture":
        ing = list(self.ingredients)
        ing[index] = ingredient
        return replace(self, ingredients=tuple(ing))

    def with_temperature(self, t_c: float) -> "Mixture":
        return replace(self, temperature_c=float(t_c))

    def with_activity(self, model: str) -> "Mixture":
        return replace(self, activity=model)

    def scaled(self, factor: float) -> "Mixture":
        """Every amount multiplied by ``factor`` (dilution when < 1)."""
        return replace(self, ingredients=tuple(i.with_conc(i.conc * factor) for i in self.ingredients))

    # -- derived -------------------------------------------------------------
    def systems(self) -> tuple[tuple[AcidBaseSystem, float], ...]:
        """Each acid–base system once, with its total concentration (mol/L)."""
        cached = self.__dict__.get("_systems")
        if cached is not None:
            return cached
        totals: dict[str, list] = {}
        for ing in self.ingredients:
            sys_ = ing.reagent.system
            if sys_ is None:
                continue
            entry = totals.setdefault(sys_.name, [sys_, 0.0])
            entry[1] += ing.conc * ing.reagent.units
        result = tuple((s, c) for s, c in totals.values())
        self.__dict__["_systems"] = result      # immutable object: safe to remember
        return result

    def strong_ions(self) -> tuple[tuple[Ion, float], ...]:
        """Each conserved strong ion once, with its total (mol/L). H+/OH- are not included."""
        cached = self.__dict__.get("_strong")
        if cached is not None:
            return cached
        totals: dict[str, list] = {}
        for ing in self.ingredients:
            for ion, n in ing.reagent.counter_ions:
                if ion.name in ("H+", "OH-"):
                    continue
                entry = totals.setdefault(ion.name, [ion, 0.0])
                entry[1] += ing.conc * n
        result = tuple((i, c) for i, c in totals.values())
        self.__dict__["_strong"] = result
        return result

    def strong_acid_excess(self) -> float:
        """Strong acid minus strong base added, mol/L (from H+/OH- counter-ions)."""
        return sum(i.conc * i.reagent.strong_acid_equivalents for i in self.ingredients)


@dataclass(frozen=True)
class Notice:
    """A warning about the model or a safety caution, with a stable code."""

    code: str
    message: str


class Species(NamedTuple):
    """One species of a solved mixture (immutable)."""

    name: str
    system: str
    """Acid–base system, or "water" (H+, OH-) or "strong" (Na+, Cl-, ...)."""
    protons: int
    """Dissociable protons still bound."""
    charge: int
    conc: float
    """mol/L."""
    activity_coefficient: float
    fraction: float | None
    """Share of its system's total; None for water and strong ions."""

    @property
    def log_c(self) -> float:
        return math.log10(self.conc) if self.conc > 0 else -math.inf

    @property
    def activity(self) -> float:
        return self.conc * self.activity_coefficient


@dataclass(frozen=True)
class Equilibrium:
    """Result of :func:`chem.solve`. Read ``converged`` before trusting the numbers."""

    mixture: Mixture
    pH: float
    pOH: float
    pKw: float
    ionic_strength: float
    """mol/L, solved self-consistently with the activity model."""
    converged: bool
    balance_error: float
    """Remaining charge-balance residual, mol/L."""
    iterations: int
    message: str
    species: tuple[Species, ...]
    systems: tuple[tuple[str, float], ...]
    warnings: tuple[Notice, ...] = ()
    cautions: tuple[Notice, ...] = ()

    @property
    def temperature_c(self) -> float:
        return self.mixture.temperature_c

    @property
    def activity(self) -> str:
        return self.mixture.activity

    def species_of(self, system: str) -> tuple[Species, ...]:
        return tuple(s for s in self.species if s.system == system)

    def get(self, name: str) -> Species:
        for s in self.species:
            if s.name == name:
                return s
        raise KeyError(name)

    def to_dict(self) -> dict:
        """The JSON object of ``protomix solve --json`` (format 1)."""
        def num(x):
            return None if x is None or not math.isfinite(x) else float(x)
        return {
            "format": 1,
            "pH": num(self.pH),
            "pOH": num(self.pOH),
            "temperature_c": self.temperature_c,
            "activity": self.activity,
            "ionic_strength_M": num(self.ionic_strength),
            "converged": bool(self.converged),
            "balance_error_M": num(abs(self.balance_error)),
            "species": [
                {"name": s.name, "system": s.system, "protons": s.protons, "charge": s.charge,
                 "conc_M": num(s.conc), "activity_coefficient": num(s.activity_coefficient),
                 "fraction": num(s.fraction)}
                for s in self.species
            ],
            "systems": [{"name": n, "total_M": num(c)} for n, c in self.systems],
            "warnings": [{"code": w.code, "message": w.message} for w in self.warnings],
            "cautions": [{"code": c.code, "message": c.message} for c in self.cautions],
        }


__all__ = [
    "AcidBaseSystem", "Ion", "Reagent", "Ingredient", "Mixture", "Notice", "Species",
    "Equilibrium", "charge_from_name", "charge_label", "format_molar", "T_REF_C",
]
