"""The built-in library (``chem/data/*.toml``): systems, ions, reagents, complexes, solids and gases.

Every ``*.toml`` file in ``chem/data`` may hold any of the tables
``[[system]]``, ``[[ion]]``, ``[[reagent]]``, ``[[complex]]``, ``[[solid]]``
and ``[[gas]]``.  Every constant carries a ``source``.  The loader refuses
unknown keys, non-neutral reagents, unordered pKa lists, duplicate names,
reactions naming unknown species, and complexes whose name's charge does not
match their reaction.

Species names (every system species, complex and ion) are unique across the
library, so a reaction written with names resolves to one owner each.
"""

from __future__ import annotations

import functools
import tomllib
from dataclasses import dataclass, replace
from importlib import resources
from typing import Iterable, Mapping

from .errors import ChemError, LibraryError
from .model import AcidBaseSystem, Complex, Gas, Ion, Reagent, Solid, charge_from_name, charge_label

_SYSTEM_KEYS = {"name", "species", "pKa", "dH_kJ", "dCp_J", "charge_fully_protonated", "ion_size_A",
                "T_range_c", "aliases", "hazard", "source", "buffer", "ionic_strength_M", "pKa_sd"}
_SYSTEM_REQUIRED = {"name", "species", "pKa", "charge_fully_protonated", "source"}
_ION_KEYS = {"name", "charge", "ion_size_A", "molar_mass", "source"}
_REAGENT_KEYS = {"name", "formula", "system", "units", "systems", "protons", "counter_ions", "molar_mass",
                 "aliases", "source"}
_REAGENT_REQUIRED = {"name", "protons", "source"}
_REACTION_KEYS = {"name", "reaction", "log_K", "dH_kJ", "ionic_strength_M", "log_K_sd", "aliases", "source"}
_COMPLEX_KEYS = _REACTION_KEYS | {"ion_size_A"}
_SOLID_KEYS = _REACTION_KEYS | {"formula"}
_GAS_KEYS = _REACTION_KEYS | {"formula", "exposure_limit_ppm", "exposure_limit_source"}
_REACTION_REQUIRED = {"name", "reaction", "log_K", "source"}
HAZARDS = {"toxic-gas", "chlorine", "ammonia"}

#: Names a reaction may always use: the proton and hydroxide (water's ions).
WATER_IONS = ("H+", "OH-")


def normalise(name: str) -> str:
    """Key used for name look-ups: case-folded, inner white space collapsed."""
    return " ".join(name.replace("·", ".").split()).casefold()


def _check_keys(entry: dict, allowed: set, required: set, where: str) -> None:
    if not isinstance(entry, dict):
        raise LibraryError(f"{where}: expected a table")
    unknown = set(entry) - allowed
    if unknown:
        raise LibraryError(f"{where}: unknown key(s) {', '.join(sorted(unknown))}")
    missing = required - set(entry)
    if missing:
        raise LibraryError(f"{where}: missing key(s) {', '.join(sorted(missing))}")


# --------------------------------------------------------------------------
# resolving reaction names to their owners
# --------------------------------------------------------------------------

def species_index(systems: Iterable[AcidBaseSystem], ions: Iterable[Ion],
                  complexes: Iterable[Complex] = ()) -> dict[str, object]:
    """Species name -> owner (system, ion or complex); raises on a name used twice."""
    index: dict[str, object] = {}

    def put(name: str, owner) -> None:
        other = index.get(name)
        if other is not None and other is not owner:
            raise LibraryError(f"species name '{name}' is used by both {_describe(other)} and {_describe(owner)}")
        index[name] = owner

    for sys_ in systems:
        for sp in sys_.species:
            put(sp, sys_)
    for ion in ions:
        if ion.name not in WATER_IONS:
            put(ion.name, ion)
    for cx in complexes:
        put(cx.name, cx)
    return index


def _describe(owner) -> str:
    if isinstance(owner, AcidBaseSystem):
        return f"system '{owner.name}'"
    if isinstance(owner, Ion):
        return f"ion '{owner.name}'"
    if isinstance(owner, Complex):
        return f"complex '{owner.name}'"
    return repr(owner)


