"""The built-in library: acid–base systems, strong ions and reagents (``chem/data/*.toml``).

Every constant carries a ``source``. The loader refuses unknown keys,
non-neutral reagents, unordered pKa lists and duplicate names.
"""

from __future__ import annotations

import functools
import tomllib
from dataclasses import dataclass
from importlib import resources
from typing import Iterable

from .errors import ChemError, LibraryError
from .model import AcidBaseSystem, Ion, Reagent, charge_from_name

_SYSTEM_KEYS = {"name", "species", "pKa", "dH_kJ", "dCp_J", "charge_fully_protonated", "ion_size_A",
                "T_range_c", "aliases", "hazard", "source", "buffer"}
_SYSTEM_REQUIRED = {"name", "species", "pKa", "charge_fully_protonated", "source"}
_ION_KEYS = {"name", "charge", "ion_size_A", "molar_mass", "source"}
_REAGENT_KEYS = {"name", "formula", "system", "units", "protons", "counter_ions", "molar_mass",
                 "aliases", "source"}
_REAGENT_REQUIRED = {"name", "protons", "source"}
HAZARDS = {"toxic-gas", "chlorine", "ammonia"}


def normalise(name: str) -> str:
    """Key used for name look-ups: case-folded, inner white space collapsed."""
    return " ".join(name.replace("·", ".").split()).casefold()


def _check_keys(entry: dict, allowed: set, required: set, where: str) -> None:
    unknown = set(entry) - allowed
    if unknown:
        raise LibraryError(f"{where}: unknown key(s) {', '.join(sorted(unknown))}")
    missing = required - set(entry)
    if missing:
        raise LibraryError(f"{where}: missing key(s) {', '.join(sorted(missing))}")


@dataclass(frozen=True)
class Library:
    """Systems, ions and reagents, with look-up by name, alias or formula."""

    systems: tuple[AcidBaseSystem, ...]
    ions: tuple[Ion, ...]
    reagents: tuple[Reagent, ...]

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

    # -- look-ups ------------------------------------------------------------
    def find(self, name: str) -> AcidBaseSystem | Reagent | None:
        """A reagent by name, alias or formula, else a system by name or alias, else None."""
        key = normalise(name)
        return self._reagents.get(key) or self._systems.get(key)  # type: ignore[attr-defined]

    def parent_reagent(self, system: AcidBaseSystem) -> Reagent | None:
        """The compound a system is named after, when the library has it (Tris -> "tris base")."""
        for r in self.reagents_of(system):
            only_protons = all(ion.name == "H+" for ion, _ in r.counter_ions)   # e.g. a free acid
            if only_protons and r.units == 1 and normalise(r.name).startswith(normalise(system.name)):
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
            forms = [r.name for r in self.reagents if r.system is item][:3]
            hint = f"; add a reagent such as {', '.join(repr(f) for f in forms)}" if forms else ""
            raise LibraryError(f"'{name}' is an acid–base system, not a reagent{hint}")
        raise LibraryError(f"unknown reagent '{name}'{self._suggest(name)}")

    def system(self, name: str) -> AcidBaseSystem:
        key = normalise(name)
        item = self._systems.get(key) or self._reagents.get(key)  # type: ignore[attr-defined]
        if isinstance(item, AcidBaseSystem):
            return item
        if isinstance(item, Reagent) and item.system is not None:
            return item.system
        raise LibraryError(f"unknown acid–base system '{name}'{self._suggest(name, systems_only=True)}")

    def ion(self, name: str) -> Ion:
        try:
            return self._ions[name]  # type: ignore[attr-defined]
        except KeyError:
            raise LibraryError(f"unknown counter-ion '{name}' (known: {', '.join(self._ions)})") from None  # type: ignore[attr-defined]

    def reagents_of(self, system: AcidBaseSystem) -> tuple[Reagent, ...]:
        return tuple(r for r in self.reagents if r.system is system)

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
            buffer=bool(entry.get("buffer", True)))
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
                       aliases=tuple(entry.get("aliases", ())), source=entry["source"])
    except ChemError as exc:
        raise LibraryError(f"{where}: {exc}") from None


def _read(name: str) -> dict:
    text = resources.files("chem.data").joinpath(name).read_text(encoding="utf-8")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise LibraryError(f"chem/data/{name}: {exc}") from None


def build_library(systems: Iterable[dict], ions: Iterable[dict], reagents: Iterable[dict]) -> Library:
    sys_list = [parse_system(e, f"system[{i}] ({e.get('name', '?')})") for i, e in enumerate(systems)]
    ion_list = [parse_ion(e, f"ion[{i}] ({e.get('name', '?')})") for i, e in enumerate(ions)]
    by_sys = {s.name: s for s in sys_list}
    by_ion = {i.name: i for i in ion_list}
    if len(by_sys) != len(sys_list):
        raise LibraryError("duplicate system names in systems.toml")
    reag = [parse_reagent(e, f"reagent[{i}] ({e.get('name', '?')})", by_sys, by_ion)
            for i, e in enumerate(reagents)]
    return Library(tuple(sys_list), tuple(ion_list), tuple(reag))


@functools.lru_cache(maxsize=1)
def load_library() -> Library:
    """The built-in library (read once, immutable)."""
    return build_library(_read("systems.toml").get("system", []), _read("ions.toml").get("ion", []),
                         _read("reagents.toml").get("reagent", []))
