"""Buffer recipes: what to weigh or pipette so a buffer has its pH where it is used.

A recipe is found through the complete equilibrium (:func:`chem.solve`:
activity coefficients, the working temperature, water's own ions), not by the
Henderson–Hasselbalch shortcut.  Every recipe is a proton level: the number of
dissociable protons (plus strong acid, minus strong base) per unit of the
buffer system.  The pH of the final solution falls strictly as that level
rises, so the level giving the target pH is found by Brent's method on a
bracket, which cannot miss a reachable target.  Three bench forms map onto it:

* ``"reagents"``: two conjugate forms (e.g. the acid and its salt), weighed;
* ``"titrant"``: one form weighed, brought to pH with a strong acid or base
  pipetted from a stock;
* ``"stocks"``: two stock solutions of the conjugate forms, pipetted.

Background salt is an extra ingredient; a target ionic strength is met by
solving for the amount of a neutral salt (NaCl or KCl) as well.

The shortcut's answer is reported beside the exact one: what it predicts for
the recipe (tabulated pKa at 25 °C, concentrations for activities) and what
pH a recipe designed by it really gives.

>>> from chem.recipe import design_buffer                   # doctest: +SKIP
>>> r = design_buffer("hepes", 7.4, temperature_c=37, total="50 mM", volume="1 L")
>>> r.items, r.equilibrium.pH, r.shortcut.pH, r.pH_at(22.0)
>>> chem.save_preset(r.mixture, "hepes-37.toml")
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from typing import Callable, Iterable, Iterator, Sequence

import numpy as np

from ._solver import solve
from .roots import brent
from .curves import buffer_capacity_at as buffer_capacity  # one definition of β for the tool
from .errors import ChemError
from .limits import PH_MAX, PH_MIN
from .library import Library, load_library
from .model import AcidBaseSystem, Equilibrium, Ingredient, Mixture, Notice, Reagent, format_molar
from .units import MAX_CONC, parse_concentration, parse_volume

#: The bench forms a recipe can be written in.
FORMS = ("reagents", "titrant", "stocks")

#: A buffer holds its pH well only within about pKa ± 1 (common practice).
USEFUL_RANGE = 1.0

#: Temperature span (K) over which the ranking weighs a buffer's drift: a
#: buffer made and used 10 K apart is the everyday case (common practice).
DRIFT_SPAN_K = 10.0

#: Default stock concentrations, mol/L (common practice).
DEFAULT_TITRANT_CONC = 1.0
DEFAULT_STOCK_CONC = 0.5

#: Total buffer concentration used by :func:`suggest_systems`, mol/L.
SUGGEST_TOTAL = 0.05

#: A check temperature whose pH differs from the target by more than this
#: earns a notice (pH units).
DRIFT_NOTICE = 0.05

_PH_TOL = 1e-6            # the recipe's pH must match the target this closely
_LEVEL_XTOL = 1e-13       # Brent tolerance on the proton level (per system unit)
_SALT_XTOL = 1e-13        # Brent tolerance on the added salt, mol/L
_CATIONS = {"sodium": "Na+", "potassium": "K+", "lithium": "Li+", "rubidium": "Rb+",
            "cesium": "Cs+", "caesium": "Cs+"}
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_ADDITION = re.compile(rf"^\s*(?P<name>.*?\S)\s+(?P<amount>{_NUMBER}\s*\S*)\s*$")            # "NaCl 150 mM"
_ADDITION_FIRST = re.compile(rf"^\s*(?P<amount>{_NUMBER}\s*[^\s\d]\S*)\s+(?P<name>\S.*?)\s*$")  # "150 mM NaCl"


class RecipeError(ChemError):
    """A buffer recipe cannot be made as asked (target out of reach, wrong form, ...)."""


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class RecipeItem:
    """One line of a recipe: a reagent weighed (``unit`` "g" or "mmol") or a stock pipetted ("mL")."""

    reagent: Reagent
    role: str
    """"acid form", "base form", "weighed form", "titrant" or "salt"."""
    conc: float
    """Concentration in the final solution, mol/L."""
    amount: float
    """Quantity to weigh or pipette for the whole volume, in ``unit``."""
    unit: str
    stock_conc: float | None = None
    """Concentration of the stock pipetted, mol/L (None when weighed)."""

    @property
    def action(self) -> str:
        return "weigh" if self.stock_conc is None else "pipette"

    def to_dict(self) -> dict:
        out = {"reagent": self.reagent.name, "amount": self.amount, "unit": self.unit, "role": self.role,
               "conc_M": self.conc, "formula": self.reagent.formula or None,
               "molar_mass_g_per_mol": self.reagent.molar_mass}
        if self.stock_conc is not None:
            out["stock_conc_M"] = self.stock_conc
        return out


@dataclass(frozen=True)
class Shortcut:
    """What the Henderson–Hasselbalch shortcut says, for comparison.

    The shortcut as commonly used: pH = pKa + log10([base]/[acid]) with the
    tabulated pKa at 25 °C and I = 0, concentrations for activities, every
    other step and water ignored.
    """

    step: int
    """Dissociation step used (0 = first proton)."""
    pka: float
    """Tabulated pKa used (25 °C, I = 0)."""
    pH: float | None
    """pH the shortcut predicts for the recipe (None when the recipe is not a mix of one step's pair)."""
    recipe_pH: float | None
    """pH (full equilibrium, working temperature) of the recipe the shortcut would have designed
    with the same reagents; None when the shortcut's recipe cannot be made with them."""


@dataclass(frozen=True)
class Recipe:
    """A buffer recipe and the equilibrium of the solution it makes.

    ``mixture`` is the final solution at the working temperature: load it into
    the flask or save it with :func:`chem.save_preset`.
    """

    system: AcidBaseSystem
    target_pH: float
    temperature_c: float
    total: float
    """Total buffer concentration, mol/L (all forms of the system)."""
    volume: float
    """Final volume, L."""
    form: str
    items: tuple[RecipeItem, ...]
    mixture: Mixture
    equilibrium: Equilibrium
    buffer_capacity: float
    """mol/L per pH unit (see :func:`buffer_capacity`)."""
    shortcut: Shortcut
    checks: tuple[tuple[float, float], ...]
    """(temperature °C, pH) of the same solution at other temperatures."""
    warnings: tuple[Notice, ...]
    free_species: str | None = None
    """A metal buffer: the species whose free concentration was set (e.g. "Ca^2+")."""
    free_target: float | None = None
    """mol/L wanted."""
    metal_salt: Reagent | None = None

    @property
    def pH(self) -> float:
        """pH the recipe gives at the working temperature (equals the target to 1e-6)."""
        return self.equilibrium.pH

    @property
    def ionic_strength(self) -> float:
        return self.equilibrium.ionic_strength

    @property
    def cautions(self) -> tuple[Notice, ...]:
        return self.equilibrium.cautions

    @property
    def volume_label(self) -> str:
        """The final volume with a readable unit, e.g. "250 mL"."""
        return format_volume(self.volume)

    @property
    def pka_at_temperature(self) -> tuple[float, ...]:
        """Thermodynamic pKa of each step at the working temperature (I = 0)."""
        return tuple(float(p) for p in self.system.pka_at(self.temperature_c))

    def pH_at(self, temperature_c: float) -> float:
        """pH of the same solution at another temperature (°C).

        Amounts per litre are kept; the few-per-mille change of volume with
        temperature is neglected.
        """
        return solve(self.mixture.with_temperature(temperature_c)).pH

    @property
    def uncertainty(self):
        """How far the pH could be off: from the constants and from ±1 % on each amount
        (:class:`chem.uncertainty.RecipeUncertainty`)."""
        cached = self.__dict__.get("_uncertainty")
        if cached is None:
            from .uncertainty import recipe_uncertainty

            cached = recipe_uncertainty(self.equilibrium)
            self.__dict__["_uncertainty"] = cached          # frozen, so safe to remember
        return cached

    def to_dict(self) -> dict:
        """The JSON object of ``protomix recipe --json``."""
        return {
            "format": 1,
            "system": self.system.name,
            "target_pH": self.target_pH,
            "pH": self.pH,
            "temperature_c": self.temperature_c,
            "activity": self.mixture.activity,
            "form": self.form,
            "total_M": self.total,
            "volume_L": self.volume,
            "items": [item.to_dict() for item in self.items],
            "ionic_strength_M": self.ionic_strength,
            "buffer_capacity_mM_per_pH": self.buffer_capacity * 1000.0,
            "pKa_at_temperature": list(self.pka_at_temperature),
            "shortcut_pH": self.shortcut.pH,
            "shortcut": {"pKa_25C": self.shortcut.pka, "step": self.shortcut.step + 1,
                         "pH_of_shortcut_recipe": self.shortcut.recipe_pH},
            "pH_at": [{"temperature_c": t, "pH": ph} for t, ph in self.checks],
            "converged": bool(self.equilibrium.converged),
            "warnings": [{"code": w.code, "message": w.message} for w in self.warnings],
            "cautions": [{"code": c.code, "message": c.message} for c in self.cautions],
            **self._free_dict(),
            "uncertainty": self.uncertainty.to_dict(),
        }

    @property
    def free_reached(self) -> float | None:
        """mol/L of the free species in the final solution (metal buffers)."""
        if self.free_species is None:
            return None
        return self.equilibrium.get(self.free_species).conc

    def _free_dict(self) -> dict:
        if self.free_species is None:
            return {}
        sp = self.equilibrium.get(self.free_species)
        return {"free_species": self.free_species, "free_target_M": self.free_target, "free_M": sp.conc,
                "free_activity": sp.activity,
                "pM": -math.log10(sp.activity) if sp.activity > 0 else None,
                "metal_salt": self.metal_salt.name if self.metal_salt is not None else None}


@dataclass(frozen=True)
class Suggestion:
    """A buffer system ranked for a target pH and temperature by :func:`suggest_systems`."""

    system: AcidBaseSystem
    step: int
    """Dissociation step whose pKa is nearest the target (0 = first proton)."""
    pka: float
    """Thermodynamic pKa of that step at the working temperature."""
    dpka_dt: float | None
    """d pKa / dT at the working temperature, K⁻¹ (None: no enthalpy data)."""
    capacity: float | None
    """Buffer capacity of a solution of the system at the target pH, mol/L per pH
    (at :data:`SUGGEST_TOTAL`); None when no recipe can be made from the library."""
    score: float
    """|target − pKa| + |dpKa/dT| × 10 K; lower is better."""

    def to_dict(self) -> dict:
        return {"system": self.system.name, "step": self.step + 1, "pKa_at_temperature": self.pka,
                "dpKa_dT_per_K": self.dpka_dt,
                "capacity_mM_per_pH": None if self.capacity is None else self.capacity * 1000.0,
                "score": self.score}


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------

def proton_level(reagent: Reagent) -> float:
    """Dissociable protons plus strong-acid equivalents per unit of the reagent's system."""
    return (reagent.protons + reagent.strong_acid_equivalents) / reagent.units


def dpka_dt(system: AcidBaseSystem, temperature_c: float) -> tuple[float, ...] | None:
    """d pKa/dT of each step at ``temperature_c`` (K⁻¹) by van 't Hoff; None without enthalpy data."""
    if not system.has_temperature_data():
        return None
    lo, hi = system.pka_at(np.array([temperature_c - 0.5, temperature_c + 0.5]))
    return tuple(float(v) for v in hi - lo)


def parse_addition(text: str, library: Library | None = None) -> tuple[Reagent, float, str]:
    """Read an extra ingredient written as "NaCl 150 mM" (or "150 mM NaCl").

    Returns
    -------
    (Reagent, float, str)
        The library reagent, its concentration in mol/L and the amount as written.
    """
    library = library or load_library()
    if not isinstance(text, str) or not text.strip():
        raise RecipeError("an added salt needs a name and an amount, e.g. 'NaCl 150 mM'")
    m = _ADDITION.match(text) or _ADDITION_FIRST.match(text)
    if not m:
        raise RecipeError(f"'{text.strip()}': write an added salt as a name and an amount, e.g. 'NaCl 150 mM'")
    reagent = library.reagent(m.group("name"))
    amount = m.group("amount").strip()
    return reagent, parse_concentration(amount, molar_mass=reagent.molar_mass), amount


def format_volume(litres: float) -> str:
    """A volume with a readable unit: 0.25 -> "250 mL", 2.0 -> "2 L"."""
    for unit, f in (("L", 1.0), ("mL", 1e-3), ("uL", 1e-6)):
        if litres >= f * 0.9999999:
            return f"{litres / f:.6g} {unit}"
    return f"{litres:.3g} L"


def _cation_name(text: str, library: Library) -> str:
    key = text.strip().casefold()
    key = _CATIONS.get(key, key).casefold()
    for ion in library.ions:
        if ion.charge > 0 and ion.name != "H+" and key in (ion.name.casefold(), ion.name.rstrip("+").casefold()):
            return ion.name
    known = ", ".join(i.name for i in library.ions if i.charge > 0 and i.name != "H+")
    raise RecipeError(f"unknown cation '{text}' (use one of {known})")


def _cations(reagent: Reagent) -> frozenset[str]:
    return frozenset(ion.name for ion, _ in reagent.counter_ions if ion.charge > 0 and ion.name != "H+")


def _is_hydrate(reagent: Reagent) -> bool:
    return "(H2O)" in reagent.formula or "hydrate" in reagent.name.casefold()


def _carries_strong(reagent: Reagent) -> bool:
    return reagent.strong_acid_equivalents != 0


def _ideal_level(system: AcidBaseSystem, ph: float, t_c: float) -> float:
    """Mean bound protons per unit at ``ph`` with thermodynamic pKa and no activity correction."""
    pka = system.pka_at(t_c)
    n = system.steps
    logs = np.array([math.fsum(pka[k:]) - (n - k) * ph for k in range(n + 1)])
    w = np.exp((logs - logs.max()) * math.log(10.0))
    w /= w.sum()
    return float(np.dot(w, [n - k for k in range(n + 1)]))


def _amount(value, parse, what: str) -> float:
    v = parse(value)
    if not v > 0:
        raise RecipeError(f"{what} must be more than zero (got {value!r})")
    return v


def _reagent_of(name_or_reagent, library: Library) -> Reagent:
    return name_or_reagent if isinstance(name_or_reagent, Reagent) else library.reagent(name_or_reagent)


# --------------------------------------------------------------------------
# the designer
# --------------------------------------------------------------------------

class _Unreachable(Exception):
    """The target is not reachable with one candidate; the message says why."""


@dataclass(frozen=True)
class _Plan:
    """One candidate way of writing the recipe: ingredients as a function of the proton level."""

    lo: float
    hi: float
    build: Callable[[float], tuple[tuple[Reagent, str, float], ...]]
    """level -> ((reagent, role, conc mol/L), ...)"""
    describe: str


@dataclass(frozen=True)
class _Request:
    system: AcidBaseSystem
    target: float
    t_c: float
    total: float
    activity: str
    salts: tuple[tuple[Reagent, float, str | None], ...]
    ionic_target: float | None
    ionic_salt: Reagent | None


def _mixture(req: _Request, parts, salt_extra: float) -> Mixture:
    ings = [Ingredient(r, c, format_molar(c)) for r, _, c in parts if c > 0]
    salts = list(req.salts)
    if req.ionic_salt is not None and salt_extra > 0:
        for i, (r, c, _) in enumerate(salts):
            if r is req.ionic_salt:
                salts[i] = (r, c + salt_extra, None)
                break
        else:
            salts.append((req.ionic_salt, salt_extra, None))
    ings += [Ingredient(r, c, text or format_molar(c)) for r, c, text in salts if c > 0]
    return Mixture(tuple(ings), temperature_c=req.t_c, activity=req.activity)


def _solve_plan(req: _Request, plan: _Plan) -> tuple[float, float, Mixture, Equilibrium]:
    """(level, added salt, mixture, equilibrium) hitting the target; raises _Unreachable."""

    def at_level(level: float, extra: float) -> Equilibrium:
        eq = solve(_mixture(req, plan.build(level), extra))
        if not eq.converged:
            raise RecipeError(f"the equilibrium did not converge while designing ({eq.message})")
        return eq

    def level_for(extra: float) -> tuple[float, Equilibrium]:
        eq_lo, eq_hi = at_level(plan.lo, extra), at_level(plan.hi, extra)
        if not eq_hi.pH <= req.target <= eq_lo.pH:
            raise _Unreachable(f"{plan.describe} spans only pH {eq_hi.pH:.3f} to {eq_lo.pH:.3f} "
                               f"at {req.t_c:g} °C")
        level = brent(lambda x: at_level(x, extra).pH - req.target, plan.lo, plan.hi,
                      xtol=_LEVEL_XTOL, maxiter=200)
        return level, at_level(level, extra)

    if req.ionic_target is None:
        level, eq = level_for(0.0)
        extra = 0.0
    else:
        per_unit = 0.5 * sum(ion.charge ** 2 * n for ion, n in req.ionic_salt.counter_ions)
        _, eq0 = level_for(0.0)
        if eq0.ionic_strength > req.ionic_target:
            raise RecipeError(f"the buffer alone already has ionic strength {eq0.ionic_strength:.4g} M, "
                              f"above the target {req.ionic_target:.4g} M; lower the total or drop the target")
        s_hi = req.ionic_target / per_unit
        extra = brent(lambda s: level_for(s)[1].ionic_strength - req.ionic_target, 0.0, s_hi,
                      xtol=_SALT_XTOL, maxiter=200)
        level, eq = level_for(extra)
    if abs(eq.pH - req.target) > _PH_TOL:
        raise RecipeError(f"could not settle the recipe on pH {req.target:g} (reached {eq.pH:.6f})")
    return level, extra, _mixture(req, plan.build(level), extra), eq


def _pair_plans(req: _Request, lib: Library, acid_form, base_form, cation) -> list[_Plan]:
    forms = lib.reagents_of(req.system)
    if acid_form is not None:
        forms_a = [acid_form]
    else:
        forms_a = list(forms)
    forms_b = [base_form] if base_form is not None else list(forms)
    want = _ideal_level(req.system, req.target, req.t_c)
    order = {r.name: i for i, r in enumerate(lib.reagents)}
    ranked = []
    for a in forms_a:
        for b in forms_b:
            na, nb = proton_level(a), proton_level(b)
            if na <= nb:
                continue
            cats = _cations(a) | _cations(b)
            if cation is not None and not cats <= {cation}:
                continue
            key = (0 if nb <= want <= na else 1, round(na - nb, 9), len(cats) > 1,
                   0 if cats <= {cation or "Na+"} else 1, _is_hydrate(a) + _is_hydrate(b),
                   _carries_strong(a) + _carries_strong(b), order.get(a.name, 0) + order.get(b.name, 0))
            ranked.append((key, a, b))
    if not ranked:
        if acid_form is not None and base_form is not None:
            raise RecipeError(f"'{acid_form.name}' must carry more protons than '{base_form.name}' "
                              "to serve as the acid form")
        which = f" with cation {cation}" if cation else ""
        raise RecipeError(f"the library has no pair of {req.system.name} reagents{which} for this recipe; "
                          "try form 'titrant'")
    ranked.sort(key=lambda t: t[0])
    total = req.total
    plans = []
    for _, a, b in ranked:
        na, nb = proton_level(a), proton_level(b)

        def build(level, a=a, b=b, na=na, nb=nb):
            f = min(max((level - nb) / (na - nb), 0.0), 1.0)
            return ((a, "acid form", total * f / a.units), (b, "base form", total * (1.0 - f) / b.units))

        plans.append(_Plan(nb, na, build, f"{a.name} + {b.name}"))
    return plans


def _strong_reagents(lib: Library, sign: int, cation: str | None) -> list[Reagent]:
    out = [r for r in lib.reagents if r.system is None and r.strong_acid_equivalents * sign > 0]
    if sign < 0:
        out.sort(key=lambda r: (0 if _cations(r) <= {cation or "Na+"} else 1, _is_hydrate(r)))
    else:
        out.sort(key=lambda r: (0 if any(i.name == "Cl-" for i, _ in r.counter_ions) else 1, _is_hydrate(r)))
    return out


def _titrant_plans(req: _Request, lib: Library, weighed, titrant, titrant_conc, cation) -> Iterator[_Plan]:
    """Candidate plans, the form needing least titrant first (lazily: each costs a solve)."""
    forms = [weighed] if weighed is not None else [
        r for r in lib.reagents_of(req.system) if cation is None or _cations(r) <= {cation}]
    if not forms:
        raise RecipeError(f"the library has no {req.system.name} reagent with cation {cation}")
    want = _ideal_level(req.system, req.target, req.t_c)
    order = {r.name: i for i, r in enumerate(lib.reagents)}
    forms.sort(key=lambda r: (round(abs(proton_level(r) - want), 9), 0 if _cations(r) <= {cation or "Na+"} else 1,
                              _is_hydrate(r), _carries_strong(r), order.get(r.name, 0)))
    if titrant is not None and (titrant.system is not None or titrant.strong_acid_equivalents == 0):
        raise RecipeError(f"'{titrant.name}' is not a strong acid or base; a titrant must be one (e.g. HCl or NaOH)")
    found = False
    mismatch = None
    total = req.total
    for w in forms:
        nw = proton_level(w)
        alone = solve(_mixture(req, ((w, "weighed form", total / w.units),), 0.0))
        sign = 1 if alone.pH > req.target else -1          # +1: acid needed
        if titrant is not None:
            if titrant.strong_acid_equivalents * sign < 0:
                need = "an acid" if sign > 0 else "a base"
                mismatch = mismatch or (f"{w.name} alone gives pH {alone.pH:.2f} at {req.t_c:g} °C, so reaching "
                                        f"pH {req.target:g} needs {need}; '{titrant.name}' is not one")
                continue
            t = titrant
        else:
            candidates = _strong_reagents(lib, sign, cation)
            if not candidates:
                raise RecipeError(f"the library has no strong {'acid' if sign > 0 else 'base'} to use as titrant")
            t = candidates[0]
        eqv = t.strong_acid_equivalents
        span = titrant_conc * abs(eqv) / total        # the whole volume of stock, in levels
        lo, hi = (nw, nw + span) if sign > 0 else (nw - span, nw)

        def build(level, w=w, t=t, nw=nw, eqv=eqv):
            return ((w, "weighed form", total / w.units),
                    (t, "titrant", max(total * (level - nw) / eqv, 0.0)))

        found = True
        yield _Plan(lo, hi, build, f"{w.name} with up to the whole volume of {format_molar(titrant_conc)} {t.name}")
    if not found:
        raise RecipeError(mismatch)


def _items(req: _Request, form: str, parts, extra: float, volume: float, titrant_conc: float,
           stock_conc: float) -> tuple[tuple[RecipeItem, ...], list[Notice]]:
    items, notices = [], []

    def weigh(reagent: Reagent, role: str, conc: float) -> RecipeItem:
        if reagent.molar_mass is None:
            notices.append(Notice("no-molar-mass", f"{reagent.name}: no molar mass in the library; "
                                                   "amount given in mmol"))
            return RecipeItem(reagent, role, conc, conc * volume * 1000.0, "mmol")
        return RecipeItem(reagent, role, conc, conc * volume * reagent.molar_mass, "g")

    def pipette(reagent: Reagent, role: str, conc: float, stock: float) -> RecipeItem:
        return RecipeItem(reagent, role, conc, conc * volume / stock * 1000.0, "mL", stock)

    for reagent, role, conc in parts:
        if conc <= 0 and role != "titrant":
            continue
        if role == "titrant":
            items.append(pipette(reagent, role, conc, titrant_conc))
        elif form == "stocks":
            items.append(pipette(reagent, role, conc, stock_conc))
        else:
            items.append(weigh(reagent, role, conc))
    salts = list(req.salts)
    if req.ionic_salt is not None and extra > 0:
        salts.append((req.ionic_salt, extra, None))
    merged: dict[str, list] = {}
    for r, c, _ in salts:
        merged.setdefault(r.name, [r, 0.0])[1] += c
    items += [weigh(r, "salt", c) for r, c in merged.values() if c > 0]
    piped = sum(i.amount for i in items if i.unit == "mL") / 1000.0
    if piped > volume * (1 + 1e-12):
        raise RecipeError(f"the stocks add up to {format_volume(piped)}, more than the final "
                          f"{format_volume(volume)}; use more concentrated stocks")
    return tuple(items), notices


def _shortcut(req: _Request, plan: _Plan, parts, extra: float) -> Shortcut:
    sys_ = req.system
    n = sys_.steps
    units = math.fsum(c * r.units for r, _, c in parts if r.system is sys_)
    level = math.fsum(c * ((r.protons if r.system is sys_ else 0) + r.strong_acid_equivalents)
                      for r, _, c in parts) / units
    nearest = int(np.argmin([abs(p - req.target) for p in sys_.pka]))
    # Prediction for this recipe: the step whose acid/base pair its proton level falls between.
    acid_protons = math.ceil(level - 1e-12)
    predicted = None
    step = nearest
    if 1 <= acid_protons <= n and acid_protons - 1 < level < acid_protons:
        step = n - acid_protons
        predicted = sys_.pka[step] + math.log10((acid_protons - level) / (level - acid_protons + 1))
    # The shortcut's own design: base/acid = 10^(pH - pKa) on the step nearest the target.
    ratio = 10.0 ** (req.target - sys_.pka[nearest])
    level_hh = (n - nearest - 1) + 1.0 / (1.0 + ratio)
    recipe_ph = None
    if plan.lo - 1e-12 <= level_hh <= plan.hi + 1e-12:
        eq = solve(_mixture(req, plan.build(level_hh), extra))
        recipe_ph = eq.pH if eq.converged else None
    return Shortcut(step=step, pka=sys_.pka[step], pH=predicted, recipe_pH=recipe_ph)


def _notes_text(req: _Request, form: str, items: Sequence[RecipeItem], volume: float) -> str:
    lines = [f"Buffer recipe ({form}) for {format_volume(volume)}: "
             f"{req.system.name} {format_molar(req.total)}, pH {req.target:g} at {req.t_c:g} °C "
             f"({req.activity} activity)."]
    for it in items:
        what = f"{it.amount:.6g} {it.unit} {it.reagent.name}"
        if it.stock_conc is not None:
            what += f" ({format_molar(it.stock_conc)} stock)"
        lines.append(f"{it.action} {what}")
    lines.append(f"water to {format_volume(volume)}")
    return "\n".join(lines)


def design_buffer(system: str | AcidBaseSystem | None, target_pH: float, *, temperature_c: float = 25.0,
                  total="50 mM", volume="1 L", form: str = "reagents",
                  salts: Iterable = (), ionic_strength=None, ionic_salt=None,
                  acid_form=None, base_form=None, cation: str | None = None,
                  titrant=None, titrant_conc=None, stock_conc=None,
                  check_temperatures: Iterable[float] | None = None,
                  activity: str = "davies", library: Library | None = None) -> Recipe:
    """Design a buffer that has ``target_pH`` at ``temperature_c``, solved through the full equilibrium.

    Parameters
    ----------
    system : str, AcidBaseSystem or None
        Buffer system (name, alias or a reagent of it). None: the best-ranked
        system of :func:`suggest_systems` that can be made in ``form``.
    target_pH : float
        pH wanted at the working temperature (-log10 a(H+)).
    temperature_c : float
        Working temperature, °C.
    total : str or float
        Total buffer concentration (all forms of the system), e.g. "50 mM"; a number is mol/L.
    volume : str or float
        Final volume, e.g. "1 L" or "250 mL"; a number is litres.
    form : {"reagents", "titrant", "stocks"}
        Two conjugate reagents weighed (g); one form weighed plus a strong
        acid/base stock (mL); or two stock solutions (mL).
    salts : iterable
        Background additions: "NaCl 150 mM" strings or (reagent, conc) pairs.
    ionic_strength : str or float, optional
        Target ionic strength (mol/L); a neutral salt is added to reach it.
    ionic_salt : str or Reagent, optional
        Salt used to reach ``ionic_strength`` (default NaCl, or KCl with cation K+).
    acid_form, base_form : str or Reagent, optional
        Reagents to use. With ``form="titrant"`` give at most one: the form weighed.
    cation : str, optional
        Counter-ion wanted in the reagents and titrant ("Na+", "K", "potassium", ...).
    titrant : str or Reagent, optional
        Strong acid or base for ``form="titrant"`` (default HCl, or NaOH/KOH).
    titrant_conc : str or float, optional
        Titrant stock concentration (default 1 M).
    stock_conc : str or float, optional
        Concentration of both stock solutions for ``form="stocks"`` (default 0.5 M).
    check_temperatures : iterable of float, optional
        Other temperatures (°C) to report the same solution's pH at. Default:
        25 °C when working elsewhere, otherwise 4 and 37 °C.
    activity : {"davies", "extended-dh", "ideal"}
        Activity model.
    library : Library, optional
        Reagent library (default: the built-in one).

    Returns
    -------
    Recipe
        Items (g or mL for the whole volume), the final mixture and its
        equilibrium, ionic strength (mol/L), buffer capacity (mol/L per pH),
        the shortcut's answer, pH at the check temperatures, and warnings.

    Raises
    ------
    RecipeError, ChemError
        Unknown names, unreadable or non-positive amounts, a target out of reach.
    """
    lib = library or load_library()
    if form not in FORMS:
        raise RecipeError(f"unknown recipe form '{form}' (use {', '.join(FORMS)})")
    if isinstance(target_pH, bool) or not isinstance(target_pH, (int, float)) or not math.isfinite(target_pH):
        raise RecipeError(f"target pH must be a finite number (got {target_pH!r})")
    if not PH_MIN <= target_pH <= PH_MAX:
        raise RecipeError(f"target pH {target_pH:g} is outside {PH_MIN:g}..{PH_MAX:g}")
    Mixture((), temperature_c=temperature_c, activity=activity)   # validates both, one-line errors
    total_m = _amount(total, parse_concentration, "total buffer concentration")
    volume_l = _amount(volume, parse_volume, "final volume")
    if form != "titrant" and (titrant is not None or titrant_conc is not None):
        raise RecipeError("a titrant is used only with form 'titrant'")
    if form != "stocks" and stock_conc is not None:
        raise RecipeError("a stock concentration is used only with form 'stocks'")
    t_conc = DEFAULT_TITRANT_CONC if titrant_conc is None else _amount(
        titrant_conc, parse_concentration, "titrant concentration")
    s_conc = DEFAULT_STOCK_CONC if stock_conc is None else _amount(
        stock_conc, parse_concentration, "stock concentration")
    cation_name = None if cation is None else _cation_name(cation, lib)

    salt_list = []
    for s in salts:
        if isinstance(s, str):
            salt_list.append(parse_addition(s, lib))
        else:
            try:
                r, c = s
            except (TypeError, ValueError):
                raise RecipeError(f"an added salt is a string like 'NaCl 150 mM' or a (reagent, amount) pair, "
                                  f"not {s!r}") from None
            reagent = _reagent_of(r, lib)
            salt_list.append((reagent, parse_concentration(c, molar_mass=reagent.molar_mass),
                              c if isinstance(c, str) else None))
    ionic_target = None
    salt_for_i = None
    if ionic_strength is not None:
        ionic_target = _amount(ionic_strength, parse_concentration, "target ionic strength")
        if ionic_salt is not None:
            salt_for_i = _reagent_of(ionic_salt, lib)
        else:
            formula = "KCl" if cation_name == "K+" else "NaCl"
            found = lib.find(formula)
            if not isinstance(found, Reagent):
                raise RecipeError(f"the library has no {formula} to reach the ionic strength; name a salt")
            salt_for_i = found
        if salt_for_i.system is not None or salt_for_i.strong_acid_equivalents != 0:
            raise RecipeError(f"'{salt_for_i.name}' is not a neutral salt; the ionic strength is set "
                              "with a salt such as NaCl or KCl")

    picks = {k: (None if v is None else _reagent_of(v, lib)) for k, v in
             (("acid", acid_form), ("base", base_form))}

    if check_temperatures is None:
        checks_t = (25.0,) if abs(temperature_c - 25.0) > 0.5 else (4.0, 37.0)
    else:
        checks_t = tuple(check_temperatures)
    for t in checks_t:
        Mixture((), temperature_c=t)                                # one-line error if out of range

    if system is None and (picks["acid"] or picks["base"]) is not None:
        system = (picks["acid"] or picks["base"]).system
    if system is None:
        for sug in suggest_systems(target_pH, temperature_c, library=lib, activity=activity):
            try:
                recipe = design_buffer(sug.system, target_pH, temperature_c=temperature_c, total=total_m,
                                       volume=volume_l, form=form, salts=[(r, c) for r, c, _ in salt_list],
                                       ionic_strength=ionic_target, ionic_salt=salt_for_i,
                                       cation=cation_name,
                                       titrant=titrant, titrant_conc=titrant_conc, stock_conc=stock_conc,
                                       check_temperatures=checks_t, activity=activity, library=lib)
            except RecipeError:
                continue
            chosen = Notice("system-chosen", f"No system given: {sug.system.name} is the best-ranked one "
                                             f"for pH {target_pH:g} at {temperature_c:g} °C (see the ranked suggestions).")
            return replace(recipe, warnings=(chosen,) + recipe.warnings)
        raise RecipeError(f"no buffer system in the library suits pH {target_pH:g} at {temperature_c:g} °C "
                          f"in form '{form}'")

    sys_ = system if isinstance(system, AcidBaseSystem) else lib.system(system)
    for role, r in picks.items():
        if r is not None and r.system is not sys_:
            raise RecipeError(f"'{r.name}' is not a form of {sys_.name}")
    if not lib.reagents_of(sys_):
        raise RecipeError(f"the library has no reagent of {sys_.name} to weigh")

    req = _Request(sys_, float(target_pH), float(temperature_c), total_m, activity,
                   tuple(salt_list), ionic_target, salt_for_i)

    if form == "titrant":
        if picks["acid"] is not None and picks["base"] is not None:
            raise RecipeError("with form 'titrant' give only the form you weigh (acid form or base form)")
        titrant_r = None if titrant is None else _reagent_of(titrant, lib)
        plans = _titrant_plans(req, lib, picks["acid"] or picks["base"], titrant_r, t_conc, cation_name)
    else:
        plans = _pair_plans(req, lib, picks["acid"], picks["base"], cation_name)

    first_error = None
    for plan in plans:
        try:
            level, extra, mix, eq = _solve_plan(req, plan)
            break
        except _Unreachable as exc:
            first_error = first_error or str(exc)
    else:
        raise RecipeError(f"pH {target_pH:g} at {temperature_c:g} °C is out of reach: {first_error}")

    parts = plan.build(level)
    items, notices = _items(req, form, parts, extra, volume_l, t_conc, s_conc)
    mix = Mixture(mix.ingredients, temperature_c=req.t_c, activity=activity,
                  title=f"{sys_.name} buffer, pH {target_pH:g} at {temperature_c:g} °C ({format_molar(total_m)})",
                  notes=_notes_text(req, form, items, volume_l))
    checks = tuple((float(t), solve(mix.with_temperature(t)).pH) for t in checks_t)

    warnings = list(notices)
    pka_t = sys_.pka_at(temperature_c)
    k_near = int(np.argmin(np.abs(pka_t - target_pH)))
    gap = target_pH - float(pka_t[k_near])
    beta = buffer_capacity(eq)
    if abs(gap) > USEFUL_RANGE:
        warnings.append(Notice(
            "outside-useful-range",
            f"pH {target_pH:g} is {abs(gap):.2f} units {'above' if gap > 0 else 'below'} {sys_.name}'s nearest "
            f"pKa ({float(pka_t[k_near]):.2f} at {temperature_c:g} °C); a buffer holds its pH only within "
            f"about pKa ± 1 (common practice). Capacity here is only {beta * 1000:.3g} mM/pH; "
            "choose another system (see the ranked suggestions)."))
    if sys_.hazard:
        warnings.append(Notice("hazardous-system", f"{sys_.name} is marked hazardous ({sys_.hazard}); "
                                                   "see the cautions and the safety data sheet."))
    for t, ph in checks:
        if abs(ph - target_pH) > DRIFT_NOTICE:
            warnings.append(Notice(
                "temperature-drift",
                f"At {t:g} °C the same solution reads pH {ph:.3f}, not {target_pH:g}: if you adjust or check "
                f"it at {t:g} °C, aim for {ph:.2f} there."))
    warnings += list(eq.warnings)

    return Recipe(system=sys_, target_pH=float(target_pH), temperature_c=float(temperature_c), total=total_m,
                  volume=volume_l, form=form, items=items, mixture=mix, equilibrium=solve(mix),
                  buffer_capacity=beta, shortcut=_shortcut(req, plan, parts, extra),
                  checks=checks, warnings=tuple(warnings))


def suggest_systems(target_pH: float, temperature_c: float = 25.0, *, total=SUGGEST_TOTAL,
                    activity: str = "davies", library: Library | None = None,
                    limit: int | None = None) -> tuple[Suggestion, ...]:
    """Rank the library's buffer systems for a target pH at a working temperature.

    A system qualifies when one of its pKa values at ``temperature_c`` lies
    within ±1 of the target (common practice), it is not marked hazardous,
    it is a buffer and the library has a reagent of it.  Systems are ranked by
    ``|target − pKa| + |dpKa/dT| × 10 K``: closeness to the pKa (capacity)
    plus the drift over a 10 K difference between making and using.
    Without enthalpy data a system ranks after those with it (its drift is
    unknown); chelators and metal ions (``buffer = false`` in the library) are
    not offered.

    Parameters
    ----------
    target_pH : float
        pH wanted.
    temperature_c : float
        Working temperature, °C.
    total : str or float
        Concentration at which the capacity is reported (default 50 mM).
    activity : str
        Activity model for the capacity.
    library : Library, optional
        Default: the built-in library.
    limit : int, optional
        Return at most this many.

    Returns
    -------
    tuple of Suggestion
        Best first.
    """
    lib = library or load_library()
    if isinstance(target_pH, bool) or not isinstance(target_pH, (int, float)) or not math.isfinite(target_pH):
        raise RecipeError(f"target pH must be a finite number (got {target_pH!r})")
    Mixture((), temperature_c=temperature_c, activity=activity)
    total_m = _amount(total, parse_concentration, "total buffer concentration")
    if limit is not None and limit < 1:
        raise RecipeError(f"the number of systems to list must be at least 1 (got {limit})")
    ranked = []
    for sys_ in lib.systems:
        if sys_.hazard or not sys_.buffer or not lib.reagents_of(sys_):
            continue
        pka = sys_.pka_at(temperature_c)
        k = int(np.argmin(np.abs(pka - target_pH)))
        if abs(float(pka[k]) - target_pH) > USEFUL_RANGE:
            continue
        slopes = dpka_dt(sys_, temperature_c)
        slope = None if slopes is None else slopes[k]
        score = abs(float(pka[k]) - target_pH) + (abs(slope) * DRIFT_SPAN_K if slope is not None else 0.0)
        unknown_drift = slope is None        # a buffer is rarely used only where it was made
        ranked.append(((unknown_drift, score), sys_, k, float(pka[k]), slope, score))
    ranked.sort(key=lambda t: t[0])
    if limit is not None:
        ranked = ranked[:limit]
    out = []
    for _, sys_, k, pka_k, slope, score in ranked:
        try:
            r = _capacity_recipe(sys_, target_pH, temperature_c, total_m, activity, lib)
        except ChemError:
            r = None
        out.append(Suggestion(sys_, k, pka_k, slope, r, score))
    return tuple(out)


def _capacity_recipe(sys_: AcidBaseSystem, target: float, t_c: float, total: float, activity: str,
                     lib: Library) -> float:
    """Buffer capacity (mol/L per pH) of a solution of ``sys_`` made to ``target``."""
    req = _Request(sys_, float(target), float(t_c), total, activity, (), None, None)
    for plan in _titrant_plans(req, lib, None, None, DEFAULT_TITRANT_CONC, None):
        try:
            _, _, _, eq = _solve_plan(req, plan)
            return buffer_capacity(eq)
        except _Unreachable:
            continue
    raise RecipeError(f"{sys_.name}: no recipe reaches pH {target:g}")


def parse_free(text: str) -> tuple[str, float]:
    """ "Ca^2+=100 nM" -> ("Ca^2+", 1e-7)."""
    if not isinstance(text, str) or "=" not in text:
        raise RecipeError(f"a free level is written SPECIES=AMOUNT, e.g. 'Ca^2+=100 nM' (got {str(text)[:40]!r})")
    name, _, amount = text.partition("=")
    name = name.strip()
    if not name:
        raise RecipeError("a free level needs a species name before '=' (e.g. 'Ca^2+=100 nM')")
    value = parse_concentration(amount.strip())
    if not value > 0:
        raise RecipeError("the free concentration wanted must be above 0")
    return name, value


def _metal_salt_for(metal: AcidBaseSystem, lib: Library, cation: str | None) -> Reagent:
    """The usual salt to weigh for a metal: its chloride (any hydrate), else its nitrate."""
    candidates = [r for r in lib.reagents_of(metal) if len(r.systems) == 1 and r.protons == 0]
    for anion in ("Cl-", "NO3-"):
        pick = [r for r in candidates if r.counter_ions and all(i.name == anion for i, _ in r.counter_ions)]
        if pick:
            return min(pick, key=lambda r: (r.molar_mass or 1e9))   # the anhydrous salt when there is one
    raise RecipeError(f"the library has no chloride or nitrate of {metal.name}; give the salt with metal_salt")


#: A metal buffer whose pH moves more than this (pH units, first order) for ±1 % on each amount
#: gets the "pH-not-held" warning.
UNHELD_PH_SD = 0.1


def design_metal_buffer(free: str, system: str | AcidBaseSystem, target_pH: float, *,
                        temperature_c: float = 25.0, total="10 mM", volume="1 L", salts: Iterable = (),
                        metal_salt=None, cation: str | None = None, titrant=None, titrant_conc=None,
                        form: str = "titrant", activity: str = "davies",
                        library: Library | None = None, **kwargs) -> Recipe:
    """A metal buffer: how much metal salt (and pH adjustment) gives a free level of a species.

    The chelator ``system`` (EDTA, EGTA, NTA, citrate, ATP ...) is made at
    ``total``; the metal salt's amount is solved so that the free
    concentration of ``free`` ("Ca^2+=100 nM") is reached at ``target_pH``,
    ``temperature_c`` and the ionic strength of the final solution, through
    the full equilibrium (every complex of the library, activity corrections).
    The pH is adjusted as in :func:`design_buffer` (``form="titrant"``:
    the chelator's free acid weighed, strong base pipetted).

    The free level rises strictly with the metal added, so the amount is
    found by Brent's method on log[M]free inside a bracket.
    """
    lib = library or load_library()
    species, target = parse_free(free)
    owner = lib.species_index.get(species)
    if not isinstance(owner, AcidBaseSystem):
        raise RecipeError(f"'{species}' is not a species of a library system (e.g. 'Ca^2+', 'Mg^2+', 'Zn^2+')")
    salt = _reagent_of(metal_salt, lib) if metal_salt is not None else _metal_salt_for(owner, lib, cation)
    if not any(s is owner for s, _ in salt.systems):
        raise RecipeError(f"'{salt.name}' holds no {owner.name}; choose a salt of the metal")
    units = next(n for s, n in salt.systems if s is owner)
    chelator_total = _amount(total, parse_concentration, "total chelator concentration")
    base_salts = list(salts)

    def recipe_at(m: float) -> Recipe:
        return design_buffer(system, target_pH, temperature_c=temperature_c, total=chelator_total, volume=volume,
                             form=form, salts=base_salts + [(salt, m)], cation=cation, titrant=titrant,
                             titrant_conc=titrant_conc, activity=activity, library=lib, **kwargs)

    cache: dict[float, Recipe] = {}

    def gap(m: float) -> float:
        r = cache.get(m)
        if r is None:
            r = cache[m] = recipe_at(m)
        got = r.equilibrium.get(species).conc
        return math.log(max(got, 1e-300)) - math.log(target)

    lo = target / units * 0.999              # free ≤ added: the level there is below the target
    hi = (chelator_total * 2.0 + 10.0 * target) / units
    for _ in range(40):
        if gap(hi) > 0:
            break
        hi *= 2.0
        if hi * units > MAX_CONC:
            raise RecipeError(f"no amount of {salt.name} reaches free {species} {format_molar(target)} here")
    else:
        raise RecipeError(f"no amount of {salt.name} reaches free {species} {format_molar(target)} here")
    if gap(lo) > 0:
        raise RecipeError(f"free {species} is above {format_molar(target)} even without {salt.name}")
    m = brent(gap, lo, hi, xtol=1e-15, rtol=1e-12, maxiter=200)
    recipe = recipe_at(m)
    reached = recipe.equilibrium.get(species).conc
    if abs(math.log(reached / target)) > 1e-6:
        raise RecipeError(f"could not settle free {species} on {format_molar(target)} (reached {format_molar(reached)})")
    note = Notice("metal-buffer", f"{salt.name} is solved so that free {species} is {format_molar(target, 4)} at "
                                  f"pH {target_pH:g} and {temperature_c:g} °C; the pH adjustment is made with the "
                                  "metal present.")
    # the chelator sets the metal's level, not the pH: its pKa range says nothing here; what matters
    # is whether anything holds the pH against a weighing error
    warnings = tuple(w for w in recipe.warnings if w.code != "outside-useful-range") + (note,)
    out = replace(recipe, free_species=species, free_target=target, metal_salt=salt, warnings=warnings)
    weighing = out.uncertainty.weighing_sd
    if weighing > UNHELD_PH_SD:
        warnings += (Notice("pH-not-held",
                            f"Little holds the pH of this metal buffer (buffer capacity "
                            f"{out.buffer_capacity * 1e3:.3g} mM/pH): ±1 % on each amount moves it by about "
                            f"{min(weighing, 9.9):.2g} pH (first order), and the free {species} with it. Add a pH "
                            "buffer near the target as a background ingredient (for pH 6.5-8, e.g. --salt "
                            "\"hepes free acid 20 mM\" or MOPS); the designer then adjusts the pH with it present."),)
        out = replace(out, warnings=warnings)
    return out


__all__ = ["FORMS", "Recipe", "RecipeError", "RecipeItem", "Shortcut", "Suggestion", "buffer_capacity",
           "design_buffer", "design_metal_buffer", "dpka_dt", "parse_addition", "parse_free", "proton_level",
           "suggest_systems"]