def resolve(item, index: Mapping[str, object], *, allow_complex: bool = False):
    """``item`` (complex, solid or gas) with the owner of each reaction term filled in.

    Raises :class:`ChemError` (one line) when a species is unknown, or when
    a complex's name does not carry the reaction's charge.
    """
    owners = []
    for name, _ in item.reaction:
        if name in WATER_IONS:
            owners.append(None)
            continue
        owner = index.get(name)
        if owner is None or (isinstance(owner, Complex) and not allow_complex):
            raise LibraryError(f"reaction: unknown species '{name}'" + _close(name, index))
        owners.append(owner)
    resolved = replace(item, owners=tuple(owners))
    if isinstance(resolved, Complex):
        q = resolved.reaction_charge()
        if q != charge_from_name(resolved.name):
            want = charge_label(q) or "no suffix (neutral)"
            raise LibraryError(f"name: '{resolved.name}' must carry the reaction's charge {q:+d} "
                               f"(write it {want})")
    held = [o for o in owners if o is not None]
    if not held:
        raise LibraryError("reaction: must hold at least one species other than H+ and OH-")
    return resolved


def _close(name: str, index: Mapping[str, object]) -> str:
    key = normalise(name)
    hits = [n for n in index if normalise(n) == key or key in normalise(n)][:3]
    return f" (did you mean {', '.join(repr(h) for h in hits)}?)" if hits else ""


