"""Mixture specifications for the reference tests, and their preset text.

A :class:`Spec` says, in plain data, what goes into the flask: custom
acid–base systems (metal ions are systems without a pKa), a few library
strong electrolytes, complexes, solids and gases.  :func:`to_toml` writes
it as preset text with exactly the keys of DESIGN §4 and §8.2; the
reference solver (:mod:`tests.reference.solver`) reads the same object, so
both sides solve the same mixture without sharing any code.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field

#: Library strong electrolytes the specs may use, with the ions one formula
#: unit releases (the chemical meaning of the names; H+/OH- make them strong
#: acids or bases).
STRONG_REAGENTS: dict[str, tuple[tuple[str, int], ...]] = {
    "hydrochloric acid": (("H+", 1), ("Cl-", 1)),
    "nitric acid": (("H+", 1), ("NO3-", 1)),
    "sodium hydroxide": (("Na+", 1), ("OH-", 1)),
    "potassium hydroxide": (("K+", 1), ("OH-", 1)),
    "sodium chloride": (("Na+", 1), ("Cl-", 1)),
    "potassium chloride": (("K+", 1), ("Cl-", 1)),
    "potassium nitrate": (("K+", 1), ("NO3-", 1)),
}

Reaction = tuple[tuple[str, int], ...]


@dataclass(frozen=True)
class System:
    """A ``[[custom]]`` entry: one acid–base system and the reagent that carries it."""

    name: str
    species: tuple[str, ...]
    """Fully protonated first; one name when there is no pKa (a metal ion)."""
    pka: tuple[float, ...]
    charge_fp: int
    """Charge of the fully protonated species."""
    protons: int
    """Dissociable protons carried by the added form."""
    counter_ions: tuple[tuple[str, int], ...] = ()
    dh_kj: tuple[float, ...] | None = None
    dcp_j: tuple[float, ...] | None = None
    ion_size: float | None = None
    """Å; None leaves the key out (the default of 4.0 Å applies)."""

    def charge(self, k: int) -> int:
        """Charge of ``species[k]`` (k protons removed from the fully protonated form)."""
        return self.charge_fp - k


@dataclass(frozen=True)
class Complex:
    """A ``[[custom_complex]]``: formed from ``reaction`` with log K at 25 °C, I = 0."""

    name: str
    reaction: Reaction
    log_k: float
    dh_kj: float | None = None
    ion_size: float | None = None


@dataclass(frozen=True)
class Solid:
    """A ``[[custom_solid]]``: dissolves into ``reaction`` with log Ksp at 25 °C, I = 0."""

    name: str
    reaction: Reaction
    log_k: float
    dh_kj: float | None = None


@dataclass(frozen=True)
class Gas:
    """A ``[[custom_gas]]``: dissolves into one species with log K_H (mol/(L·atm)) at 25 °C."""

    name: str
    species: str
    log_k: float
    dh_kj: float | None = None


@dataclass(frozen=True)
class FixedGas:
    """A ``[[gas]]``: the solution is held at this partial pressure."""

    name: str
    pressure_atm: float
    """The pressure the reference uses, atm."""
    text: str
    """The same pressure as written in the preset (a number and a unit)."""


@dataclass(frozen=True)
class Spec:
    """Everything in one flask."""

    temperature_c: float = 25.0
    activity: str = "davies"
    systems: tuple[System, ...] = ()
    ingredients: tuple[tuple[str, float], ...] = ()
    """(custom system name or a key of STRONG_REAGENTS, mol/L)."""
    complexes: tuple[Complex, ...] = ()
    solids: tuple[Solid, ...] = ()
    gases: tuple[Gas, ...] = ()
    fixed: tuple[FixedGas, ...] = ()
    precipitate: bool | tuple[str, ...] = False
    write_precipitate: bool = False
    """Write the ``precipitate`` key even when it is the default (False)."""
    title: str = field(default="")

    @property
    def acid_base_only(self) -> bool:
        """True when nothing of DESIGN §8 is used (the preset is a §4 preset)."""
        return (not (self.complexes or self.solids or self.gases or self.fixed)
                and all(s.pka for s in self.systems) and not self.write_precipitate
                and self.precipitate is False)


def _str(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)


def _num(x: float) -> str:
    return repr(float(x))


def _inline(pairs) -> str:
    return "{ " + ", ".join(f"{_str(k)} = {int(v)}" for k, v in pairs) + " }"


def to_toml(spec: Spec) -> str:
    """The preset text of ``spec`` (keys of DESIGN §4 and §8.2 only)."""
    out = ["format = 1"]
    if spec.title:
        out.append(f"title = {_str(spec.title)}")
    out.append(f"temperature_c = {_num(spec.temperature_c)}")
    out.append(f"activity = {_str(spec.activity)}")
    if spec.write_precipitate or spec.precipitate is not False:
        if isinstance(spec.precipitate, bool):
            out.append(f"precipitate = {'true' if spec.precipitate else 'false'}")
        else:
            out.append("precipitate = [" + ", ".join(_str(n) for n in spec.precipitate) + "]")
    for name, conc in spec.ingredients:
        out += ["", "[[ingredient]]", f"name = {_str(name)}", f"conc = {_num(conc)}"]
    for s in spec.systems:
        out += ["", "[[custom]]", f"name = {_str(s.name)}",
                "species = [" + ", ".join(_str(n) for n in s.species) + "]",
                "pKa = [" + ", ".join(_num(p) for p in s.pka) + "]"]
        if s.dh_kj is not None:
            out.append("dH_kJ = [" + ", ".join(_num(v) for v in s.dh_kj) + "]")
        if s.dcp_j is not None:
            out.append("dCp_J = [" + ", ".join(_num(v) for v in s.dcp_j) + "]")
        if s.ion_size is not None:
            out.append(f"ion_size_A = {_num(s.ion_size)}")
        out += [f"charge_fully_protonated = {s.charge_fp}", f"protons = {s.protons}",
                f"counter_ions = {_inline(s.counter_ions)}"]
    for c in spec.complexes:
        out += ["", "[[custom_complex]]", f"name = {_str(c.name)}", f"reaction = {_inline(c.reaction)}",
                f"log_K = {_num(c.log_k)}"]
        if c.dh_kj is not None:
            out.append(f"dH_kJ = {_num(c.dh_kj)}")
        if c.ion_size is not None:
            out.append(f"ion_size_A = {_num(c.ion_size)}")
    for s in spec.solids:
        out += ["", "[[custom_solid]]", f"name = {_str(s.name)}", f"reaction = {_inline(s.reaction)}",
                f"log_K = {_num(s.log_k)}"]
        if s.dh_kj is not None:
            out.append(f"dH_kJ = {_num(s.dh_kj)}")
    for g in spec.gases:
        out += ["", "[[custom_gas]]", f"name = {_str(g.name)}", f"reaction = {_inline(((g.species, 1),))}",
                f"log_K = {_num(g.log_k)}"]
        if g.dh_kj is not None:
            out.append(f"dH_kJ = {_num(g.dh_kj)}")
    for f in spec.fixed:
        out += ["", "[[gas]]", f"name = {_str(f.name)}", f"pressure = {_str(f.text)}"]
    return "\n".join(out) + "\n"
