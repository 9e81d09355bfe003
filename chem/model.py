"""Frozen model objects: what goes into a solve and what comes out.

Data flows one way: a :class:`Mixture` (immutable; an edit makes a new one)
goes into :func:`chem.solve`, which returns an :class:`Equilibrium`.

Definitions
-----------
* :class:`AcidBaseSystem` — a backbone L and its protonated forms HjL (a
  metal ion or an inert ligand is a system with no pKa and one species).
* :class:`Ion` — a fully dissociated ion (Na+, Cl-, ...).  It is inert
  unless a complex, solid or gas names it; then it is a component like any
  other.
* :class:`Complex`, :class:`Solid`, :class:`Gas` — reactions over the
  species of systems, the ions, H+ and OH-, each with a constant at 25 °C
  (and I = 0 unless ``ionic_strength`` says otherwise).
* :class:`Reagent` — what a chemist weighs out: units of one or more
  systems, dissociable protons, counter-ions.  Always electrically neutral.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, replace
from typing import NamedTuple, Union

import numpy as np

from .activity import MODELS
from .errors import ModelError
from .water import KELVIN, LN10, R_J, T_MAX_C, T_MIN_C

#: Reference temperature of tabulated constants, °C.
T_REF_C = 25.0

#: Largest ionic strength (mol/L) at which a tabulated constant may be stated.
MAX_REF_IONIC_STRENGTH = 5.0

#: Bound on reaction enthalpies accepted anywhere, kJ/mol (aqueous reaction
#: enthalpies lie within a few hundred kJ/mol; common practice).
MAX_ABS_DH_KJ = 500.0

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


def _check_dh(value: float | None, owner: str, what: str = "dH_kJ") -> float | None:
    if value is None:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ModelError(f"{owner}: {what} must be a number") from None
    if not math.isfinite(v) or abs(v) > MAX_ABS_DH_KJ:
        raise ModelError(f"{owner}: {what} must be a finite number within ±{MAX_ABS_DH_KJ:g} kJ/mol")
    return v


def _check_ref_ionic(value, owner: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ModelError(f"{owner}: ionic_strength_M must be a number") from None
    if not (math.isfinite(v) and 0.0 <= v <= MAX_REF_IONIC_STRENGTH):
        raise ModelError(f"{owner}: ionic_strength_M must be between 0 and {MAX_REF_IONIC_STRENGTH:g} mol/L")
    return v


def vant_hoff_log_k(log_k25, dh_j, dcp_j, t_c):
    """log10 K at ``t_c`` (°C) from log10 K at 25 °C by the integrated van 't Hoff equation.

    ln K(T) = ln K(T0) − ΔH/R (1/T − 1/T0) + ΔCp/R (T0/T − 1 + ln(T/T0)),
    ΔH in J/mol and ΔCp in J/(K·mol) of the reaction as written, taken
    constant (ΔCp) over the range.  Arguments broadcast together.
    """
    T = np.asarray(t_c, dtype=float) + KELVIN
    T0 = T_REF_C + KELVIN
    return (log_k25 - dh_j / (R_J * LN10) * (1.0 / T - 1.0 / T0)
            + dcp_j / (R_J * LN10) * (T0 / T - 1.0 + np.log(T / T0)))


@dataclass(frozen=True)
class Ion:
    """A fully dissociated ion (Na+, Cl-, ...)."""

    name: str
    charge: int
    ion_size_a: float = 4.0
    molar_mass: float | None = None
    source: str = ""


@dataclass(frozen=True)
class AcidBaseSystem:
    """An acid–base backbone: a base form L and its protonated forms HjL.

    Species are listed fully protonated first; step ``k`` (``pka[k]``)
    removes a proton from ``species[k]`` to give ``species[k+1]``.  A system
    with no pKa has one species: a metal ion or a ligand that binds no
    proton; it takes part through complexes and solids.
    """

    name: str
    species: tuple[str, ...]
    pka: tuple[float, ...]
    """Stepwise pKa at 25 °C, first proton first (thermodynamic, I = 0, unless ``ionic_strength`` > 0)."""
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
    ionic_strength: float = 0.0
    """Ionic strength (mol/L) at which ``pka`` were measured as concentration quotients; 0: thermodynamic."""
    pka_sd: tuple[float, ...] | None = None
    """Standard uncertainty of each pKa, where the source states one."""

    def __post_init__(self) -> None:
        owner = f"system {self.name!r}"
        object.__setattr__(self, "pka", _tuple_of_floats(self.pka, "pKa", owner))
        n = len(self.pka)
        if any(b <= a for a, b in zip(self.pka, self.pka[1:])):
            raise ModelError(f"{owner}: pKa values must increase step by step (first proton first)")
        if any(not -3.0 <= p <= 17.0 for p in self.pka):
            raise ModelError(f"{owner}: pKa outside -3..17")
        if len(self.species) != n + 1:
            raise ModelError(f"{owner}: needs {n + 1} species name{'s' if n else ''} for {n} pKa values")
        for opt in ("dh_kj", "dcp_j", "pka_sd"):
            val = getattr(self, opt)
            if val is not None:
                val = _tuple_of_floats(val, opt, owner)
                if len(val) != n:
                    raise ModelError(f"{owner}: {opt} needs one value per pKa ({n})")
                object.__setattr__(self, opt, val)
        if self.dh_kj is not None:
            for v in self.dh_kj:
                _check_dh(v, owner)
        if self.pka_sd is not None and any(v < 0 for v in self.pka_sd):
            raise ModelError(f"{owner}: pKa_sd must not be negative")
        if not (0.0 < self.ion_size_a < 20.0):
            raise ModelError(f"{owner}: ion size must be between 0 and 20 Å")
        object.__setattr__(self, "ionic_strength", _check_ref_ionic(self.ionic_strength, owner))
        object.__setattr__(self, "species", tuple(self.species))
        object.__setattr__(self, "aliases", tuple(self.aliases))

    @property
    def steps(self) -> int:
        return len(self.pka)

    @property
    def is_metal(self) -> bool:
        """A cation that binds no proton (Ca^2+, Cu^2+, ...)."""
        return self.steps == 0 and self.charge_fully_protonated > 0

    def charge_of(self, k: int) -> int:
        """Charge of ``species[k]`` (k protons removed from the fully protonated form)."""
        return self.charge_fully_protonated - k

    @property
    def base_charge(self) -> int:
        """Charge of the fully deprotonated species (the system's component)."""
        return self.charge_fully_protonated - self.steps

    def pka_at(self, t_c):
        """Stepwise pKa at temperature ``t_c`` (°C; float or array) by van 't Hoff, at the stated ionic strength.

        Without enthalpy data the 25 °C value is used unchanged.
        Returns an array shaped ``np.shape(t_c) + (steps,)``.
        """
        t = np.asarray(t_c, dtype=float)[..., None]
        pka0 = np.asarray(self.pka, dtype=float)
        if self.dh_kj is None:
            return np.broadcast_to(pka0, t.shape[:-1] + pka0.shape).copy()
        dh = np.asarray(self.dh_kj) * 1000.0
        dcp = np.asarray(self.dcp_j) if self.dcp_j is not None else 0.0
        return -vant_hoff_log_k(-pka0, dh, dcp, t)

    def has_temperature_data(self) -> bool:
        return self.dh_kj is not None or self.steps == 0


# --------------------------------------------------------------------------
# reactions: complexes, solids, gases
# --------------------------------------------------------------------------

#: What a reaction term can stand for: a system's species, an ion, a complex
#: (only as a gas's dissolved species), or None for H+ and OH-.
Owner = Union[AcidBaseSystem, Ion, "Complex", None]


def _check_reaction(reaction, owner: str) -> tuple[tuple[str, int], ...]:
    if isinstance(reaction, dict):
        items = list(reaction.items())
    else:
        items = list(reaction)
    if not items:
        raise ModelError(f"{owner}: reaction must name at least one species")
    out = []
    seen = set()
    for name, coeff in items:
        if not isinstance(name, str) or not name.strip():
            raise ModelError(f"{owner}: reaction species names must be text")
        if isinstance(coeff, bool) or not isinstance(coeff, (int, np.integer)):
            raise ModelError(f"{owner}: reaction coefficient of '{name}' must be a whole number (got {coeff!r})")
        coeff = int(coeff)
        if coeff == 0:
            raise ModelError(f"{owner}: reaction coefficient of '{name}' must not be 0")
        if abs(coeff) > 20:
            raise ModelError(f"{owner}: reaction coefficient of '{name}' must be between -20 and 20")
        if coeff < 0 and name not in ("H+", "OH-"):
            raise ModelError(f"{owner}: only H+ and OH- may have a negative coefficient (got {name} = {coeff})")
        if name in seen:
            raise ModelError(f"{owner}: '{name}' appears twice in the reaction")
        seen.add(name)
        out.append((name, coeff))
    return tuple(out)


def _check_log_k(value, owner: str) -> float:
    if isinstance(value, bool):
        raise ModelError(f"{owner}: log_K must be a number")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ModelError(f"{owner}: log_K must be a number") from None
    if not math.isfinite(v) or abs(v) > 200.0:
        raise ModelError(f"{owner}: log_K must be a finite number within ±200")
    return v


@dataclass(frozen=True)
class _Reaction:
    """Common part of complexes, solids and gases.

    ``reaction`` lists (species name, coefficient); ``owners`` the resolved
    owner of each term (set by the library or preset loader; empty until
    then).
    """

    name: str
    reaction: tuple[tuple[str, int], ...]
    log_k: float
    dh_kj: float | None = None
    ionic_strength: float = 0.0
    log_k_sd: float | None = None
    aliases: tuple[str, ...] = ()
    source: str = ""
    custom: bool = False
    owners: tuple = field(default=(), compare=False, repr=False)

    _kind = "reaction"

    def __post_init__(self) -> None:
        owner = f"{self._kind} {self.name!r}"
        if not isinstance(self.name, str) or not self.name.strip():
            raise ModelError(f"{self._kind}: name must not be empty")
        object.__setattr__(self, "reaction", _check_reaction(self.reaction, owner))
        object.__setattr__(self, "log_k", _check_log_k(self.log_k, owner))
        object.__setattr__(self, "dh_kj", _check_dh(self.dh_kj, owner))
        object.__setattr__(self, "ionic_strength", _check_ref_ionic(self.ionic_strength, owner))
        if self.log_k_sd is not None:
            sd = float(self.log_k_sd)
            if not (math.isfinite(sd) and sd >= 0):
                raise ModelError(f"{owner}: log_K_sd must be a non-negative number")
            object.__setattr__(self, "log_k_sd", sd)
        object.__setattr__(self, "aliases", tuple(self.aliases))
        if self.owners and len(self.owners) != len(self.reaction):
            raise ModelError(f"{owner}: internal: owners do not match the reaction")

    @property
    def species_names(self) -> tuple[str, ...]:
        return tuple(n for n, _ in self.reaction)

    def systems_held(self) -> tuple[tuple[AcidBaseSystem, int], ...]:
        """Each system the reaction holds, with its units (needs resolved owners)."""
        out: dict[str, list] = {}
        for own, (_, coeff) in zip(self.owners, self.reaction):
            if isinstance(own, AcidBaseSystem):
                entry = out.setdefault(own.name, [own, 0])
                entry[1] += coeff
            elif isinstance(own, Complex):
                for s, n in own.systems_held():
                    entry = out.setdefault(s.name, [s, 0])
                    entry[1] += coeff * n
        return tuple((s, n) for s, n in out.values())

    def ions_held(self) -> tuple[tuple[Ion, int], ...]:
        out: dict[str, list] = {}
        for own, (_, coeff) in zip(self.owners, self.reaction):
            if isinstance(own, Ion):
                entry = out.setdefault(own.name, [own, 0])
                entry[1] += coeff
            elif isinstance(own, Complex):
                for i, n in own.ions_held():
                    entry = out.setdefault(i.name, [i, 0])
                    entry[1] += coeff * n
        return tuple((i, n) for i, n in out.values())

    def reaction_charge(self) -> int:
        """Total charge of the reaction species (needs resolved owners)."""
        return sum(coeff * species_charge(own, name) for own, (name, coeff) in zip(self.owners, self.reaction))

    def formula_text(self) -> str:
        """The reaction's right-hand side as text: ``Ca^2+ + CO3^2-``."""
        parts = []
        for name, coeff in self.reaction:
            sign = " - " if coeff < 0 else " + "
            n = abs(coeff)
            parts.append(f"{sign}{'' if n == 1 else n}{name}")
        text = "".join(parts)
        return text[3:] if text.startswith(" + ") else "-" + text[3:]


def species_charge(owner, name: str) -> int:
    """Charge of species ``name`` of ``owner`` (H+/OH- when owner is None)."""
    if owner is None:
        return 1 if name == "H+" else -1
    if isinstance(owner, Ion):
        return owner.charge
    if isinstance(owner, AcidBaseSystem):
        return owner.charge_of(owner.species.index(name))
    return owner.charge


@dataclass(frozen=True)
class Complex(_Reaction):
    """A dissolved species formed from species of the mixture.

    ``log_k`` is log10 of its formation constant from the reaction species
    as written (25 °C; I = 0 unless ``ionic_strength`` > 0), ``dh_kj`` the
    enthalpy of that reaction.  Its charge is the reaction's total charge,
    written as the name's suffix.
    """

    ion_size_a: float = 4.0
    _kind = "complex"

    def __post_init__(self) -> None:
        super().__post_init__()
        if not (0.0 < float(self.ion_size_a) < 20.0):
            raise ModelError(f"complex {self.name!r}: ion size must be between 0 and 20 Å")
        object.__setattr__(self, "ion_size_a", float(self.ion_size_a))

    @property
    def charge(self) -> int:
        return charge_from_name(self.name)


@dataclass(frozen=True)
class Solid(_Reaction):
    """A pure solid phase; ``log_k`` is log10 Ksp of its dissolution into the reaction species."""

    formula: str = ""
    _kind = "solid"


@dataclass(frozen=True)
class Gas(_Reaction):
    """A gas dissolving into one species; ``log_k`` is log10 of Henry's constant, mol/(L·atm)."""

    formula: str = ""
    exposure_limit_ppm: float | None = None
    """A published short-term exposure limit or ceiling for the gas, ppm (toxic gases)."""
    exposure_limit_source: str = ""
    _kind = "gas"

    def __post_init__(self) -> None:
        super().__post_init__()
        if len(self.reaction) != 1 or self.reaction[0][1] != 1:
            raise ModelError(f"gas {self.name!r}: reaction must name its one dissolved species with coefficient 1")
        if self.reaction[0][0] in ("H+", "OH-"):
            raise ModelError(f"gas {self.name!r}: the dissolved species cannot be H+ or OH-")
        if self.exposure_limit_ppm is not None:
            v = float(self.exposure_limit_ppm)
            if not (math.isfinite(v) and v > 0):
                raise ModelError(f"gas {self.name!r}: exposure_limit_ppm must be positive")
            object.__setattr__(self, "exposure_limit_ppm", v)

    @property
    def species(self) -> str:
        """The dissolved species."""
        return self.reaction[0][0]


@dataclass(frozen=True)
class FixedGas:
    """A gas held at a fixed partial pressure over the solution (an open system)."""

    gas: Gas
    pressure_atm: float
    text: str | None = None
    """The pressure as the user wrote it ("420 uatm"), kept for display and saving."""

    def __post_init__(self) -> None:
        p = self.pressure_atm
        if isinstance(p, bool) or not isinstance(p, (int, float)) or not math.isfinite(p) or not 0 < p <= 1000:
            raise ModelError(f"gas {self.gas.name}: pressure must be above 0 and at most 1000 atm (got {p!r})")
        object.__setattr__(self, "pressure_atm", float(p))

    @property
    def label(self) -> str:
        return self.text if self.text else f"{self.pressure_atm:.6g} atm"


# --------------------------------------------------------------------------
# reagents and mixtures
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class Reagent:
    """What a chemist weighs out: ``units`` of systems carrying ``protons``, plus counter-ions.

    ``system``/``units`` describe a reagent of one system; ``systems`` lists
    every (system, units) of a reagent that holds several (calcium
    carbonate).  Strong acids and bases carry ``H+`` or ``OH-`` among their
    counter-ions.  A reagent is electrically neutral; this is checked on
    creation.
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
    systems: tuple[tuple[AcidBaseSystem, int], ...] = ()

    def __post_init__(self) -> None:
        owner = f"reagent {self.name!r}"
        if self.systems:
            parts = tuple((s, int(n)) for s, n in self.systems)
            if any(n < 1 for _, n in parts):
                raise ModelError(f"{owner}: units must be at least 1")
            object.__setattr__(self, "systems", parts)
            object.__setattr__(self, "system", parts[0][0])
            object.__setattr__(self, "units", parts[0][1])
        elif self.system is not None:
            if self.units < 1:
                raise ModelError(f"{owner}: units must be at least 1")
            object.__setattr__(self, "systems", ((self.system, int(self.units)),))
        max_protons = sum(n * s.steps for s, n in self.systems)
        if not 0 <= self.protons <= max_protons:
            raise ModelError(f"{owner}: protons must be between 0 and {max_protons}")
        if self.molar_mass is not None and not (math.isfinite(self.molar_mass) and self.molar_mass > 0):
            raise ModelError(f"{owner}: molar mass must be a positive number")
        object.__setattr__(self, "counter_ions", tuple(self.counter_ions))
        object.__setattr__(self, "aliases", tuple(self.aliases))
        if self.net_charge != 0:
            raise ModelError(f"{owner}: not electrically neutral (net charge {self.net_charge:+d}); "
                             "check protons and counter_ions")
        object.__setattr__(self, "_protons_added", self.protons + self.strong_acid_equivalents)

    @property
    def net_charge(self) -> int:
        q = sum(ion.charge * n for ion, n in self.counter_ions)
        q += sum(n * s.base_charge for s, n in self.systems)
        return q + self.protons

    @property
    def strong_acid_equivalents(self) -> int:
        """H+ (positive) or OH- (negative) released completely per formula unit."""
        return sum(n if ion.name == "H+" else -n if ion.name == "OH-" else 0
                   for ion, n in self.counter_ions)

    @property
    def proton_count(self) -> int:
        """Protons this reagent adds to the H+ balance per formula unit (dissociable plus strong acid − strong base)."""
        return self.__dict__["_protons_added"]


@dataclass(frozen=True)
class Ingredient:
    """A reagent in the flask at an analytical concentration (mol/L)."""

    reagent: Reagent
    conc: float
    text: str | None = None
    """The amount as the user wrote it (e.g. "30 mM"), kept for display and saving."""

    def __post_init__(self) -> None:
        if not (isinstance(self.conc, (int, float)) and math.isfinite(self.conc) and 0.0 <= self.conc <= 20.0):
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


#: Precipitation settings: False (none), True (every candidate solid), or the names of solids allowed.
Precipitate = Union[bool, tuple[str, ...]]


@dataclass(frozen=True)
class Mixture:
    """The contents of the flask. Immutable: edits return a new mixture.

    Besides ingredients, a mixture holds the gases kept at a fixed partial
    pressure, which solids may precipitate, and the complexes, solids and
    gases its preset defines (library ones take part automatically when
    their systems are present).
    """

    ingredients: tuple[Ingredient, ...] = ()
    temperature_c: float = 25.0
    activity: str = "davies"
    title: str = ""
    notes: str = ""
    gases: tuple[FixedGas, ...] = ()
    precipitate: Precipitate = False
    custom_complexes: tuple[Complex, ...] = ()
    custom_solids: tuple[Solid, ...] = ()
    custom_gases: tuple[Gas, ...] = ()
    use_library: bool = True
    """Whether the built-in library's complexes, solids and gases take part."""

    def __post_init__(self) -> None:
        object.__setattr__(self, "ingredients", tuple(self.ingredients))
        t = self.temperature_c
        if isinstance(t, bool) or not (isinstance(t, (int, float)) and math.isfinite(t) and T_MIN_C <= t <= T_MAX_C):
            raise ModelError(f"temperature must be between {T_MIN_C:g} and {T_MAX_C:g} °C (got {t!r})")
        object.__setattr__(self, "temperature_c", float(t))
        if self.activity not in MODELS:
            raise ModelError(f"unknown activity model {self.activity!r}; use one of {', '.join(MODELS)}")
        for name in ("gases", "custom_complexes", "custom_solids", "custom_gases"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        p = self.precipitate
        if not isinstance(p, bool):
            if isinstance(p, str):
                raise ModelError("precipitate must be true, false or a list of solid names")
            object.__setattr__(self, "precipitate", tuple(str(s) for s in p))
        names = [g.gas.name for g in self.gases]
        if len(set(names)) != len(names):
            raise ModelError("a gas is held at two pressures")

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

    def with_precipitate(self, setting: Precipitate) -> "Mixture":
        return replace(self, precipitate=setting)

    def with_gas(self, fixed: FixedGas) -> "Mixture":
        """The mixture with ``fixed`` held over it (replacing the same gas at another pressure)."""
        rest = tuple(g for g in self.gases if g.gas.name != fixed.gas.name)
        return replace(self, gases=rest + (fixed,))

    def without_gas(self, name: str) -> "Mixture":
        return replace(self, gases=tuple(g for g in self.gases if g.gas.name != name))

    def scaled(self, factor: float) -> "Mixture":
        """Every amount multiplied by ``factor`` (dilution when < 1); fixed gases stay fixed."""
        return replace(self, ingredients=tuple(i.with_conc(i.conc * factor) for i in self.ingredients))

    # -- derived -------------------------------------------------------------
    def systems(self) -> tuple[tuple[AcidBaseSystem, float], ...]:
        """Each system once, with its total as added (mol/L).

        Systems of the ingredients first, in order; then any system a fixed
        gas brings in (total 0: the gas supplies it).
        """
        cached = self.__dict__.get("_systems")
        if cached is not None:
            return cached
        totals: dict[str, list] = {}
        for ing in self.ingredients:
            for sys_, n in ing.reagent.systems:
                entry = totals.setdefault(sys_.name, [sys_, 0.0])
                entry[1] += ing.conc * n
        for fixed in self.gases:
            for sys_, _ in fixed.gas.systems_held():
                totals.setdefault(sys_.name, [sys_, 0.0])
        result = tuple((s, c) for s, c in totals.values())
        self.__dict__["_systems"] = result      # immutable object: safe to remember
        return result

    def strong_ions(self) -> tuple[tuple[Ion, float], ...]:
        """Each strong ion once, with its total (mol/L). H+/OH- are not included."""
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
        for fixed in self.gases:
            for ion, _ in fixed.gas.ions_held():
                totals.setdefault(ion.name, [ion, 0.0])
        result = tuple((i, c) for i, c in totals.values())
        self.__dict__["_strong"] = result
        return result

    def strong_acid_excess(self) -> float:
        """Strong acid minus strong base added, mol/L (from H+/OH- counter-ions)."""
        return sum(i.conc * i.reagent.strong_acid_equivalents for i in self.ingredients)

    def proton_total(self) -> float:
        """Total of the H+ component, mol/L: dissociable protons plus strong acid minus strong base."""
        return math.fsum(i.conc * i.reagent.proton_count for i in self.ingredients)

    def allows(self, solid_name: str) -> bool:
        """Whether solid ``solid_name`` may precipitate."""
        p = self.precipitate
        if isinstance(p, bool):
            return p
        return solid_name in p


@dataclass(frozen=True)
class Notice:
    """A warning about the model or a safety caution, with a stable code."""

    code: str
    message: str


class Species(NamedTuple):
    """One dissolved species of a solved mixture (immutable)."""

    name: str
    system: str
    """Its system; "water" (H+, OH-), "strong" (Na+, Cl-, ...) or "complex"."""
    protons: int | None
    """Dissociable protons still bound (None for complexes)."""
    charge: int
    conc: float
    """mol/L."""
    activity_coefficient: float
    fraction: float | None
    """Share of its system's total; None for water, strong ions and complexes."""
    holds: tuple[tuple[str, int], ...] = ()
    """Complexes: units of each system they hold."""
    ions: tuple[tuple[str, int], ...] = ()
    """Complexes: strong ions they hold."""

    @property
    def log_c(self) -> float:
        return math.log10(self.conc) if self.conc > 0 else -math.inf

    @property
    def activity(self) -> float:
        return self.conc * self.activity_coefficient

    @property
    def p_level(self) -> float:
        """−log10 of its activity (pCa for Ca2+); infinite when absent."""
        a = self.activity
        return -math.log10(a) if a > 0 else math.inf


class SystemState(NamedTuple):
    """Where one system's material is at equilibrium."""

    name: str
    total: float
    """mol/L: dissolved + precipitated (what was added, plus any taken up from a fixed gas)."""
    dissolved: float
    free: float
    """mol/L in the system's own species (not bound in complexes or solids)."""
    distribution: tuple[tuple[str, float], ...]
    """Every species and solid holding the system, with its share of ``total``, largest first."""
    is_metal: bool = False


class SolidState(NamedTuple):
    """A candidate solid at equilibrium."""

    name: str
    formula: str
    saturation_index: float
    log_k: float
    """log10 Ksp at the working temperature."""
    amount: float
    """mol/L precipitated (0 when absent)."""
    allowed: bool


class GasState(NamedTuple):
    """A gas over the solution: held fixed, or the partial pressure in equilibrium with it."""

    name: str
    pressure_atm: float
    fixed: bool
    dissolved: float
    """mol/L of the dissolved species."""
    uptake: float
    """mol/L taken up from the gas (negative: given off); 0 when not fixed."""
    exposure_limit_ppm: float | None = None

    @property
    def headspace_ppm(self) -> float:
        """The partial pressure as ppm of a 1 atm headspace (how exposure limits are written)."""
        from .units import pressure_ppm

        return pressure_ppm(self.pressure_atm)

    @property
    def over_exposure_limit(self) -> bool:
        """A gas given off (not one the user holds) whose headspace passes its short-term exposure limit."""
        return (not self.fixed and self.exposure_limit_ppm is not None
                and self.headspace_ppm > self.exposure_limit_ppm)


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
    systems: tuple[SystemState, ...]
    warnings: tuple[Notice, ...] = ()
    cautions: tuple[Notice, ...] = ()
    solids: tuple[SolidState, ...] = ()
    gases: tuple[GasState, ...] = ()
    alkalinity: float = 0.0
    """Total alkalinity, eq/L, by the proton condition with the pK 4.5 reference level."""

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

    def system(self, name: str) -> SystemState:
        for s in self.systems:
            if s.name == name:
                return s
        raise KeyError(name)

    def solid(self, name: str) -> SolidState:
        for s in self.solids:
            if s.name == name:
                return s
        raise KeyError(name)

    def gas(self, name: str) -> GasState:
        for g in self.gases:
            if g.name == name:
                return g
        raise KeyError(name)

    def free_level(self, system: str) -> float:
        """pM = −log10 a of a metal's free ion (e.g. pCa)."""
        self.system(system)                 # KeyError for a system the mixture lacks
        return next(s for s in self.species if s.system == system).p_level

    @property
    def hardness_mg_l(self) -> float | None:
        """Total hardness (dissolved Ca + Mg) as mg/L CaCO3, or None without calcium or magnesium."""
        names = {s.name: s for s in self.systems}
        parts = [names[n].dissolved for n in ("calcium", "magnesium") if n in names]
        if not parts:
            return None
        return sum(parts) * CACO3_G_PER_MOL * 1000.0

    @property
    def alkalinity_mg_l(self) -> float:
        """Total alkalinity as mg/L CaCO3 (one equivalent is half a mole of CaCO3)."""
        return self.alkalinity * CACO3_G_PER_MOL / 2.0 * 1000.0

    @property
    def supersaturated(self) -> tuple[SolidState, ...]:
        return tuple(s for s in self.solids if s.saturation_index > SI_TOLERANCE and s.amount == 0.0)

    def to_dict(self) -> dict:
        """The JSON object of ``protomix solve --json`` (format 1)."""
        def num(x):
            return None if x is None or not math.isfinite(x) else float(x)
        p = self.mixture.precipitate
        species = []
        for s in self.species:
            entry = {"name": s.name, "system": s.system, "protons": s.protons, "charge": s.charge,
                     "conc_M": num(s.conc), "activity_coefficient": num(s.activity_coefficient),
                     "fraction": num(s.fraction)}
            if s.system == "complex":
                entry["systems"] = dict(s.holds)
                if s.ions:
                    entry["ions"] = dict(s.ions)
            species.append(entry)
        out = {
            "format": 1,
            "pH": num(self.pH),
            "pOH": num(self.pOH),
            "temperature_c": self.temperature_c,
            "activity": self.activity,
            "ionic_strength_M": num(self.ionic_strength),
            "converged": bool(self.converged),
            "balance_error_M": num(abs(self.balance_error)),
            "precipitate": p if isinstance(p, bool) else list(p),
            "alkalinity_M": num(self.alkalinity),
            "species": species,
            "systems": [{"name": s.name, "total_M": num(s.total), "dissolved_M": num(s.dissolved),
                         "free_M": num(s.free),
                         "distribution": [{"species": n, "fraction": num(f)} for n, f in s.distribution]}
                        for s in self.systems],
            "solids": [{"name": s.name, "formula": s.formula, "saturation_index": num(s.saturation_index),
                        "log_K": num(s.log_k), "amount_M": num(s.amount), "allowed": bool(s.allowed)}
                       for s in self.solids],
            "gases": [{"name": g.name, "pressure_atm": num(g.pressure_atm), "fixed": bool(g.fixed),
                       "dissolved_M": num(g.dissolved), "uptake_M": num(g.uptake)}
                      for g in self.gases],
            "warnings": [{"code": w.code, "message": w.message} for w in self.warnings],
            "cautions": [{"code": c.code, "message": c.message} for c in self.cautions],
        }
        hardness = self.hardness_mg_l
        if hardness is not None:
            out["hardness_mg_L_CaCO3"] = num(hardness)
        return out


#: Molar mass of CaCO3, g/mol (IUPAC standard atomic weights: 40.078 + 12.011 + 3 × 15.999).
CACO3_G_PER_MOL = 100.086

#: A saturation index within this of 0 counts as saturated (common practice: measurement scatter is larger).
SI_TOLERANCE = 1e-6


__all__ = [
    "AcidBaseSystem", "Complex", "Equilibrium", "FixedGas", "Gas", "GasState", "Ingredient", "Ion",
    "Mixture", "Notice", "Reagent", "Solid", "SolidState", "Species", "SystemState",
    "charge_from_name", "charge_label", "format_molar", "species_charge", "vant_hoff_log_k", "T_REF_C",
]