# --------------------------------------------------------------------------
# the library
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class Library:
    """Systems, ions, reagents, complexes, solids and gases, with look-up by name, alias or formula."""

    systems: tuple[AcidBaseSystem, ...]
    ions: tuple[Ion, ...]
    reagents: tuple[Reagent, ...]
    complexes: tuple[Complex, ...] = ()
    solids: tuple[Solid, ...] = ()
    gases: tuple[Gas, ...] = ()

    def __post_init__(self) -> None:
        # Systems and reagents have separate name spaces, so a reagent may share
        # its system's name ("glycine" the reagent vs "glycine" the backbone).
        sys_index: dict[str, AcidBaseSystem] = {}
        reagent_index: dict[str, Reagent] = {}
        for index, items in ((sys_index, self.systems), (reagent_index, self.reagents)):
            for item in items:
                keys = {normalise(item.name), *(normalise(a) for a in item.aliases)}
                if isinstance(item, Reagent) and item.formula:
                    keys.add(normalise(item.formula))
                for k in keys:
                    other = index.get(k)
                    if other is not None and other is not item:
                        raise LibraryError(f"name {k!r} is used by both {other.name!r} and {item.name!r}")
                    index[k] = item  # type: ignore[assignment]
        object.__setattr__(self, "_systems", sys_index)
        object.__setattr__(self, "_reagents", reagent_index)
        object.__setattr__(self, "_ions", {i.name: i for i in self.ions})
        for kind, items in (("solid", self.solids), ("gas", self.gases), ("complex", self.complexes)):
            idx: dict[str, object] = {}
            for item in items:
                for k in {normalise(item.name), *(normalise(a) for a in item.aliases)}:
                    other = idx.get(k)
                    if other is not None and other is not item:
                        raise LibraryError(f"{kind} name {k!r} is used twice")
                    idx[k] = item
            # a solid's or gas's formula finds it too (CuO, CO2) where no name or alias already does
            # and no other entry shares it (CaCO3 is calcite and aragonite: neither gets it)
            formulas: dict[str, list] = {}
            for item in items:
                formula = getattr(item, "formula", "")
                if formula:
                    formulas.setdefault(normalise(formula), []).append(item)
            for k, owners in formulas.items():
                if len(owners) == 1 and k not in idx:
                    idx[k] = owners[0]
            object.__setattr__(self, f"_{kind}_index", idx)
        solid_names = {normalise(s.name) for s in self.solids}
        for cx in self.complexes:
            if normalise(cx.name) in solid_names:
                raise LibraryError(f"'{cx.name}' names both a complex and a solid")

    # -- look-ups ------------------------------------------------------------
    def find(self, name: str) -> AcidBaseSystem | Reagent | None:
        """A reagent by name, alias or formula, else a system by name or alias, else None."""
        key = normalise(name)
        return self._reagents.get(key) or self._systems.get(key)  # type: ignore[attr-defined]

    def parent_reagent(self, system: AcidBaseSystem) -> Reagent | None:
        """The compound a system is named after, when the library has it (Tris -> "tris base")."""
        for r in self.reagents_of(system):
            only_protons = all(ion.name == "H+" for ion, _ in r.counter_ions)   # e.g. a free acid
            if (only_protons and len(r.systems) == 1 and r.units == 1
                    and normalise(r.name).startswith(normalise(system.name))):
                return r
        return None

    def reagent(self, name: str) -> Reagent:
        """The reagent called ``name`` (name, alias or formula; case-insensitive)."""
        item = self.find(name)
        if isinstance(item, Reagent):
            return item
        if isinstance(item, AcidBaseSystem):
            parent = self.parent_reagent(item)
            if parent is not None:
                return parent
            forms = [r.name for r in self.reagents_of(item)][:3]
            hint = f"; add a reagent such as {', '.join(repr(f) for f in forms)}" if forms else ""
            what = "a metal ion" if item.is_metal else "an acid–base system"
            raise LibraryError(f"'{name}' is {what}, not a reagent{hint}")
        raise LibraryError(f"unknown reagent '{name}'{self._suggest(name)}")

    def system(self, name: str) -> AcidBaseSystem:
        key = normalise(name)
        item = self._systems.get(key) or self._reagents.get(key)  # type: ignore[attr-defined]
        if isinstance(item, AcidBaseSystem):
            return item
        if isinstance(item, Reagent) and item.system is not None:
            return item.system
        raise LibraryError(f"unknown system '{name}'{self._suggest(name, systems_only=True)}")

    def ion(self, name: str) -> Ion:
        try:
            return self._ions[name]  # type: ignore[attr-defined]
        except KeyError:
            raise LibraryError(f"unknown counter-ion '{name}' (known: {', '.join(self._ions)})") from None  # type: ignore[attr-defined]

    def complex(self, name: str) -> Complex:
        return self._lookup("complex", name)

    def solid(self, name: str) -> Solid:
        return self._lookup("solid", name)

    def gas(self, name: str) -> Gas:
        return self._lookup("gas", name)

    def _lookup(self, kind: str, name: str):
        idx = getattr(self, f"_{kind}_index")
        item = idx.get(normalise(name))
        if item is None:
            items = getattr(self, {"complex": "complexes", "solid": "solids", "gas": "gases"}[kind])
            same = [i.name for i in items if normalise(getattr(i, "formula", "") or "") == normalise(name)]
            if same:
                raise LibraryError(f"'{name}' is the formula of {' and '.join(repr(n) for n in same)}: name one")
            known = [i.name for i in items]
            close = [k for k in known if normalise(name) in normalise(k)][:3]
            hint = f" (did you mean {', '.join(repr(c) for c in close)}?)" if close else ""
            raise LibraryError(f"unknown {kind} '{name}'{hint}")
        return item

    def reagents_of(self, system: AcidBaseSystem) -> tuple[Reagent, ...]:
        return tuple(r for r in self.reagents if any(s is system for s, _ in r.systems))

    @functools.cached_property
    def species_index(self) -> dict[str, object]:
        """Species name -> owning system, ion or complex."""
        return species_index(self.systems, self.ions, self.complexes)

    def search(self, query: str = "") -> list[AcidBaseSystem | Reagent]:
        """Systems and reagents whose name, alias or formula contains ``query``.

        Exact and prefix matches come first; an empty query lists everything.
        """
        q = normalise(query)
        scored = []
        for order, item in enumerate((*self.systems, *self.reagents)):
            names = [item.name, *item.aliases]
            if isinstance(item, Reagent) and item.formula:
                names.append(item.formula)
            keys = [normalise(n) for n in names]
            if not q:
                rank = 3
            elif q in keys:
                rank = 0
            elif any(k.startswith(q) for k in keys):
                rank = 1
            elif any(q in k for k in keys):
                rank = 2
            else:
                continue
            scored.append((rank, order, item))
        scored.sort(key=lambda t: (t[0], t[1]))
        return [item for _, _, item in scored]

    def search_reactions(self, query: str = "") -> list[Complex | Solid | Gas]:
        """Complexes, solids and gases whose name, alias or formula contains ``query``."""
        q = normalise(query)
        out = []
        for item in (*self.gases, *self.solids, *self.complexes):
            names = [item.name, *item.aliases] + ([item.formula] if getattr(item, "formula", "") else [])
            if not q or any(q in normalise(n) for n in names):
                out.append(item)
        return out

    def _suggest(self, name: str, systems_only: bool = False) -> str:
        hits = [h for h in self.search(name) if not systems_only or isinstance(h, AcidBaseSystem)]
        if not hits:
            words = [w for w in normalise(name).split() if len(w) > 2]
            for w in words:
                hits = self.search(w)
                if hits:
                    break
        if not hits:
            return ""
        return " (did you mean " + ", ".join(f"'{h.name}'" for h in hits[:3]) + "?)"


# --------------------------------------------------------------------------
# parsing
# --------------------------------------------------------------------------

def parse_system(entry: dict, where: str) -> AcidBaseSystem:
    _check_keys(entry, _SYSTEM_KEYS, _SYSTEM_REQUIRED, where)
    hazard = entry.get("hazard")
    if hazard is not None and hazard not in HAZARDS:
        raise LibraryError(f"{where}: hazard must be one of {', '.join(sorted(HAZARDS))}")
    t_range = entry.get("T_range_c")
    try:
        sys_ = AcidBaseSystem(
            name=entry["name"], species=tuple(entry["species"]), pka=tuple(entry["pKa"]),
            charge_fully_protonated=int(entry["charge_fully_protonated"]),
            dh_kj=tuple(entry["dH_kJ"]) if "dH_kJ" in entry else None,
            dcp_j=tuple(entry["dCp_J"]) if "dCp_J" in entry else None,
            ion_size_a=float(entry.get("ion_size_A", 4.0)),
            t_range_c=(float(t_range[0]), float(t_range[1])) if t_range else None,
            aliases=tuple(entry.get("aliases", ())), hazard=hazard, source=entry["source"],
            buffer=bool(entry.get("buffer", True)),
            ionic_strength=entry.get("ionic_strength_M", 0.0),
            pka_sd=tuple(entry["pKa_sd"]) if "pKa_sd" in entry else None)
    except ChemError as exc:
        raise LibraryError(f"{where}: {exc}") from None
    for k, sp in enumerate(sys_.species):
        if charge_from_name(sp) != sys_.charge_of(k):
            raise LibraryError(f"{where}: species '{sp}' should carry charge {sys_.charge_of(k):+d}")
    return sys_


def parse_ion(entry: dict, where: str) -> Ion:
    _check_keys(entry, _ION_KEYS, {"name", "charge", "source"}, where)
    return Ion(name=entry["name"], charge=int(entry["charge"]), ion_size_a=float(entry.get("ion_size_A", 4.0)),
               molar_mass=entry.get("molar_mass"), source=entry["source"])


def parse_reagent(entry: dict, where: str, systems: dict[str, AcidBaseSystem],
                  ions: dict[str, Ion]) -> Reagent:
    _check_keys(entry, _REAGENT_KEYS, _REAGENT_REQUIRED, where)
    parts = []
    if "systems" in entry:
        if "system" in entry or "units" in entry:
            raise LibraryError(f"{where}: give either 'systems' or 'system'/'units', not both")
        for sys_name, n in entry["systems"].items():
            if sys_name not in systems:
                raise LibraryError(f"{where}: unknown system '{sys_name}'")
            parts.append((systems[sys_name], int(n)))
    sys_name = entry.get("system")
    sys_ = None
    if sys_name is not None:
        if sys_name not in systems:
            raise LibraryError(f"{where}: unknown system '{sys_name}'")
        sys_ = systems[sys_name]
    counter = []
    for ion_name, n in entry.get("counter_ions", {}).items():
        if ion_name not in ions:
            raise LibraryError(f"{where}: unknown counter-ion '{ion_name}'")
        counter.append((ions[ion_name], int(n)))
    try:
        return Reagent(name=entry["name"], system=sys_, protons=int(entry["protons"]),
                       counter_ions=tuple(counter), units=int(entry.get("units", 1)),
                       formula=entry.get("formula", ""), molar_mass=entry.get("molar_mass"),
                       aliases=tuple(entry.get("aliases", ())), source=entry["source"], systems=tuple(parts))
    except ChemError as exc:
        raise LibraryError(f"{where}: {exc}") from None


def _reaction_args(entry: dict) -> dict:
    return dict(name=entry["name"], reaction=entry["reaction"], log_k=entry["log_K"], dh_kj=entry.get("dH_kJ"),
                ionic_strength=entry.get("ionic_strength_M", 0.0), log_k_sd=entry.get("log_K_sd"),
                aliases=tuple(entry.get("aliases", ())), source=entry["source"])


def parse_complex(entry: dict, where: str) -> Complex:
    _check_keys(entry, _COMPLEX_KEYS, _REACTION_REQUIRED, where)
    try:
        return Complex(**_reaction_args(entry), ion_size_a=float(entry.get("ion_size_A", 4.0)))
    except (ChemError, TypeError, ValueError) as exc:
        raise LibraryError(f"{where}: {exc}") from None


def parse_solid(entry: dict, where: str) -> Solid:
    _check_keys(entry, _SOLID_KEYS, _REACTION_REQUIRED, where)
    try:
        return Solid(**_reaction_args(entry), formula=entry.get("formula", ""))
    except (ChemError, TypeError, ValueError) as exc:
        raise LibraryError(f"{where}: {exc}") from None


def parse_gas(entry: dict, where: str) -> Gas:
    _check_keys(entry, _GAS_KEYS, _REACTION_REQUIRED, where)
    try:
        return Gas(**_reaction_args(entry), formula=entry.get("formula", ""),
                   exposure_limit_ppm=entry.get("exposure_limit_ppm"),
                   exposure_limit_source=entry.get("exposure_limit_source", ""))
    except (ChemError, TypeError, ValueError) as exc:
        raise LibraryError(f"{where}: {exc}") from None


def _resolved(items, index, where_kind: str, *, allow_complex: bool = False) -> list:
    out = []
    for i, item in enumerate(items):
        try:
            out.append(resolve(item, index, allow_complex=allow_complex))
        except ChemError as exc:
            raise LibraryError(f"{where_kind}[{i}] ({item.name}): {exc}") from None
    return out


def build_library(systems: Iterable[dict], ions: Iterable[dict], reagents: Iterable[dict],
                  complexes: Iterable[dict] = (), solids: Iterable[dict] = (),
                  gases: Iterable[dict] = ()) -> Library:
    sys_list = [parse_system(e, f"system[{i}] ({e.get('name', '?')})") for i, e in enumerate(systems)]
    ion_list = [parse_ion(e, f"ion[{i}] ({e.get('name', '?')})") for i, e in enumerate(ions)]
    by_sys = {s.name: s for s in sys_list}
    by_ion = {i.name: i for i in ion_list}
    if len(by_sys) != len(sys_list):
        raise LibraryError("duplicate system names in the library")
    reag = [parse_reagent(e, f"reagent[{i}] ({e.get('name', '?')})", by_sys, by_ion)
            for i, e in enumerate(reagents)]
    cx = [parse_complex(e, f"complex[{i}] ({e.get('name', '?')})") for i, e in enumerate(complexes)]
    so = [parse_solid(e, f"solid[{i}] ({e.get('name', '?')})") for i, e in enumerate(solids)]
    ga = [parse_gas(e, f"gas[{i}] ({e.get('name', '?')})") for i, e in enumerate(gases)]
    base_index = species_index(sys_list, ion_list)
    cx = _resolved(cx, base_index, "complex")
    full_index = species_index(sys_list, ion_list, cx)
    so = _resolved(so, base_index, "solid")
    ga = _resolved(ga, full_index, "gas", allow_complex=True)
    return Library(tuple(sys_list), tuple(ion_list), tuple(reag), tuple(cx), tuple(so), tuple(ga))


_TABLES = ("system", "ion", "reagent", "complex", "solid", "gas")


def _read_all() -> dict[str, list]:
    tables: dict[str, list] = {t: [] for t in _TABLES}
    folder = resources.files("chem.data")
    first = ("systems.toml", "ions.toml", "reagents.toml")
    for item in sorted(folder.iterdir(), key=lambda p: (first.index(p.name) if p.name in first else 9, p.name)):
        if not item.name.endswith(".toml"):
            continue
        try:
            data = tomllib.loads(item.read_text(encoding="utf-8"))
        except tomllib.TOMLDecodeError as exc:
            raise LibraryError(f"chem/data/{item.name}: {exc}") from None
        unknown = set(data) - set(_TABLES)
        if unknown:
            raise LibraryError(f"chem/data/{item.name}: unknown table(s) {', '.join(sorted(unknown))}")
        for t in _TABLES:
            tables[t].extend(data.get(t, []))
    return tables


@functools.lru_cache(maxsize=1)
def load_library() -> Library:
    """The built-in library (read once, immutable)."""
    t = _read_all()
    return build_library(t["system"], t["ion"], t["reagent"], t["complex"], t["solid"], t["gas"])
